/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-skygrid"

#include "config.h"

#include <math.h>

#include "efflux-skygrid.h"

#define DEG2RAD (G_PI / 180.0)
#define RAD2DEG (180.0 / G_PI)
#define ARCSEC_PER_RAD (648000.0 / G_PI)

/* The ladders of "nice" steps: decimal 1-2-5 below one unit, then the sexagesimal multiples. */
static const double ra_ladder[] = {
  1e-4, 2e-4, 5e-4, 1e-3, 2e-3, 5e-3, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5,
  1, 2, 5, 10, 15, 20, 30,
  60, 120, 300, 600, 900, 1200, 1800,
  3600, 7200, 10800, 21600, 43200,
};

static const double dec_ladder[] = {
  1e-4, 2e-4, 5e-4, 1e-3, 2e-3, 5e-3, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5,
  1, 2, 5, 10, 15, 20, 30,
  60, 120, 300, 600, 900, 1200, 1800,
  3600, 7200, 18000, 36000, 72000, 108000, 162000,
};

static double
ladder_step (const double *ladder,
             gsize         n,
             double        span,
             int           max_lines)
{
  double want = fabs (span) / MAX (max_lines, 1);

  for (gsize i = 0; i < n; i++)
    if (ladder[i] >= want * (1 - 1e-6))
      return ladder[i];
  return ladder[n - 1];
}

double
efflux_skygrid_ra_step (double span_deg,
                        int    max_lines)
{
  return ladder_step (ra_ladder, G_N_ELEMENTS (ra_ladder), span_deg * 240.0, max_lines);
}

double
efflux_skygrid_dec_step (double span_deg,
                         int    max_lines)
{
  return ladder_step (dec_ladder, G_N_ELEMENTS (dec_ladder), span_deg * 3600.0, max_lines);
}

double
efflux_skygrid_offset_step (double span_arcsec,
                            int    max_lines)
{
  double want = fabs (span_arcsec) / MAX (max_lines, 1);
  double decade;

  if (!(want > 0.0) || !isfinite (want))
    return 1.0;
  decade = pow (10.0, floor (log10 (want)));
  for (int i = 0; i < 2; i++, decade *= 10.0)
    {
      if (decade >= want * (1 - 1e-6))
        return decade;
      if (2 * decade >= want * (1 - 1e-6))
        return 2 * decade;
      if (5 * decade >= want * (1 - 1e-6))
        return 5 * decade;
    }
  return decade;
}

/* Digits after the decimal point needed to write a step below one unit exactly. */
static int
decimals_for (double step)
{
  int d = 0;

  while (d < 6)
    {
      double scaled = step * pow (10.0, d);

      if (fabs (scaled - round (scaled)) < 1e-6 * MAX (scaled, 1.0))
        break;
      d++;
    }
  return d;
}

static gint64
ipow10 (int d)
{
  gint64 p = 1;

  while (d-- > 0)
    p *= 10;
  return p;
}

char *
efflux_skygrid_format_ra (double ra_deg,
                          double step_seconds)
{
  double t = fmod (fmod (ra_deg, 360.0) + 360.0, 360.0) * 240.0; /* seconds of time */

  if (!isfinite (ra_deg))
    return g_strdup ("");
  if (step_seconds >= 3600.0)
    {
      gint64 q = llround (t / 3600.0) % 24;
      return g_strdup_printf ("%02" G_GINT64_FORMAT "h", q);
    }
  if (step_seconds >= 60.0)
    {
      gint64 q = llround (t / 60.0) % 1440;
      return g_strdup_printf ("%02" G_GINT64_FORMAT "h%02" G_GINT64_FORMAT "m", q / 60, q % 60);
    }
  {
    int d = step_seconds >= 1.0 ? 0 : decimals_for (step_seconds);
    gint64 scale = ipow10 (d);
    gint64 q = llround (t * scale) % (86400 * scale);
    gint64 h = q / (3600 * scale);
    gint64 m = (q % (3600 * scale)) / (60 * scale);
    gint64 s = q % (60 * scale);

    if (d == 0)
      return g_strdup_printf ("%02" G_GINT64_FORMAT "h%02" G_GINT64_FORMAT "m%02" G_GINT64_FORMAT "s",
                              h, m, s);
    return g_strdup_printf ("%02" G_GINT64_FORMAT "h%02" G_GINT64_FORMAT "m%02" G_GINT64_FORMAT
                            ".%0*" G_GINT64_FORMAT "s",
                            h, m, s / scale, d, s % scale);
  }
}

char *
efflux_skygrid_format_dec (double dec_deg,
                           double step_arcsec)
{
  double a = fabs (dec_deg) * 3600.0;
  const char *sign;

  if (!isfinite (dec_deg))
    return g_strdup ("");
  if (step_arcsec >= 3600.0)
    {
      gint64 q = llround (a / 3600.0);
      sign = (dec_deg < 0 && q != 0) ? "-" : "+";
      return g_strdup_printf ("%s%02" G_GINT64_FORMAT "°", sign, q);
    }
  if (step_arcsec >= 60.0)
    {
      gint64 q = llround (a / 60.0);
      sign = (dec_deg < 0 && q != 0) ? "-" : "+";
      return g_strdup_printf ("%s%02" G_GINT64_FORMAT "°%02" G_GINT64_FORMAT "′", sign, q / 60, q % 60);
    }
  {
    int d = step_arcsec >= 1.0 ? 0 : decimals_for (step_arcsec);
    gint64 scale = ipow10 (d);
    gint64 q = llround (a * scale);
    gint64 deg = q / (3600 * scale);
    gint64 m = (q % (3600 * scale)) / (60 * scale);
    gint64 s = q % (60 * scale);

    sign = (dec_deg < 0 && q != 0) ? "-" : "+";
    if (d == 0)
      return g_strdup_printf ("%s%02" G_GINT64_FORMAT "°%02" G_GINT64_FORMAT "′%02" G_GINT64_FORMAT "″",
                              sign, deg, m, s);
    return g_strdup_printf ("%s%02" G_GINT64_FORMAT "°%02" G_GINT64_FORMAT "′%02" G_GINT64_FORMAT
                            ".%0*" G_GINT64_FORMAT "″",
                            sign, deg, m, s / scale, d, s % scale);
  }
}

char *
efflux_skygrid_format_offset (double offset_arcsec,
                              double step_arcsec)
{
  int d = step_arcsec >= 1.0 ? 0 : decimals_for (step_arcsec);
  gint64 scale = ipow10 (d);
  gint64 q = llround (fabs (offset_arcsec) * scale);
  const char *sign = offset_arcsec < 0 ? "-" : "+";

  if (!isfinite (offset_arcsec))
    return g_strdup ("");
  if (q == 0)
    return g_strdup ("0″");
  if (d == 0)
    return g_strdup_printf ("%s%" G_GINT64_FORMAT "″", sign, q);
  return g_strdup_printf ("%s%" G_GINT64_FORMAT ".%0*" G_GINT64_FORMAT "″", sign, q / scale, d,
                          q % scale);
}

gboolean
efflux_skygrid_offsets_from_icrs (double  ra0_deg,
                                  double  dec0_deg,
                                  double  ra_deg,
                                  double  dec_deg,
                                  double *xi_arcsec,
                                  double *eta_arcsec)
{
  double d0 = dec0_deg * DEG2RAD, d = dec_deg * DEG2RAD;
  double da = (ra_deg - ra0_deg) * DEG2RAD;
  double cos_c = sin (d0) * sin (d) + cos (d0) * cos (d) * cos (da);

  if (!(cos_c > 1e-9))
    return FALSE;
  *xi_arcsec = cos (d) * sin (da) / cos_c * ARCSEC_PER_RAD;
  *eta_arcsec = (cos (d0) * sin (d) - sin (d0) * cos (d) * cos (da)) / cos_c * ARCSEC_PER_RAD;
  return TRUE;
}

void
efflux_skygrid_icrs_from_offsets (double  ra0_deg,
                                  double  dec0_deg,
                                  double  xi_arcsec,
                                  double  eta_arcsec,
                                  double *ra_deg,
                                  double *dec_deg)
{
  double xi = xi_arcsec / ARCSEC_PER_RAD, eta = eta_arcsec / ARCSEC_PER_RAD;
  double d0 = dec0_deg * DEG2RAD;
  double rho = hypot (xi, eta);
  double c = atan (rho);
  double ra;

  if (rho == 0.0)
    {
      *ra_deg = ra0_deg;
      *dec_deg = dec0_deg;
      return;
    }
  *dec_deg = asin (cos (c) * sin (d0) + eta * sin (c) * cos (d0) / rho) * RAD2DEG;
  ra = ra0_deg + atan2 (xi * sin (c), rho * cos (d0) * cos (c) - eta * sin (d0) * sin (c)) * RAD2DEG;
  *ra_deg = fmod (fmod (ra, 360.0) + 360.0, 360.0);
}

/* The grid's coordinates of a pixel and the pixel of a pair of grid coordinates. For the
 * sexagesimal style lon is an RA in degrees unwrapped around lon_centre; for offsets lon and lat
 * are xi and eta in arcsec. */
typedef struct
{
  const EffluxCube   *cube;
  EffluxSkyGridStyle  style;
  double              ref_ra, ref_dec;
  double              lon_centre;
} GridFrame;

static gboolean
frame_from_pixel (const GridFrame *f,
                  double           x,
                  double           y,
                  double          *lon,
                  double          *lat)
{
  double ra, dec;

  if (!efflux_cube_pixel_to_icrs (f->cube, x, y, &ra, &dec) || !isfinite (ra) || !isfinite (dec))
    return FALSE;
  if (f->style == EFFLUX_SKYGRID_OFFSETS)
    return efflux_skygrid_offsets_from_icrs (f->ref_ra, f->ref_dec, ra, dec, lon, lat);
  *lon = f->lon_centre + remainder (ra - f->lon_centre, 360.0);
  *lat = dec;
  return TRUE;
}

static gboolean
frame_to_pixel (const GridFrame *f,
                double           lon,
                double           lat,
                double          *x,
                double          *y)
{
  double ra = lon, dec = lat;

  if (f->style == EFFLUX_SKYGRID_OFFSETS)
    efflux_skygrid_icrs_from_offsets (f->ref_ra, f->ref_dec, lon, lat, &ra, &dec);
  else
    ra = fmod (fmod (lon, 360.0) + 360.0, 360.0);
  if (!efflux_cube_icrs_to_pixel (f->cube, ra, dec, x, y))
    return FALSE;
  return isfinite (*x) && isfinite (*y) && fabs (*x) < 1e7 && fabs (*y) < 1e7;
}

static void
line_free (gpointer data)
{
  EffluxSkyGridLine *line = data;

  g_free (line->label);
  g_array_unref (line->points);
  g_free (line);
}

void
efflux_skygrid_free (EffluxSkyGrid *grid)
{
  if (grid == NULL)
    return;
  g_ptr_array_unref (grid->lines);
  g_free (grid);
}

static void
find_anchor (EffluxSkyGridLine *line,
             double             x0,
             double             y0,
             double             x1,
             double             y1)
{
  const double *p = (const double *) line->points->data;
  guint n = line->points->len / 2;

  for (guint i = 0; i + 1 < n; i++)
    {
      double ax = p[2 * i], ay = p[2 * i + 1], bx = p[2 * i + 2], by = p[2 * i + 3];
      double t, x, y;

      if (isnan (ax) || isnan (bx))
        continue;
      if (line->longitude)
        {
          if ((ay - y0) * (by - y0) > 0 || ay == by)
            continue;
          t = (y0 - ay) / (by - ay);
          x = ax + t * (bx - ax);
          y = y0;
          if (x < x0 || x > x1)
            continue;
        }
      else
        {
          if ((ax - x0) * (bx - x0) > 0 || ax == bx)
            continue;
          t = (x0 - ax) / (bx - ax);
          x = x0;
          y = ay + t * (by - ay);
          if (y < y0 || y > y1)
            continue;
        }
      line->has_anchor = TRUE;
      line->anchor_x = x;
      line->anchor_y = y;
      return;
    }
}

#define N_REGION_SAMPLES 24
#define N_LINE_SAMPLES   160
#define MAX_LINES_HARD   200

EffluxSkyGrid *
efflux_skygrid_new (const EffluxCube   *cube,
                    double              x0,
                    double              y0,
                    double              x1,
                    double              y1,
                    EffluxSkyGridStyle  style,
                    double              ref_ra_deg,
                    double              ref_dec_deg,
                    int                 max_lines)
{
  GridFrame f = { cube, style, ref_ra_deg, ref_dec_deg, 0.0 };
  double lon_min = G_MAXDOUBLE, lon_max = -G_MAXDOUBLE;
  double lat_min = G_MAXDOUBLE, lat_max = -G_MAXDOUBLE;
  double ra_c, dec_c, px, py, pad;
  gboolean any = FALSE;
  EffluxSkyGrid *grid;

  g_return_val_if_fail (cube != NULL && cube->sky != NULL, NULL);
  g_return_val_if_fail (x1 > x0 && y1 > y0, NULL);

  /* centre of the RA unwrapping: the region's centre, else any valid point */
  if (!efflux_cube_pixel_to_icrs (cube, 0.5 * (x0 + x1), 0.5 * (y0 + y1), &ra_c, &dec_c))
    ra_c = ref_ra_deg;
  f.lon_centre = ra_c;

  for (int j = 0; j <= N_REGION_SAMPLES; j++)
    for (int i = 0; i <= N_REGION_SAMPLES; i++)
      {
        double x = x0 + (x1 - x0) * i / N_REGION_SAMPLES;
        double y = y0 + (y1 - y0) * j / N_REGION_SAMPLES;
        double lon, lat;

        if (!frame_from_pixel (&f, x, y, &lon, &lat))
          continue;
        any = TRUE;
        lon_min = MIN (lon_min, lon);
        lon_max = MAX (lon_max, lon);
        lat_min = MIN (lat_min, lat);
        lat_max = MAX (lat_max, lat);
      }
  if (!any)
    return NULL;

  /* a celestial pole inside the region: every RA meets it */
  if (style == EFFLUX_SKYGRID_SEXAGESIMAL)
    for (int pole = -1; pole <= 1; pole += 2)
      if (efflux_cube_icrs_to_pixel (cube, 0.0, 90.0 * pole, &px, &py)
          && px >= x0 && px <= x1 && py >= y0 && py <= y1)
        {
          /* half open, so that the hour line at the wrap is drawn once */
          lon_min = ra_c - 180.0;
          lon_max = ra_c + 180.0 - 1e-9;
          if (pole > 0)
            lat_max = 90.0;
          else
            lat_min = -90.0;
        }

  grid = g_new0 (EffluxSkyGrid, 1);
  grid->style = style;
  grid->lines = g_ptr_array_new_with_free_func (line_free);

  {
    /* steps in the frame's own units: degrees (sexagesimal) or arcsec (offsets) */
    double lon_step, lat_step;
    double spans[2] = { lon_max - lon_min, lat_max - lat_min };

    if (style == EFFLUX_SKYGRID_SEXAGESIMAL)
      {
        grid->lon_step = efflux_skygrid_ra_step (spans[0], max_lines);
        grid->lat_step = efflux_skygrid_dec_step (spans[1], max_lines);
        lon_step = grid->lon_step / 240.0;
        lat_step = grid->lat_step / 3600.0;
      }
    else
      {
        grid->lon_step = efflux_skygrid_offset_step (spans[0], max_lines);
        grid->lat_step = efflux_skygrid_offset_step (spans[1], max_lines);
        lon_step = grid->lon_step;
        lat_step = grid->lat_step;
      }

    for (int pass = 0; pass < 2; pass++)
      {
        gboolean longitude = (pass == 0);
        double step = longitude ? lon_step : lat_step;
        double vmin = longitude ? lon_min : lat_min, vmax = longitude ? lon_max : lat_max;
        double omin = longitude ? lat_min : lon_min, omax = longitude ? lat_max : lon_max;
        double k0 = ceil (vmin / step), k1 = floor (vmax / step);

        pad = 0.05 * (omax - omin) + 1e-9;
        omin -= pad;
        omax += pad;
        if (style == EFFLUX_SKYGRID_SEXAGESIMAL && longitude)
          {
            omin = MAX (omin, -90.0);
            omax = MIN (omax, 90.0);
          }
        if (k1 - k0 > MAX_LINES_HARD)
          continue;

        for (double k = k0; k <= k1; k += 1.0)
          {
            double value = k * step;
            EffluxSkyGridLine *line;
            gboolean broken = TRUE;

            if (style == EFFLUX_SKYGRID_SEXAGESIMAL && !longitude && fabs (value) > 90.0)
              continue;
            line = g_new0 (EffluxSkyGridLine, 1);
            line->longitude = longitude;
            line->points = g_array_new (FALSE, FALSE, sizeof (double));
            for (int s = 0; s <= N_LINE_SAMPLES; s++)
              {
                double o = omin + (omax - omin) * s / N_LINE_SAMPLES;
                double xy[2];
                gboolean ok = longitude ? frame_to_pixel (&f, value, o, &xy[0], &xy[1])
                                        : frame_to_pixel (&f, o, value, &xy[0], &xy[1]);

                if (ok)
                  {
                    g_array_append_vals (line->points, xy, 2);
                    broken = FALSE;
                  }
                else if (!broken)
                  {
                    double gap[2] = { NAN, NAN };
                    g_array_append_vals (line->points, gap, 2);
                    broken = TRUE;
                  }
              }
            if (line->points->len < 4)
              {
                line_free (line);
                continue;
              }
            if (style == EFFLUX_SKYGRID_SEXAGESIMAL)
              {
                line->value = longitude ? fmod (fmod (value, 360.0) + 360.0, 360.0) : value;
                line->label = longitude ? efflux_skygrid_format_ra (line->value, grid->lon_step)
                                        : efflux_skygrid_format_dec (line->value, grid->lat_step);
              }
            else
              {
                line->value = value;
                line->label = efflux_skygrid_format_offset (value, step);
              }
            find_anchor (line, x0, y0, x1, y1);
            g_ptr_array_add (grid->lines, line);
          }
      }
  }
  return grid;
}
