/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading FITS cubes, checked against astropy 5.2: tests/ref/make_cubes.py writes small cubes with
 * astropy.io.fits (every BITPIX with BSCALE/BZERO/BLANK and NaN, axis orders, degenerate axes,
 * projections, frames, spectral types and units, BUNIT spellings, a BEAMS table, gzip, RICE tile
 * compression, an image extension) and the values astropy computes for them: voxel values
 * (FITS standard scaling), channel velocities (astropy.wcs + astropy.units doppler equivalencies;
 * SpectralCoord.with_observer_stationary_relative_to('lsrk') for BARYCENT), ICRS positions
 * (astropy.wcs.utils.pixel_to_skycoord(...).icrs) and K per Jy/beam
 * (astropy.units.brightness_temperature). */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-test-util.h"

static char *tmpdir;
static GKeyFile *expect;

static void
make_reference (void)
{
  g_autofree char *ini = NULL;
  g_autoptr(GError) error = NULL;

  g_free (efflux_test_python ("make_cubes.py", (const char *[]) { tmpdir, NULL }));
  ini = g_build_filename (tmpdir, "expect.ini", NULL);
  expect = g_key_file_new ();
  g_assert_true (g_key_file_load_from_file (expect, ini, G_KEY_FILE_NONE, &error));
  g_assert_no_error (error);
}

static double *
get_list (const char *group,
          const char *key,
          gsize      *n)
{
  g_autoptr(GError) error = NULL;
  double *v = g_key_file_get_double_list (expect, group, key, n, &error);

  g_assert_no_error (error);
  return v;
}

#define FAIL(...) G_STMT_START { g_test_message (__VA_ARGS__); g_test_fail (); return; } G_STMT_END

static void
check_cube (gconstpointer data)
{
  const char *group = data;
  g_autoptr(GError) error = NULL;
  g_autofree char *file = g_key_file_get_string (expect, group, "file", NULL);
  g_autofree char *path = g_build_filename (tmpdir, file, NULL);
  g_autoptr(EffluxCube) cube = NULL;
  gsize n, nv, np, nr;
  g_autofree double *values = get_list (group, "values", &nv);
  g_autofree double *vel = get_list (group, "velocity_kms", &n);
  g_autofree double *pix = get_list (group, "pixels", &np);
  g_autofree double *radec = get_list (group, "icrs_deg", &nr);
  double rtol = g_key_file_get_double (expect, group, "values_rtol", NULL);
  g_autofree char *notes_contain = g_key_file_get_string (expect, group, "notes_contain", NULL);

  cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_nonnull (cube);
  g_assert_cmpint (cube->hdu, ==, g_key_file_get_integer (expect, group, "hdu", NULL));
  g_assert_cmpuint (cube->nx, ==, (guint) g_key_file_get_integer (expect, group, "nx", NULL));
  g_assert_cmpuint (cube->ny, ==, (guint) g_key_file_get_integer (expect, group, "ny", NULL));
  g_assert_cmpuint (cube->nchan, ==, (guint) g_key_file_get_integer (expect, group, "nchan", NULL));
  g_assert_cmpuint (nv, ==, cube->nx * cube->ny * cube->nchan);

  /* values: exactly the float32 of the FITS-standard physical value (BZERO + BSCALE x stored),
   * NaN for BLANK and NaN; Jy/beam cubes within 1e-6 relative (the K factor is a double) */
  for (gsize i = 0; i < nv; i++)
    {
      float got = cube->data[i];

      if (isnan (values[i]))
        {
          if (!isnan (got))
            FAIL ("%s: voxel %" G_GSIZE_FORMAT ": expected NaN, got %.9g", group, i, got);
          continue;
        }
      if (rtol == 0.0)
        {
          if (got != (float) values[i])
            FAIL ("%s: voxel %" G_GSIZE_FORMAT ": expected %.9g, got %.9g", group, i, values[i], got);
        }
      else if (fabs (got - values[i]) > rtol * fabs (values[i]))
        FAIL ("%s: voxel %" G_GSIZE_FORMAT ": expected %.9g, got %.9g", group, i, values[i], got);
    }

  /* velocities: LSRK radio km/s within 1e-6 km/s */
  g_assert_cmpuint (n, ==, cube->nchan);
  for (gsize k = 0; k < n; k++)
    if (fabs (cube->velocity[k] - vel[k]) > 1e-6)
      FAIL ("%s: channel %" G_GSIZE_FORMAT ": velocity %.9f km/s, astropy %.9f (diff %.3g km/s)",
               group, k, cube->velocity[k], vel[k], cube->velocity[k] - vel[k]);
  g_assert_cmpfloat_with_epsilon (cube->dv, vel[1] - vel[0], 1e-6);
  {
    double rf = g_key_file_get_double (expect, group, "restfreq_hz", NULL);
    g_assert_cmpfloat_with_epsilon (cube->restfreq_hz, rf, 1e-6 * MAX (rf, 1.0));
  }

  /* positions: ICRS within 1 mas, both directions */
  g_assert_cmpuint (np, ==, nr);
  for (gsize i = 0; i + 1 < np; i += 2)
    {
      double ra, dec, x, y, dra, ddec;

      g_assert_true (efflux_cube_pixel_to_icrs (cube, pix[i], pix[i + 1], &ra, &dec));
      dra = (ra - radec[i]) * cos (radec[i + 1] * G_PI / 180.0) * 3.6e6;
      ddec = (dec - radec[i + 1]) * 3.6e6;
      if (fabs (dra) > 1.0 || fabs (ddec) > 1.0)
        FAIL ("%s: pixel (%g, %g): ICRS %.9f %.9f, astropy %.9f %.9f (%.3f, %.3f mas)", group, pix[i],
                 pix[i + 1], ra, dec, radec[i], radec[i + 1], dra, ddec);
      g_assert_true (efflux_cube_icrs_to_pixel (cube, radec[i], radec[i + 1], &x, &y));
      g_assert_cmpfloat_with_epsilon (x, pix[i], 1e-6);
      g_assert_cmpfloat_with_epsilon (y, pix[i + 1], 1e-6);
    }

  /* K per Jy/beam: astropy.units.brightness_temperature */
  if (g_key_file_has_key (expect, group, "k_per_unit", NULL))
    {
      g_autofree double *f = get_list (group, "k_per_unit", &n);

      g_assert_cmpint (cube->bunit_kind, ==, EFFLUX_BUNIT_JY_BEAM);
      g_assert_true (cube->has_beam);
      for (gsize k = 0; k < n; k++)
        g_assert_cmpfloat_with_epsilon (cube->k_per_unit[k], f[k], 1e-9 * f[k]);
    }

  if (notes_contain != NULL)
    {
      g_auto(GStrv) want = g_strsplit (notes_contain, ";", -1);

      for (int w = 0; want[w] != NULL; w++)
        {
          gboolean found = FALSE;

          for (guint i = 0; i < cube->notes->len; i++)
            if (strstr (g_ptr_array_index (cube->notes, i), want[w]) != NULL)
              found = TRUE;
          if (!found)
            {
              for (guint i = 0; i < cube->notes->len; i++)
                g_printerr ("note: %s\n", (char *) g_ptr_array_index (cube->notes, i));
              FAIL ("%s: no note mentions '%s'", group, want[w]);
            }
        }
    }

  /* noise: one finite positive rms per channel */
  for (gsize k = 0; k < cube->nchan; k++)
    g_assert_true (isfinite (cube->rms[k]) && cube->rms[k] > 0.0f);
}

static void
check_specific (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *p1 = g_build_filename (tmpdir, "f32-k-tmb.fits", NULL);
  g_autofree char *p2 = g_build_filename (tmpdir, "f32-jypixel.fits", NULL);
  g_autofree char *p3 = g_build_filename (tmpdir, "f32-nobunit.fits", NULL);
  g_autofree char *p4 = g_build_filename (tmpdir, "i32-sfl-gal-freq-ghz.fits", NULL);
  g_autofree char *p5 = g_build_filename (tmpdir, "f32-freq-barycent.fits", NULL);
  g_autoptr(EffluxCube) c1 = efflux_cube_load (p1, NULL, NULL, NULL, NULL, &error);
  g_autoptr(EffluxCube) c2 = NULL, c3 = NULL, c4 = NULL, c5 = NULL;

  g_assert_no_error (error);
  g_assert_cmpint (c1->bunit_kind, ==, EFFLUX_BUNIT_K);
  g_assert_cmpstr (c1->bunit, ==, "K (Tmb)");
  g_assert_cmpstr (c1->object, ==, "test f32-k-tmb");
  c2 = efflux_cube_load (p2, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpint (c2->bunit_kind, ==, EFFLUX_BUNIT_JY_PIXEL);
  c3 = efflux_cube_load (p3, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpint (c3->bunit_kind, ==, EFFLUX_BUNIT_MISSING);
  g_assert_cmpstr (c3->bunit, ==, "");
  c4 = efflux_cube_load (p4, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpint (c4->frame, ==, EFFLUX_SKY_GALACTIC);
  g_assert_cmpfloat_with_epsilon (c4->pixel_arcsec[0], 1.0, 1e-9);
  c5 = efflux_cube_load (p5, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpstr (c5->specsys, ==, "BARYCENT");
  g_assert_cmpstr (c5->spectral_ctype, ==, "FREQ");
  {
    /* a rotated pixel grid (PC matrix, 20 deg): the pixel size is still |CDELT| = 0.5" */
    g_autofree char *p6 = g_build_filename (tmpdir, "f32-pc-rotated.fits", NULL);
    g_autoptr(EffluxCube) c6 = efflux_cube_load (p6, NULL, NULL, NULL, NULL, &error);

    g_assert_no_error (error);
    g_assert_cmpfloat_with_epsilon (c6->pixel_arcsec[0], 0.5, 1e-9);
    g_assert_cmpfloat_with_epsilon (c6->pixel_arcsec[1], 0.5, 1e-9);
  }
}

/* efflux-cli info --json on one cube: the JSON parses (Python's json module) and holds the keys of
 * CONTRACT.md with the loader's numbers */
static void
check_cli_json (void)
{
  g_autofree char *path = g_build_filename (tmpdir, "f32-jybeam-upper.fits", NULL);
  g_autofree char *json = g_build_filename (tmpdir, "info.json", NULL);
  g_autofree char *out = NULL, *err = NULL, *pout = NULL;
  g_autoptr(GError) error = NULL;
  const char *args[] = { "info", path, "--json", NULL };
  const char *check =
    "import json,sys\n"
    "d=json.load(open(sys.argv[1]))\n"
    "for k in ('nx','ny','nchan','velocity_kms','restfreq_hz','bunit','brightness','beam_arcsec',"
    "'pixel_arcsec','center_deg','spectral_type','notes','rms_median_k','frame','specsys','hdu'):\n"
    "  assert k in d, k\n"
    "assert (d['nx'],d['ny'],d['nchan'])==(7,5,6)\n"
    "assert d['bunit']=='JY/BEAM' and d['brightness']=='Jy/beam' and d['spectral_type']=='FREQ'\n"
    "assert abs(d['beam_arcsec'][0]-1.0)<1e-9 and abs(d['beam_arcsec'][1]-0.8)<1e-9\n"
    "assert abs(d['restfreq_hz']-230.538e9)<1\n"
    "assert abs(d['pixel_arcsec'][0]-0.5)<1e-9\n"
    "print('%.12f %.12f %.12f %.12f %.12f' % (d['velocity_kms'][0], d['velocity_kms'][1], d['velocity_kms'][2],"
    " d['center_deg'][0], d['center_deg'][1]))\n";
  g_autoptr(EffluxCube) cube = NULL;
  double v0, v1, dv, ra, dec, ra_e, dec_e;

  if (efflux_test_run_cli (args, &out, &err) != 0)
    g_error ("efflux-cli info --json failed: %s", err);
  g_assert_true (g_file_set_contents (json, out, -1, NULL));
  pout = efflux_test_python_code (check, (const char *[]) { json, NULL });
  g_assert_cmpint (sscanf (pout, "%lf %lf %lf %lf %lf", &v0, &v1, &dv, &ra, &dec), ==, 5);
  cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpfloat_with_epsilon (v0, cube->velocity[0], 1e-9);
  g_assert_cmpfloat_with_epsilon (v1, cube->velocity[cube->nchan - 1], 1e-9);
  g_assert_cmpfloat_with_epsilon (dv, cube->dv, 1e-9);
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 3.0, 2.0, &ra_e, &dec_e));
  g_assert_cmpfloat_with_epsilon (ra, ra_e, 1e-9);
  g_assert_cmpfloat_with_epsilon (dec, dec_e, 1e-9);
  g_unlink (json);
}

int
main (int    argc,
      char **argv)
{
  g_auto(GStrv) groups = NULL;
  g_autoptr(GError) error = NULL;
  int ret;

  g_test_init (&argc, &argv, NULL);
  tmpdir = efflux_test_tmp_dir ("efflux-cube-astropy");
  make_reference ();
  groups = g_key_file_get_groups (expect, NULL);
  for (int i = 0; groups[i] != NULL; i++)
    {
      g_autofree char *name = g_strdup_printf ("/cube/astropy/%s", groups[i]);

      g_test_add_data_func (name, groups[i], check_cube);
    }
  g_test_add_func ("/cube/astropy/units-frames", check_specific);
  g_test_add_func ("/cube/astropy/cli-info-json", check_cli_json);
  ret = g_test_run ();
  g_key_file_free (expect);
  efflux_test_remove_tree (tmpdir);
  g_free (tmpdir);
  return ret;
}
