/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Wing contours (efflux-wings.h) on a noise-free cube with one circular Gaussian blob per wing:
 * T(x, y, v) = A exp(-r^2 / (2 s^2)) in the channels of the wing. Moment 0 over a lobe's range is
 * then N |dv| A exp(-r^2 / (2 s^2)), and the contour at level L is the circle
 * r = s sqrt(2 ln(N |dv| A / L)) (the Gaussian inverted: analytic). The noise is the dossier's
 * rms-k: sigma = |dv| sqrt(N) rms-k (independent errors through a sum). Checked: the number of
 * sets and levels, sigma, the levels, each contour's mean radius about the blob's centre to
 * 0.05 pixel, and the same contours placed on another grid (pixels half as large) through ICRS. */
#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-wings.h"
#include "efflux-test-util.h"

#define NX 64
#define NY 56
#define NCH 40
#define S_PIX 5.0

static EffluxDossier *
dossier_for (const EffluxCube *cube)
{
  g_autoptr(GString) text = g_string_new (NULL);
  g_autoptr(GError) error = NULL;
  const char *kinds[] = { "blue", "red" };
  const char *ranges[] = { "-10.6;-3.4", "3.4;10.6" };
  const double cx[] = { 20, 44 }, cy[] = { 20, 36 };
  EffluxDossier *d;

  g_string_append (text, "[Source]\nname=Wings\nra-deg=83.8221\ndec-deg=-5.3911\ndistance-pc=400\n"
                   "vsys-kms=0\n\n[Assumptions]\ntex-k=30\nco-abundance=1e-4\n\n"
                   "[Cube co]\npath=co.fits\nline=12CO 2-1\nrole=tracer\nrms-k=0.1\n\n");
  for (int k = 0; k < 2; k++)
    {
      g_string_append_printf (text, "[Lobe %s]\nkind=%s\ncube=co\npolygon=", kinds[k], kinds[k]);
      for (int i = 0; i < 4; i++)
        {
          double ra, dec;
          char b1[G_ASCII_DTOSTR_BUF_SIZE], b2[G_ASCII_DTOSTR_BUF_SIZE];

          g_assert_true (efflux_cube_pixel_to_icrs (cube, cx[k] + ((i == 1 || i == 2) ? 6 : -6),
                                                    cy[k] + (i >= 2 ? 6 : -6), &ra, &dec));
          g_string_append_printf (text, "%s%s,%s", i ? ";" : "", g_ascii_dtostr (b1, sizeof b1, ra),
                                  g_ascii_dtostr (b2, sizeof b2, dec));
        }
      g_string_append_printf (text, "\nvelocity-kms=%s\n\n", ranges[k]);
    }
  /* a second blue lobe with the same range joins the first set */
  g_string_append (text, "[Lobe blue-2]\nkind=blue\ncube=co\npolygon=");
  {
    double ra[3], dec[3];
    char b[6][G_ASCII_DTOSTR_BUF_SIZE];

    g_assert_true (efflux_cube_pixel_to_icrs (cube, 5, 40, &ra[0], &dec[0]));
    g_assert_true (efflux_cube_pixel_to_icrs (cube, 12, 40, &ra[1], &dec[1]));
    g_assert_true (efflux_cube_pixel_to_icrs (cube, 8, 48, &ra[2], &dec[2]));
    g_string_append_printf (text, "%s,%s;%s,%s;%s,%s\nvelocity-kms=-10.6;-3.4\n\n",
                            g_ascii_dtostr (b[0], sizeof b[0], ra[0]), g_ascii_dtostr (b[1], sizeof b[1], dec[0]),
                            g_ascii_dtostr (b[2], sizeof b[2], ra[1]), g_ascii_dtostr (b[3], sizeof b[3], dec[1]),
                            g_ascii_dtostr (b[4], sizeof b[4], ra[2]), g_ascii_dtostr (b[5], sizeof b[5], dec[2]));
  }
  d = efflux_dossier_new_from_data (text->str, -1, "wings.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  return d;
}

static void
check_circle (const EffluxPolyline *line,
              double                cx,
              double                cy,
              double                want)
{
  double sum = 0.0;

  g_assert_true (line->closed);
  for (gsize j = 0; j < line->n; j++)
    sum += hypot (line->xy[2 * j] - cx, line->xy[2 * j + 1] - cy);
  efflux_test_assert_rel (sum / line->n, want, 0.05 / want);
}

static void
test_wings (void)
{
  /* channels -19.5 ... 19.5 km/s, 1 km/s apart; blue wing -10.5 ... -3.5 (8 channels), red 3.5 ... 10.5 */
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (NX, NY, NCH, 83.8221, -5.3911, 1.0, -19.5, 1.0,
                                                        230.538e9);
  g_autoptr(EffluxCube) fine = efflux_cube_new_simple (2 * NX, 2 * NY, 1, 83.8221, -5.3911, 0.5, 0.0,
                                                        1.0, 230.538e9);
  g_autoptr(EffluxDossier) d = NULL;
  g_autoptr(GPtrArray) sets = NULL;
  g_autoptr(GPtrArray) fine_sets = NULL;
  g_autoptr(GError) error = NULL;
  g_autofree char *skipped = NULL;
  const double multiples[] = { 3, 5, 8, 13 };
  const double amp = 1.0;   /* K */
  const double cx[] = { 20, 44 }, cy[] = { 20, 36 };

  for (gsize y = 0; y < NY; y++)
    for (gsize x = 0; x < NX; x++)
      {
        float *spec = efflux_cube_spectrum (cube, x, y);

        for (gsize k = 0; k < NCH; k++)
          {
            double v = cube->velocity[k];
            int w = v >= -10.6 && v <= -3.4 ? 0 : v >= 3.4 && v <= 10.6 ? 1 : -1;
            double r2;

            if (w < 0)
              continue;
            r2 = (x - cx[w]) * (x - cx[w]) + (y - cy[w]) * (y - cy[w]);
            spec[k] = (float) (amp * exp (-r2 / (2 * S_PIX * S_PIX)));
          }
      }
  d = dossier_for (cube);
  sets = efflux_wing_contours (d, "co", cube, NULL, multiples, G_N_ELEMENTS (multiples), &skipped,
                               NULL, &error);
  g_assert_no_error (error);
  g_assert_null (skipped);
  g_assert_cmpuint (sets->len, ==, 2);
  for (guint s = 0; s < 2; s++)
    {
      EffluxWingSet *set = g_ptr_array_index (sets, s);
      /* 8 channels of 1 km/s, rms-k 0.1 K: sigma = 1 x sqrt(8) x 0.1 K km/s */
      double sigma = sqrt (8.0) * 0.1, peak = 8.0 * amp;

      g_assert_cmpint (set->kind, ==, s == 0 ? EFFLUX_LOBE_BLUE : EFFLUX_LOBE_RED);
      g_assert_cmpuint (set->n_channels, ==, 8);
      efflux_test_assert_rel (set->sigma, sigma, 1e-12);
      g_assert_cmpuint (set->n_levels, ==, 4);
      g_assert_cmpuint (set->lines->len, ==, 4);  /* one circle per level: 13 sigma = 3.7 < 8 */
      for (guint i = 0; i < 4; i++)
        {
          EffluxPolyline *line = g_ptr_array_index (set->lines, i);

          efflux_test_assert_rel (set->levels[i], multiples[i] * sigma, 1e-12);
          g_assert_cmpfloat (line->level, ==, set->levels[i]);
          check_circle (line, cx[s], cy[s], S_PIX * sqrt (2.0 * log (peak / set->levels[i])));
        }
    }
  g_assert_cmpstr (((EffluxWingSet *) g_ptr_array_index (sets, 0))->lobes, ==, "blue, blue-2");

  /* on a grid of 0.5" pixels centred on the same position: every vertex doubles its offset from the
   * centre (pixel (NX - 1) / 2 -> (2 NX - 1) / 2), so the radii double */
  fine_sets = efflux_wing_contours (d, "co", cube, fine, multiples, G_N_ELEMENTS (multiples), NULL,
                                    NULL, &error);
  g_assert_no_error (error);
  for (guint s = 0; s < 2; s++)
    {
      EffluxWingSet *set = g_ptr_array_index (fine_sets, s);
      double fcx = (2 * NX - 1) / 2.0 + 2 * (cx[s] - (NX - 1) / 2.0);
      double fcy = (2 * NY - 1) / 2.0 + 2 * (cy[s] - (NY - 1) / 2.0);

      for (guint i = 0; i < 4; i++)
        check_circle (g_ptr_array_index (set->lines, i), fcx, fcy,
                      2 * S_PIX * sqrt (2.0 * log (8.0 * amp / set->levels[i])));
    }

  /* a range with no channel of the cube: left out, with a note naming the lobe and key */
  g_assert_true (efflux_dossier_set_lobe_velocity (d, "red", 30.0, 40.0, &error));
  g_clear_pointer (&sets, g_ptr_array_unref);
  sets = efflux_wing_contours (d, "co", cube, NULL, multiples, G_N_ELEMENTS (multiples), &skipped,
                               NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (sets->len, ==, 1);
  g_assert_nonnull (skipped);
  g_assert_nonnull (strstr (skipped, "[Lobe red] velocity-kms"));
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/wings/gaussian-blobs", test_wings);
  return g_test_run ();
}
