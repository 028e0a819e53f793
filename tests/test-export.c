/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Lobes exported as FITS masks (2-D, 3-D) and IVOA STC-S polygons (efflux-export.h, efflux-cli
 * export), read back by astropy through tests/ref/export_check.py (EFFLUX_PYTHON). */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-export.h"
#include "efflux-fitsout.h"
#include "efflux-test-util.h"

#define REST_12CO21 230.538e9

typedef struct
{
  char *dir;
  char *cube;
  char *dossier;
} Fixture;

static char *
polygon (const EffluxCube *cube,
         const double     *xs,
         const double     *ys,
         int               n)
{
  GString *s = g_string_new (NULL);

  for (int i = 0; i < n; i++)
    {
      double ra, dec;
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_assert_true (efflux_cube_pixel_to_icrs (cube, xs[i], ys[i], &ra, &dec));
      g_string_append_printf (s, "%s%s,%s", i ? ";" : "", g_ascii_formatd (a, sizeof a, "%.12f", ra),
                              g_ascii_formatd (b, sizeof b, "%.12f", dec));
    }
  return g_string_free (s, FALSE);
}

/* A 30 x 25 map, 1.5" pixels, 10 channels from 3.6 km/s down by 0.8 (a descending axis).
 * Lobe "east": the pixel centres x 5..14, y 5..14 (100 pixels), its vertices given clockwise on
 * the sky (seen from inside, east to the left). Lobe "west": a pentagon with generic vertices,
 * counter-clockwise. */
static void
fixture_set_up (Fixture      *f,
                gconstpointer data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (30, 25, 10, 150.25, 2.2, 1.5, 3.6, -0.8, REST_12CO21);
  double ex[4] = { 4.5, 4.5, 14.5, 14.5 }, ey[4] = { 4.5, 14.5, 14.5, 4.5 };
  double wx[5] = { 16.3, 27.1, 28.6, 22.2, 17.05 }, wy[5] = { 3.2, 2.7, 12.4, 21.3, 15.9 };
  g_autofree char *east = NULL;
  g_autofree char *west = NULL;
  g_autofree char *text = NULL;

  f->dir = efflux_test_tmp_dir ("efflux-export");
  f->cube = g_build_filename (f->dir, "co.fits", NULL);
  f->dossier = g_build_filename (f->dir, "src.efflux", NULL);
  g_assert_true (efflux_fits_write_cube (cube, f->cube, NULL, &error));
  g_assert_no_error (error);
  east = polygon (cube, ex, ey, 4);
  west = polygon (cube, wx, wy, 5);
  text = g_strdup_printf ("[Source]\nname=Export test\nra-deg=150.25\ndec-deg=2.2\ndistance-pc=400\nvsys-kms=0\n"
                          "[Assumptions]\ntex-k=20\nco-abundance=1e-4\n"
                          "[Cube co]\npath=co.fits\nline=12CO 2-1\nrms-k=0.1\n"
                          "[Lobe east]\nkind=blue\ncube=co\npolygon=%s\nvelocity-kms=-2.1;1.3\n"
                          "[Lobe west]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=0.1;3.7\n",
                          east, west);
  g_assert_true (g_file_set_contents (f->dossier, text, -1, &error));
  g_assert_no_error (error);
}

static void
fixture_tear_down (Fixture      *f,
                   gconstpointer data)
{
  efflux_test_remove_tree (f->dir);
  g_free (f->dir);
  g_free (f->cube);
  g_free (f->dossier);
}

static void
export (Fixture    *f,
        const char *kind,
        const char *out)
{
  const char *args[] = { "export", f->dossier, "--masks", kind, "-o", out, NULL };
  g_autofree char *err = NULL;
  g_autofree char *stdout_text = NULL;
  int status = efflux_test_run_cli (args, &stdout_text, &err);

  if (status != 0)
    g_error ("efflux-cli export --masks %s: %s", kind, err);
}

/* Run tests/ref/export_check.py (a missing EFFLUX_PYTHON or a failing check fails the test). */
static char *
check (const char * const *args)
{
  return efflux_test_python ("export_check.py", args);
}

static void
test_masks_2d (Fixture      *f,
               gconstpointer data)
{
  g_autofree char *out = g_build_filename (f->dir, "masks.fits", NULL);
  g_autofree char *res = NULL;
  g_auto (GStrv) lines = NULL;

  export (f, "2d", out);
  {
    const char *args[] = { "masks2d", out, f->cube, f->dossier, NULL };
    res = check (args);
  }
  if (res == NULL)
    return;
  lines = g_strsplit (res, "\n", -1);
  /* the square holds 10 x 10 pixel centres (analytic); astropy agrees pixel by pixel */
  g_assert_cmpstr (lines[0], ==, "east 100");
  g_assert_true (g_str_has_prefix (lines[1], "west "));
  g_assert_cmpint (atoi (lines[1] + 5), >, 100);
}

static void
test_masks_3d (Fixture      *f,
               gconstpointer data)
{
  g_autofree char *out = g_build_filename (f->dir, "masks3d.fits", NULL);
  g_autofree char *res = NULL;
  g_auto (GStrv) lines = NULL;

  export (f, "3d", out);
  {
    const char *args[] = { "masks3d", out, f->cube, f->dossier, NULL };
    res = check (args);
  }
  if (res == NULL)
    return;
  lines = g_strsplit (res, "\n", -1);
  /* channels 3.6 - 0.8 k: in [-2.1, 1.3] are 1.2, 0.4, -0.4, -1.2, -2.0 (5); in [0.1, 3.7] are
   * 3.6, 2.8, 2.0, 1.2, 0.4 (5) */
  g_assert_cmpstr (lines[0], ==, "east 500 5");
  g_assert_true (g_str_has_prefix (lines[1], "west "));
  g_assert_true (g_str_has_suffix (lines[1], " 5"));
}

static void
test_stcs (Fixture      *f,
           gconstpointer data)
{
  g_autofree char *out = g_build_filename (f->dir, "lobes.stcs", NULL);
  g_autofree char *res = NULL;
  g_autofree char *text = NULL;

  export (f, "stcs", out);
  {
    const char *args[] = { "stcs", out, f->dossier, NULL };
    res = check (args);
  }
  if (res == NULL)
    return;
  /* east was given clockwise on the sky: written reversed; west as given */
  g_assert_cmpstr (res, ==, "east 4 reversed\nwest 5 same\n");
  g_assert_true (g_file_get_contents (out, &text, NULL, NULL));
  g_assert_true (g_str_has_prefix (text, "# east kind=blue cube=co velocity-kms=-2.1;1.3\nPolygon ICRS TOPOCENTER "));
}

/* The polygon line itself: 10 decimals, orientation. Seen from inside with RA to the left,
 * (10,20) -> (9,20) -> (9,21) runs west, then north: counter-clockwise, kept as given. */
static void
test_stcs_line (void)
{
  double ra[3] = { 10.0, 9.0, 9.0 }, dec[3] = { 20.0, 20.0, 21.0 };
  double ra_cw[3] = { 9.0, 9.0, 10.0 }, dec_cw[3] = { 21.0, 20.0, 20.0 };
  g_autofree char *a = efflux_stcs_polygon (ra, dec, 3);
  g_autofree char *b = efflux_stcs_polygon (ra_cw, dec_cw, 3);
  double ra_wrap[3] = { 359.5, 0.5, 0.5 }, dec_wrap[3] = { 0.0, 0.0, 1.0 };
  g_autofree char *c = efflux_stcs_polygon (ra_wrap, dec_wrap, 3);

  g_assert_cmpstr (a, ==, "Polygon ICRS TOPOCENTER 10.0000000000 20.0000000000 9.0000000000 20.0000000000 9.0000000000 21.0000000000");
  g_assert_cmpstr (b, ==, a);
  /* across RA 0: 359.5 -> 0.5 runs east (to the left), then north: clockwise, reversed */
  g_assert_cmpstr (c, ==, "Polygon ICRS TOPOCENTER 0.5000000000 1.0000000000 0.5000000000 0.0000000000 359.5000000000 0.0000000000");
}

static void
test_errors (Fixture      *f,
             gconstpointer data)
{
  g_autofree char *out = g_build_filename (f->dir, "x.fits", NULL);
  g_autofree char *empty = g_build_filename (f->dir, "empty.efflux", NULL);
  int status = 0;

  {
    const char *args[] = { "export", f->dossier, "--masks", "4d", "-o", out, NULL };
    g_autofree char *err = NULL;
    g_autofree char *o = NULL;

    status = efflux_test_run_cli (args, &o, &err);
    g_assert_cmpint (status, ==, 2);
    g_assert_cmpstr (err, ==, "efflux-cli: error: export: --masks 4d: expected 2d, 3d or stcs (see 'efflux-cli export --help')\n");
  }
  {
    const char *args[] = { "export", f->dossier, "--masks", "2d", NULL };
    g_autofree char *err = NULL;
    g_autofree char *o = NULL;

    status = efflux_test_run_cli (args, &o, &err);
    g_assert_cmpint (status, ==, 2);
  }
  {
    const char *args[] = { "export", "--help", NULL };
    g_autofree char *err = NULL;
    g_autofree char *o = NULL;

    status = efflux_test_run_cli (args, &o, &err);
    g_assert_cmpint (status, ==, 0);
    g_assert_nonnull (strstr (o, "--masks"));
  }
  {
    const char *args[] = { "compare", "--help", NULL };
    g_autofree char *err = NULL;
    g_autofree char *o = NULL;

    status = efflux_test_run_cli (args, &o, &err);
    g_assert_cmpint (status, ==, 0);
    g_assert_nonnull (strstr (o, "--format"));
  }
  g_assert_true (g_file_set_contents (empty, "[Source]\nname=E\nra-deg=1\ndec-deg=2\ndistance-pc=100\nvsys-kms=0\n"
                                             "[Assumptions]\ntex-k=20\nco-abundance=1e-4\n", -1, NULL));
  {
    const char *args[] = { "export", empty, "--masks", "stcs", "-o", out, NULL };
    g_autofree char *err = NULL;
    g_autofree char *o = NULL;
    g_autofree char *want = g_strdup_printf ("efflux-cli: error: %s: the dossier has no [Lobe ...] group to export\n", empty);

    status = efflux_test_run_cli (args, &o, &err);
    g_assert_cmpint (status, ==, 1);
    g_assert_cmpstr (err, ==, want);
    g_assert_false (g_file_test (out, G_FILE_TEST_EXISTS));
  }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/export/stcs-line", test_stcs_line);
  g_test_add ("/export/masks-2d", Fixture, NULL, fixture_set_up, test_masks_2d, fixture_tear_down);
  g_test_add ("/export/masks-3d", Fixture, NULL, fixture_set_up, test_masks_3d, fixture_tear_down);
  g_test_add ("/export/stcs", Fixture, NULL, fixture_set_up, test_stcs, fixture_tear_down);
  g_test_add ("/export/errors", Fixture, NULL, fixture_set_up, test_errors, fixture_tear_down);
  return g_test_run ();
}
