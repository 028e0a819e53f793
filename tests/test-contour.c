/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Marching-squares contours against analytic shapes: the level set of a circular Gaussian
 * A exp(-r^2 / (2 s^2)) at level L is the circle r = s sqrt(2 ln(A / L)) (solve the Gaussian for
 * r), checked vertex by vertex within 1% of a pixel; open lines at the border, lines broken by
 * NaN, the saddle rule on a hand-made cell, and the level helpers. */
#include <glib.h>
#include <math.h>

#include "efflux-contour.h"

#define NX 180
#define NY 170

static float *
gaussian_image (double x0,
                double y0,
                double amp,
                double sigma)
{
  float *img = g_new (float, NX * NY);

  for (gsize y = 0; y < NY; y++)
    for (gsize x = 0; x < NX; x++)
      {
        double r2 = (x - x0) * (x - x0) + (y - y0) * (y - y0);

        img[y * NX + x] = (float) (amp * exp (-0.5 * r2 / (sigma * sigma)));
      }
  return img;
}

static void
test_gaussian_circles (void)
{
  /* Linear interpolation along a cell edge misplaces the crossing by about
   * h^2 f'' / (8 f') = (r^2 / s^2 - 1) / (8 r) pixels (h = 1): 0.0085 px at the lowest level here,
   * so the Gaussian is wide (s = 30 px) for the 1%-of-a-pixel check. */
  const double x0 = 90.3, y0 = 84.8, amp = 10.0, sigma = 30.0;
  const double levels[] = { 0.5, 2.0, 5.0, 9.0 };
  g_autofree float *img = gaussian_image (x0, y0, amp, sigma);
  g_autoptr (GPtrArray) lines = efflux_contour_trace_levels (img, NX, NY, levels,
                                                             G_N_ELEMENTS (levels));

  /* one closed line per level, in the order of the levels */
  g_assert_cmpuint (lines->len, ==, G_N_ELEMENTS (levels));
  for (guint l = 0; l < lines->len; l++)
    {
      EffluxPolyline *line = g_ptr_array_index (lines, l);
      double radius = sigma * sqrt (2.0 * log (amp / levels[l]));
      double worst = 0.0, turn = 0.0;

      g_assert_cmpfloat (line->level, ==, levels[l]);
      g_assert_true (line->closed);
      /* about one vertex per cell edge crossed: more than the circumference in pixels */
      g_assert_cmpuint (line->n, >=, (gsize) (2.0 * G_PI * radius));
      for (gsize i = 0; i < line->n; i++)
        {
          double dx = line->xy[2 * i] - x0, dy = line->xy[2 * i + 1] - y0;
          gsize j = (i + 1) % line->n;
          double a0 = atan2 (dy, dx);
          double a1 = atan2 (line->xy[2 * j + 1] - y0, line->xy[2 * j] - x0);
          double da = a1 - a0;

          worst = MAX (worst, fabs (hypot (dx, dy) - radius));
          /* consecutive vertices are neighbours on the circle */
          g_assert_cmpfloat (hypot (line->xy[2 * j] - line->xy[2 * i],
                                    line->xy[2 * j + 1] - line->xy[2 * i + 1]), <, 1.5);
          if (da > G_PI)
            da -= 2.0 * G_PI;
          if (da < -G_PI)
            da += 2.0 * G_PI;
          turn += da;
        }
      g_test_message ("level %g: radius %.4f, %" G_GSIZE_FORMAT " vertices, worst |r - R| %.5f px",
                      levels[l], radius, line->n, worst);
      /* within 1% of a pixel */
      g_assert_cmpfloat (worst, <=, 0.01);
      /* the line goes once around the centre */
      g_assert_cmpfloat (fabs (fabs (turn) - 2.0 * G_PI), <, 1e-6);
    }
}

/* A Gaussian centred on the left border: its level set is half a circle, open, ending on the
 * border. */
static void
test_open_at_border (void)
{
  const double amp = 4.0, sigma = 24.0, level = 1.0;
  g_autofree float *img = gaussian_image (0.0, 80.0, amp, sigma);
  g_autoptr (GPtrArray) lines = efflux_contour_trace (img, NX, NY, level);
  EffluxPolyline *line;
  double radius = sigma * sqrt (2.0 * log (amp / level));

  g_assert_cmpuint (lines->len, ==, 1);
  line = g_ptr_array_index (lines, 0);
  g_assert_false (line->closed);
  /* both ends on the column x = 0, at y = 80 -+ R */
  g_assert_cmpfloat (line->xy[0], ==, 0.0);
  g_assert_cmpfloat (line->xy[2 * (line->n - 1)], ==, 0.0);
  g_assert_cmpfloat (fabs (fabs (line->xy[1] - line->xy[2 * line->n - 1]) - 2.0 * radius), <,
                     0.02);
  for (gsize i = 0; i < line->n; i++)
    g_assert_cmpfloat (fabs (hypot (line->xy[2 * i], line->xy[2 * i + 1] - 80.0) - radius), <=,
                       0.01);
}

/* A NaN column through the circle breaks it into two open lines; no vertex lies in a NaN cell. */
static void
test_nan_breaks (void)
{
  g_autofree float *img = gaussian_image (90.3, 84.8, 10.0, 30.0);
  g_autoptr (GPtrArray) lines = NULL;

  for (gsize y = 0; y < NY; y++)
    img[y * NX + 90] = NAN;
  lines = efflux_contour_trace (img, NX, NY, 5.0);
  g_assert_cmpuint (lines->len, ==, 2);
  for (guint l = 0; l < lines->len; l++)
    {
      EffluxPolyline *line = g_ptr_array_index (lines, l);

      g_assert_false (line->closed);
      for (gsize i = 0; i < line->n; i++)
        g_assert_true (line->xy[2 * i] <= 89.0 || line->xy[2 * i] >= 91.0);
    }
}

/* One saddle cell, corners a (0,0) = 1, b (1,0) = 0, c (1,1) = 1, d (0,1) = 0. At level 0.6 the
 * centre average 0.5 is below the level, so the high corners a and c are cut off alone: segments
 * (0.4, 0)-(0, 0.4) and (0.6, 1)-(1, 0.6), midpoints on the diagonal x = y (worked by hand from
 * the linear crossings). At level 0.4 the centre is above: the low corners b and d are cut off,
 * (0.6, 0)-(1, 0.4) and (0, 0.6)-(0.4, 1), midpoints on x + y = 1. */
static void
test_saddle (void)
{
  const float img[4] = { 1.0f, 0.0f, 0.0f, 1.0f };   /* row y = 0: a, b; row y = 1: d, c */
  const double e = 0.1;

  for (int above = 0; above < 2; above++)
    {
      double level = above ? 0.5 - e : 0.5 + e;
      g_autoptr (GPtrArray) lines = efflux_contour_trace (img, 2, 2, level);

      g_assert_cmpuint (lines->len, ==, 2);
      for (guint l = 0; l < 2; l++)
        {
          EffluxPolyline *line = g_ptr_array_index (lines, l);
          double mx, my;

          g_assert_cmpuint (line->n, ==, 2);
          g_assert_false (line->closed);
          mx = (line->xy[0] + line->xy[2]) / 2.0;
          my = (line->xy[1] + line->xy[3]) / 2.0;
          if (!above)
            /* around a (0, 0) or c (1, 1): the midpoint lies near the diagonal x = y */
            g_assert_cmpfloat (fabs (mx - my), <, 1e-12);
          else
            /* around b (1, 0) or d (0, 1): near the anti-diagonal x + y = 1 */
            g_assert_cmpfloat (fabs (mx + my - 1.0), <, 1e-12);
        }
    }
}

static void
test_levels (void)
{
  g_autoptr (GError) error = NULL;
  const double mult[] = { 3, 5, 10, -3 };
  g_autofree double *s = efflux_contour_levels_sigma (0.02, mult, 4, &error);
  g_autofree double *l = NULL;
  g_autofree double *bad = NULL;

  g_assert_no_error (error);
  g_assert_cmpfloat_with_epsilon (s[0], 0.06, 1e-15);
  g_assert_cmpfloat_with_epsilon (s[2], 0.2, 1e-15);
  g_assert_cmpfloat_with_epsilon (s[3], -0.06, 1e-15);
  l = efflux_contour_levels_log (0.1, 100.0, 4, &error);
  g_assert_no_error (error);
  g_assert_cmpfloat_with_epsilon (l[0], 0.1, 1e-15);
  g_assert_cmpfloat_with_epsilon (l[1], 1.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (l[2], 10.0, 1e-11);
  g_assert_cmpfloat (l[3], ==, 100.0);
  bad = efflux_contour_levels_log (0.0, 1.0, 3, &error);
  g_assert_null (bad);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_clear_error (&error);
  g_assert_null (efflux_contour_levels_sigma (-1.0, mult, 4, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/contour/gaussian-circles", test_gaussian_circles);
  g_test_add_func ("/contour/open-at-border", test_open_at_border);
  g_test_add_func ("/contour/nan-breaks", test_nan_breaks);
  g_test_add_func ("/contour/saddle", test_saddle);
  g_test_add_func ("/contour/levels", test_levels);
  return g_test_run ();
}
