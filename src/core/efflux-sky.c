/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-sky.h"

#define DEG (G_PI / 180.0)
#define MAS (G_PI / 180.0 / 3600.0 / 1000.0)

typedef double Mat3[3][3];

/* Julian date of Besselian epoch 1950.0 (Lieske 1979 definition of Besselian epochs:
 * JD = 2415020.31352 + (B - 1900) x 365.242198781). */
#define JD_B1950 (2415020.31352 + 50.0 * 365.242198781)
#define JD_J2000 2451545.0

static void
sph_to_vec (double lon_deg,
            double lat_deg,
            double v[3])
{
  double cl = cos (lat_deg * DEG);

  v[0] = cl * cos (lon_deg * DEG);
  v[1] = cl * sin (lon_deg * DEG);
  v[2] = sin (lat_deg * DEG);
}

static void
vec_to_sph (const double v[3],
            double      *lon_deg,
            double      *lat_deg)
{
  double lon = atan2 (v[1], v[0]) / DEG;

  if (lon < 0.0)
    lon += 360.0;
  if (lon >= 360.0)
    lon -= 360.0;
  *lon_deg = lon;
  *lat_deg = atan2 (v[2], hypot (v[0], v[1])) / DEG;
}

/* Passive rotation matrices (the frame turns by angle about the axis), the convention of
 * ERFA's eraRx/eraRy/eraRz and astropy's rotation_matrix. */
static void
rot (int     axis,
     double  angle_rad,
     Mat3    m)
{
  double c = cos (angle_rad), s = sin (angle_rad);
  int i, j;

  for (i = 0; i < 3; i++)
    for (j = 0; j < 3; j++)
      m[i][j] = i == j ? 1.0 : 0.0;
  switch (axis)
    {
    case 0:
      m[1][1] = c; m[1][2] = s; m[2][1] = -s; m[2][2] = c;
      break;
    case 1:
      m[0][0] = c; m[0][2] = -s; m[2][0] = s; m[2][2] = c;
      break;
    default:
      m[0][0] = c; m[0][1] = s; m[1][0] = -s; m[1][1] = c;
      break;
    }
}

static void
mat_mul (Mat3 a,
         Mat3 b,
         Mat3 out)
{
  Mat3 r;
  int i, j, k;

  for (i = 0; i < 3; i++)
    for (j = 0; j < 3; j++)
      {
        r[i][j] = 0.0;
        for (k = 0; k < 3; k++)
          r[i][j] += a[i][k] * b[k][j];
      }
  memcpy (out, r, sizeof r);
}

static void
mat_vec (Mat3          m,
         const double  v[3],
         double        out[3])
{
  double r[3];
  int i;

  for (i = 0; i < 3; i++)
    r[i] = m[i][0] * v[0] + m[i][1] * v[1] + m[i][2] * v[2];
  out[0] = r[0]; out[1] = r[1]; out[2] = r[2];
}

static void
mat_t_vec (Mat3          m,
           const double  v[3],
           double        out[3])
{
  double r[3];
  int i;

  for (i = 0; i < 3; i++)
    r[i] = m[0][i] * v[0] + m[1][i] * v[1] + m[2][i] * v[2];
  out[0] = r[0]; out[1] = r[1]; out[2] = r[2];
}

static void
normalize (double v[3])
{
  double n = sqrt (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);

  v[0] /= n; v[1] /= n; v[2] /= n;
}

/* ICRS -> FK5 (J2000): USNO Circular 179 (Kaplan 2005) eq. 3.4 frame offsets, as astropy. */
static void
icrs_to_fk5_matrix (Mat3 m)
{
  const double eta0 = -19.9 * MAS, xi0 = 9.1 * MAS, da0 = -22.9 * MAS;
  Mat3 a, b, c;

  rot (0, -eta0, a);
  rot (1, xi0, b);
  rot (2, da0, c);
  mat_mul (a, b, m);
  mat_mul (m, c, m);
}

/* FK5 J2000 -> galactic, from the pole and node astropy's Galactic frame is defined by. */
static void
fk5_to_galactic_matrix (Mat3 m)
{
  const double ngp_ra = 192.8594812065348, ngp_dec = 27.12825118085622;
  const double lon0 = 122.9319185680026;
  Mat3 a, b, c;

  rot (2, (180.0 - lon0) * DEG, a);
  rot (1, (90.0 - ngp_dec) * DEG, b);
  rot (2, ngp_ra * DEG, c);
  mat_mul (a, b, m);
  mat_mul (m, c, m);
}

/* Newcomb precession between Besselian epochs (the expressions of astropy's
 * _precession_matrix_besselian; Explanatory Supplement 1961 / Lieske 1979 forms). */
static void
newcomb_precession (double epoch1,
                    double epoch2,
                    Mat3   m)
{
  double t1 = (epoch1 - 1850.0) / 1000.0;
  double t2 = (epoch2 - 1850.0) / 1000.0;
  double dt = t2 - t1;
  double zeta1 = 23035.545 + t1 * 139.720 + 0.060 * t1 * t1;
  double zeta2 = 30.240 - 0.27 * t1;
  double zeta3 = 17.995;
  double z1 = 23035.545 + t1 * 139.720 + 0.060 * t1 * t1;
  double z2 = 109.480 + 0.39 * t1;
  double z3 = 18.325;
  double th1 = 20051.12 - 85.29 * t1 - 0.37 * t1 * t1;
  double th2 = -42.65 - 0.37 * t1;
  double th3 = -41.8;
  double zeta = ((zeta3 * dt + zeta2) * dt + zeta1) * dt / 3600.0;
  double z = ((z3 * dt + z2) * dt + z1) * dt / 3600.0;
  double theta = ((th3 * dt + th2) * dt + th1) * dt / 3600.0;
  Mat3 a, b, c;

  rot (2, -z * DEG, a);
  rot (1, theta * DEG, b);
  rot (2, -zeta * DEG, c);
  mat_mul (a, b, m);
  mat_mul (m, c, m);
}

static double
besselian_to_jd (double byear)
{
  return 2415020.31352 + (byear - 1900.0) * 365.242198781;
}

/* FK4 (no E-terms) B1950 -> FK5 J2000 at an epoch of observation given as a Julian date:
 * Murray 1989, A&A 218, 325, eq. 28, plus the rotating-frame term of eq. 29 (as astropy). */
static void
fk4_b_matrix (double obs_jd,
              Mat3   m)
{
  static const double b0[3][3] = {
    { 0.9999256794956877, -0.0111814832204662, -0.0048590038153592 },
    { 0.0111814832391717, +0.9999374848933135, -0.0000271625947142 },
    { 0.0048590037723143, -0.0000271702937440, +0.9999881946023742 },
  };
  static const double corr[3][3] = {
    { -0.0026455262, -1.1539918689, +2.1111346190 },
    { +1.1540628161, -0.0129042997, +0.0236021478 },
    { -2.1112979048, -0.0056024448, +0.0102587734 },
  };
  double jyear = 2000.0 + (obs_jd - JD_J2000) / 365.25;
  double t = (jyear - 1950.0) / 100.0;
  int i, j;

  for (i = 0; i < 3; i++)
    for (j = 0; j < 3; j++)
      m[i][j] = b0[i][j] + corr[i][j] * 1.0e-6 * t;
}

/* E-terms of aberration vector for an FK4 equinox (Julian date): Explanatory Supplement to the
 * Astronomical Almanac (Seidelmann 1992) expressions for e, the longitude of perigee and the
 * IAU 1980 obliquity; constant of aberration 0.0056932 deg (as astropy's fk4_e_terms). */
static void
fk4_e_terms (double jd,
             double a[3])
{
  double k = 0.0056932 * DEG;
  double t50 = (jd - JD_B1950) / 36525.0;
  double e = (-0.000000126 * t50 - 0.00004193) * t50 + 0.01673011;
  double g = (((0.012 * t50 + 1.65) * t50 + 6190.67) * t50 + 1015489.951) / 3600.0 * DEG;
  double t = (jd - JD_J2000) / 36525.0;
  double o = (84381.448 + (-46.8150 + (-0.00059 + 0.001813 * t) * t) * t) / 3600.0 * DEG;

  a[0] = e * k * sin (g);
  a[1] = -e * k * cos (g) * cos (o);
  a[2] = -e * k * cos (g) * sin (o);
}

/* FK4 at Besselian equinox E (epoch of observation E), unit vector -> FK5 J2000 unit vector. */
static void
fk4_to_fk5 (double        equinox,
            const double  v_in[3],
            double        out[3])
{
  double jd = besselian_to_jd (equinox);
  double a[3], v[3], dot;
  Mat3 p, b;

  fk4_e_terms (jd, a);
  dot = a[0] * v_in[0] + a[1] * v_in[1] + a[2] * v_in[2];
  v[0] = v_in[0] - a[0] + dot * v_in[0];
  v[1] = v_in[1] - a[1] + dot * v_in[1];
  v[2] = v_in[2] - a[2] + dot * v_in[2];
  normalize (v);
  newcomb_precession (equinox, 1950.0, p);
  fk4_b_matrix (jd, b);
  mat_vec (p, v, v);
  mat_vec (b, v, out);
}

static void
fk5_to_fk4 (double        equinox,
            const double  v_in[3],
            double        out[3])
{
  double jd = besselian_to_jd (equinox);
  double a[3], target[3], v[3];
  Mat3 p, b;
  int it;

  fk4_b_matrix (jd, b);
  mat_t_vec (b, v_in, target);
  newcomb_precession (1950.0, equinox, p);
  mat_vec (p, target, target);
  normalize (target);
  /* add the E-terms back: solve v - a + (a.v) v ~ target by fixed-point iteration (|a| ~ 1e-6) */
  fk4_e_terms (jd, a);
  memcpy (v, target, sizeof v);
  for (it = 0; it < 6; it++)
    {
      double dot = a[0] * v[0] + a[1] * v[1] + a[2] * v[2];
      double w[3], n;
      double f[3];

      f[0] = v[0] - a[0] + dot * v[0];
      f[1] = v[1] - a[1] + dot * v[1];
      f[2] = v[2] - a[2] + dot * v[2];
      n = sqrt (f[0] * f[0] + f[1] * f[1] + f[2] * f[2]);
      w[0] = v[0] + (target[0] - f[0] / n);
      w[1] = v[1] + (target[1] - f[1] / n);
      w[2] = v[2] + (target[2] - f[2] / n);
      normalize (w);
      memcpy (v, w, sizeof v);
    }
  memcpy (out, v, sizeof v);
}

gboolean
efflux_sky_frame_supported (EffluxSkyFrame frame,
                            double         equinox)
{
  switch (frame)
    {
    case EFFLUX_SKY_ICRS:
    case EFFLUX_SKY_GALACTIC:
      return TRUE;
    case EFFLUX_SKY_FK5:
      return fabs (equinox - 2000.0) < 1e-9;
    case EFFLUX_SKY_FK4:
      return equinox > 1800.0 && equinox < 2100.0;
    default:
      return FALSE;
    }
}

const char *
efflux_sky_frame_name (EffluxSkyFrame frame)
{
  switch (frame)
    {
    case EFFLUX_SKY_ICRS: return "ICRS";
    case EFFLUX_SKY_FK5: return "FK5";
    case EFFLUX_SKY_FK4: return "FK4";
    case EFFLUX_SKY_GALACTIC: return "galactic";
    default: return "unknown";
    }
}

gboolean
efflux_sky_to_icrs (EffluxSkyFrame frame,
                    double         equinox,
                    double         lon_deg,
                    double         lat_deg,
                    double        *ra_deg,
                    double        *dec_deg)
{
  double v[3];
  Mat3 m;

  if (!efflux_sky_frame_supported (frame, equinox))
    return FALSE;
  sph_to_vec (lon_deg, lat_deg, v);
  switch (frame)
    {
    case EFFLUX_SKY_ICRS:
      *ra_deg = lon_deg;
      *dec_deg = lat_deg;
      return TRUE;
    case EFFLUX_SKY_GALACTIC:
      fk5_to_galactic_matrix (m);
      mat_t_vec (m, v, v);
      break;
    case EFFLUX_SKY_FK4:
      fk4_to_fk5 (equinox, v, v);
      break;
    case EFFLUX_SKY_FK5:
    default:
      break;
    }
  icrs_to_fk5_matrix (m);
  mat_t_vec (m, v, v);
  vec_to_sph (v, ra_deg, dec_deg);
  return TRUE;
}

gboolean
efflux_sky_from_icrs (EffluxSkyFrame frame,
                      double         equinox,
                      double         ra_deg,
                      double         dec_deg,
                      double        *lon_deg,
                      double        *lat_deg)
{
  double v[3];
  Mat3 m;

  if (!efflux_sky_frame_supported (frame, equinox))
    return FALSE;
  if (frame == EFFLUX_SKY_ICRS)
    {
      *lon_deg = ra_deg;
      *lat_deg = dec_deg;
      return TRUE;
    }
  sph_to_vec (ra_deg, dec_deg, v);
  icrs_to_fk5_matrix (m);
  mat_vec (m, v, v);
  switch (frame)
    {
    case EFFLUX_SKY_GALACTIC:
      fk5_to_galactic_matrix (m);
      mat_vec (m, v, v);
      break;
    case EFFLUX_SKY_FK4:
      fk5_to_fk4 (equinox, v, v);
      break;
    case EFFLUX_SKY_FK5:
    case EFFLUX_SKY_ICRS:
    default:
      break;
    }
  vec_to_sph (v, lon_deg, lat_deg);
  return TRUE;
}

double
efflux_sky_lsrk_minus_bary_kms (double ra_deg,
                                double dec_deg)
{
  double apex[3], n[3], ra_a, dec_a;
  Mat3 m;

  /* the solar apex, RA 18h Dec +30 deg in FK4 at equinox (and epoch) B1900, to ICRS */
  sph_to_vec (270.0, 30.0, apex);
  fk4_to_fk5 (1900.0, apex, apex);
  icrs_to_fk5_matrix (m);
  mat_t_vec (m, apex, apex);
  vec_to_sph (apex, &ra_a, &dec_a);
  sph_to_vec (ra_a, dec_a, apex);
  sph_to_vec (ra_deg, dec_deg, n);
  return 20.0 * (apex[0] * n[0] + apex[1] * n[1] + apex[2] * n[2]);
}

double
efflux_sky_separation_deg (double lon1_deg,
                           double lat1_deg,
                           double lon2_deg,
                           double lat2_deg)
{
  const double r = G_PI / 180.0;
  double dl = (lon2_deg - lon1_deg) * r;
  double s1 = sin (lat1_deg * r), c1 = cos (lat1_deg * r);
  double s2 = sin (lat2_deg * r), c2 = cos (lat2_deg * r);
  double num1 = c2 * sin (dl), num2 = c1 * s2 - s1 * c2 * cos (dl);
  double den = s1 * s2 + c1 * c2 * cos (dl);

  return atan2 (hypot (num1, num2), den) / r;
}
