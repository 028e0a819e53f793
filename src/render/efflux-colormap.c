/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-colormap"

#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-colormap.h"

static const char *colormap_names[EFFLUX_N_COLORMAPS] = {
  [EFFLUX_COLORMAP_CUBEHELIX] = "cubehelix",
  [EFFLUX_COLORMAP_GREY] = "grey",
  [EFFLUX_COLORMAP_VELOCITY] = "velocity",
};

const char *
efflux_colormap_kind_to_string (EffluxColormapKind kind)
{
  g_return_val_if_fail ((int) kind >= 0 && kind < EFFLUX_N_COLORMAPS, NULL);
  return colormap_names[kind];
}

gboolean
efflux_colormap_kind_from_string (const char         *name,
                                  EffluxColormapKind *kind)
{
  for (int i = 0; i < EFFLUX_N_COLORMAPS; i++)
    if (g_strcmp0 (name, colormap_names[i]) == 0)
      {
        *kind = (EffluxColormapKind) i;
        return TRUE;
      }
  return FALSE;
}

/* Green (2011), eq. 2: with phi = 2 pi (s / 3 + r lambda) and the amplitude
 * a = h lambda^gamma (1 - lambda^gamma) / 2 of the deviation from grey,
 *
 *   R = l + a (-0.14861 cos phi + 1.78277 sin phi)
 *   G = l + a (-0.29227 cos phi - 0.90649 sin phi)
 *   B = l + a (+1.97294 cos phi)
 *
 * where l = lambda^gamma. The matrix is chosen in the paper so that the deviation has zero
 * luminance for the weights (0.30, 0.59, 0.11): the luminance of every unclipped colour is l.
 * (Coefficients from memory of the paper; the test evaluates the formula independently with
 * numpy and checks the luminance property, which pins the coefficients.) */
gboolean
efflux_cubehelix_eval (double lambda,
                       double start,
                       double rotations,
                       double hue,
                       double gamma,
                       double rgb[3])
{
  double l = pow (CLAMP (lambda, 0.0, 1.0), gamma);
  double phi = 2.0 * G_PI * (start / 3.0 + rotations * lambda);
  double amp = hue * l * (1.0 - l) / 2.0;
  double c = cos (phi), s = sin (phi);
  gboolean inside = TRUE;

  rgb[0] = l + amp * (-0.14861 * c + 1.78277 * s);
  rgb[1] = l + amp * (-0.29227 * c - 0.90649 * s);
  rgb[2] = l + amp * (1.97294 * c);
  for (int i = 0; i < 3; i++)
    if (rgb[i] < 0.0 || rgb[i] > 1.0)
      {
        inside = FALSE;
        rgb[i] = CLAMP (rgb[i], 0.0, 1.0);
      }
  return inside;
}

static guint8
to_byte (double v)
{
  return (guint8) lround (CLAMP (v, 0.0, 1.0) * 255.0);
}

void
efflux_colormap_fill_cubehelix (guint8 lut[EFFLUX_COLORMAP_SIZE * 4],
                                double start,
                                double rotations,
                                double hue,
                                double gamma)
{
  for (int i = 0; i < EFFLUX_COLORMAP_SIZE; i++)
    {
      double rgb[3];

      efflux_cubehelix_eval (i / (double) (EFFLUX_COLORMAP_SIZE - 1), start, rotations, hue,
                             gamma, rgb);
      lut[4 * i + 0] = to_byte (rgb[0]);
      lut[4 * i + 1] = to_byte (rgb[1]);
      lut[4 * i + 2] = to_byte (rgb[2]);
      lut[4 * i + 3] = 255;
    }
}

/* CIE 15:2004 L*a*b* -> XYZ with the D65 white (Xn, Yn, Zn) = (0.95047, 1, 1.08883); XYZ ->
 * linear sRGB with the IEC 61966-2-1 matrix; then the sRGB transfer function. */
static double
lab_finv (double t)
{
  const double delta = 6.0 / 29.0;

  return t > delta ? t * t * t : 3.0 * delta * delta * (t - 4.0 / 29.0);
}

static double
srgb_encode (double c)
{
  return c <= 0.0031308 ? 12.92 * c : 1.055 * pow (c, 1.0 / 2.4) - 0.055;
}

gboolean
efflux_lab_to_srgb (double L,
                    double a,
                    double b,
                    double rgb[3])
{
  double fy = (L + 16.0) / 116.0;
  double X = 0.95047 * lab_finv (fy + a / 500.0);
  double Y = 1.00000 * lab_finv (fy);
  double Z = 1.08883 * lab_finv (fy - b / 200.0);
  double lin[3] = {
     3.2404542 * X - 1.5371385 * Y - 0.4985314 * Z,
    -0.9692660 * X + 1.8760108 * Y + 0.0415560 * Z,
     0.0556434 * X - 0.2040259 * Y + 1.0572252 * Z,
  };
  gboolean inside = TRUE;

  for (int i = 0; i < 3; i++)
    {
      if (lin[i] < -1e-9 || lin[i] > 1.0 + 1e-9)
        inside = FALSE;
      rgb[i] = lin[i] < 0.0 ? -srgb_encode (-lin[i]) : srgb_encode (lin[i]);
    }
  return inside;
}

/* The velocity map (our own design). A diverging map for signed quantities around a centre value
 * (velocity minus v_sys): blue for approaching gas below the centre, red for receding gas above,
 * a light neutral grey at the centre.
 *
 * Built in CIE L*C*h (polar L*a*b*):
 *   - t in [0, 1], s = 2 t - 1 in [-1, 1]; |s| is the distance from the centre.
 *   - Lightness falls linearly and symmetrically from L* = 94 at the centre to L* = 38 at both
 *     ends, so equal steps in value are equal steps in lightness and the two halves match:
 *     the map is ordered perceptually (lightness encodes |s|, hue encodes its sign).
 *   - Chroma rises from 0 (neutral) at the centre as C* = 70 |s|^0.8 (a slightly faster start
 *     so that small offsets from the centre are already tinted).
 *   - Hue is constant on each side: h = 268 deg (blue) for s < 0, h = 32 deg (red) for s > 0.
 *   - Where a colour falls outside the sRGB gamut, its chroma is reduced (bisection, 30 steps)
 *     at the same L* and h until it fits; lightness is never altered.
 * The test converts the table back to L*a*b* independently (numpy) and checks the lightness
 * profile, the symmetry and the hues. */
#define VEL_L_CENTRE 94.0
#define VEL_L_END    38.0
#define VEL_C_MAX    70.0
#define VEL_C_POWER  0.8
#define VEL_H_BLUE   268.0
#define VEL_H_RED    32.0

static void
velocity_colour (double t,
                 double rgb[3])
{
  double s = 2.0 * t - 1.0;
  double d = fabs (s);
  double L = VEL_L_CENTRE - (VEL_L_CENTRE - VEL_L_END) * d;
  double C = VEL_C_MAX * pow (d, VEL_C_POWER);
  double h = (s < 0.0 ? VEL_H_BLUE : VEL_H_RED) * G_PI / 180.0;
  double lo = 0.0, hi = C;

  if (efflux_lab_to_srgb (L, C * cos (h), C * sin (h), rgb))
    return;
  for (int i = 0; i < 30; i++)
    {
      double mid = 0.5 * (lo + hi);

      if (efflux_lab_to_srgb (L, mid * cos (h), mid * sin (h), rgb))
        lo = mid;
      else
        hi = mid;
    }
  efflux_lab_to_srgb (L, lo * cos (h), lo * sin (h), rgb);
}

void
efflux_colormap_fill (EffluxColormapKind kind,
                      guint8             lut[EFFLUX_COLORMAP_SIZE * 4])
{
  switch (kind)
    {
    case EFFLUX_COLORMAP_CUBEHELIX:
      efflux_colormap_fill_cubehelix (lut, EFFLUX_CUBEHELIX_START, EFFLUX_CUBEHELIX_ROTATIONS,
                                      EFFLUX_CUBEHELIX_HUE, EFFLUX_CUBEHELIX_GAMMA);
      return;

    case EFFLUX_COLORMAP_GREY:
      for (int i = 0; i < EFFLUX_COLORMAP_SIZE; i++)
        {
          lut[4 * i + 0] = lut[4 * i + 1] = lut[4 * i + 2] = (guint8) i;
          lut[4 * i + 3] = 255;
        }
      return;

    case EFFLUX_COLORMAP_VELOCITY:
      for (int i = 0; i < EFFLUX_COLORMAP_SIZE; i++)
        {
          double rgb[3];

          velocity_colour (i / (double) (EFFLUX_COLORMAP_SIZE - 1), rgb);
          lut[4 * i + 0] = to_byte (rgb[0]);
          lut[4 * i + 1] = to_byte (rgb[1]);
          lut[4 * i + 2] = to_byte (rgb[2]);
          lut[4 * i + 3] = 255;
        }
      return;

    case EFFLUX_N_COLORMAPS:
    default:
      g_return_if_reached ();
    }
}

/* The inverse of a stretch: the x in [0, 1] where it reaches y. */
static double
stretch_inverse (EffluxStretchKind kind,
                 double            y)
{
  switch (kind)
    {
    case EFFLUX_STRETCH_SQRT:
      return y * y;
    case EFFLUX_STRETCH_LOG:
      return expm1 (y * log1p (EFFLUX_STRETCH_LOG_A)) / EFFLUX_STRETCH_LOG_A;
    case EFFLUX_STRETCH_ASINH:
      return EFFLUX_STRETCH_ASINH_B * sinh (y * asinh (1.0 / EFFLUX_STRETCH_ASINH_B));
    case EFFLUX_STRETCH_LINEAR:
    case EFFLUX_N_STRETCHES:
    default:
      return y;
    }
}

/* Every stretch is increasing, so the table entry round (255 y(v)) is the number of thresholds
 * t_k <= v, where t_k (k = 1 .. 255) is the value at which 255 y first reaches k - 1/2. A binary
 * search over the 255 thresholds replaces evaluating the stretch (log, asinh) at every pixel. */
void
efflux_colormap_apply (const guint8       lut[EFFLUX_COLORMAP_SIZE * 4],
                       EffluxStretchKind  stretch,
                       double             lo,
                       double             hi,
                       const float       *values,
                       gsize              n,
                       guint8            *rgba)
{
  double thresholds[EFFLUX_COLORMAP_SIZE]; /* thresholds[k] for k = 1 .. 255 */
  gboolean flat = !(hi > lo);

  thresholds[0] = -INFINITY;

  if (isnan (lo) || isnan (hi))
    {
      memset (rgba, 0, n * 4);
      return;
    }
  for (int k = 1; k < EFFLUX_COLORMAP_SIZE && !flat; k++)
    {
      /* the smallest value whose stretch reaches k - 1/2 steps: start from the analytic
       * inverse, then bisect a tight bracket [below, above] down to neighbouring doubles so
       * that the search agrees with the forward stretch (and its rounding) exactly */
      const double target = k - 0.5;
      double guess = lo + stretch_inverse (stretch, target / (EFFLUX_COLORMAP_SIZE - 1)) * (hi - lo);
      double delta = 1e-9 * (hi - lo);
      double below = lo, above = hi;

#define REACHES(v) (efflux_stretch_apply (stretch, (v), lo, hi) * (EFFLUX_COLORMAP_SIZE - 1) >= target)
      if (REACHES (guess))
        {
          above = guess;
          if (guess - delta > below && !REACHES (guess - delta))
            below = guess - delta;
        }
      else
        {
          below = guess;
          if (guess + delta < above && REACHES (guess + delta))
            above = guess + delta;
        }
      for (int iter = 0; iter < 200 && nextafter (below, above) < above; iter++)
        {
          double mid = below + (above - below) / 2.0;

          if (mid <= below || mid >= above)
            break;
          if (REACHES (mid))
            above = mid;
          else
            below = mid;
        }
#undef REACHES
      thresholds[k] = above;
    }

  for (gsize i = 0; i < n; i++)
    {
      double v = values[i];
      int idx;

      if (!isfinite (v))
        {
          memset (rgba + 4 * i, 0, 4);
          continue;
        }
      if (flat)
        idx = v <= lo ? 0 : EFFLUX_COLORMAP_SIZE - 1;
      else
        {
          /* the largest k with thresholds[k] <= v (thresholds[0] = -inf): a branch-free
           * binary search (the comparison becomes a conditional move) */
          const double *base = thresholds;
          int len = EFFLUX_COLORMAP_SIZE;

          while (len > 1)
            {
              int half = len / 2;

              base = (base[half] <= v) ? base + half : base;
              len -= half;
            }
          idx = (int) (base - thresholds);
        }
      memcpy (rgba + 4 * i, lut + 4 * idx, 4);
    }
}
