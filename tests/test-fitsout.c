/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The FITS writers: round trips through efflux_cube_load and through astropy, the Jy/beam scale,
 * integer output, refusals, and the promise that a failed write leaves no file. */

#include "efflux-cube.h"
#include "efflux-error.h"
#include "efflux-fitsout.h"
#include "efflux-test-util.h"

#include <fitsio.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

static char *tmpdir;

/* A distinct, exactly representable value per voxel. */
static float
voxel_value (gsize x,
             gsize y,
             gsize k)
{
  return (float) (100.0 * (double) x + 10.0 * (double) y + (double) k + 0.25);
}

static EffluxCube *
make_cube (double restfreq_hz,
           double v0,
           double dv)
{
  EffluxCube *cube = efflux_cube_new_simple (7, 5, 4, 121.375, -12.48, 0.5, v0, dv, restfreq_hz);

  g_assert_nonnull (cube);
  for (gsize y = 0; y < cube->ny; y++)
    for (gsize x = 0; x < cube->nx; x++)
      for (gsize k = 0; k < cube->nchan; k++)
        efflux_cube_spectrum (cube, x, y)[k] = voxel_value (x, y, k);
  cube->has_beam = TRUE;
  cube->bmaj_arcsec = 1.2;
  cube->bmin_arcsec = 0.9;
  cube->bpa_deg = 30.0;
  return cube;
}

static void
remove_file (const char *path)
{
  g_assert_cmpint (g_unlink (path), ==, 0);
}

/* Run tests/ref/fitsout_check.py on a file; returns its stdout as a key file-like table. */
static char *
astropy_check (const char  *path,
               const char **pixels)
{
  g_autoptr (GPtrArray) args = g_ptr_array_new ();

  g_ptr_array_add (args, (char *) path);
  for (gsize i = 0; pixels[i] != NULL; i++)
    g_ptr_array_add (args, (char *) pixels[i]);
  g_ptr_array_add (args, NULL);
  return efflux_test_python ("fitsout_check.py", (const char * const *) args->pdata);
}

/* Find "TAG a b ..." in the script output whose first n_key numbers equal key[]; return the rest. */
static void
lookup (const char   *out,
        const char   *tag,
        const double *key,
        int           n_key,
        double       *values,
        int           n_values)
{
  g_auto (GStrv) lines = g_strsplit (out, "\n", -1);

  for (gsize i = 0; lines[i] != NULL; i++)
    {
      g_auto (GStrv) f = g_strsplit (lines[i], " ", -1);
      gboolean match;

      if (g_strv_length (f) != (guint) (1 + n_key + n_values) || strcmp (f[0], tag) != 0)
        continue;
      match = TRUE;
      for (int j = 0; j < n_key; j++)
        if (g_ascii_strtod (f[1 + j], NULL) != key[j])
          match = FALSE;
      if (!match)
        continue;
      for (int j = 0; j < n_values; j++)
        values[j] = g_ascii_strtod (f[1 + n_key + j], NULL);
      return;
    }
  g_error ("no '%s' line for the requested key in:\n%s", tag, out);
}

static const char *probe[] = { "0,0,0", "6,4,3", "3,2,1", "6,0,2", "0,4,3", NULL };

static void
check_against_astropy (const EffluxCube *cube,
                       const char       *path,
                       gboolean          jy_per_beam)
{
  g_autofree char *out = astropy_check (path, probe);
  double shape[3];

  lookup (out, "shape", NULL, 0, shape, 3);
  g_assert_cmpfloat (shape[0], ==, (double) cube->nchan);
  g_assert_cmpfloat (shape[1], ==, (double) cube->ny);
  g_assert_cmpfloat (shape[2], ==, (double) cube->nx);
  for (gsize i = 0; probe[i] != NULL; i++)
    {
      g_auto (GStrv) f = g_strsplit (probe[i], ",", -1);
      double key[3] = { g_ascii_strtod (f[0], NULL), g_ascii_strtod (f[1], NULL), g_ascii_strtod (f[2], NULL) };
      gsize x = (gsize) key[0], y = (gsize) key[1], k = (gsize) key[2];
      double value, world[2], vel, ra, dec;

      lookup (out, "value", key, 3, &value, 1);
      /* K cubes: exact; Jy/beam: converted at the channel's own frequency (radio convention) */
      if (jy_per_beam)
        value *= efflux_jy_beam_to_k (cube->restfreq_hz * (1.0 - cube->velocity[k] / 299792.458),
                                      cube->bmaj_arcsec, cube->bmin_arcsec);
      g_assert_cmpfloat_with_epsilon (value, voxel_value (x, y, k),
                                      1e-6 * voxel_value (x, y, k));
      /* pixel positions: astropy's WCS (wcslib 7 inside astropy 5.2) against ours */
      lookup (out, "world", key, 2, world, 2);
      g_assert_true (efflux_cube_pixel_to_icrs (cube, (double) x, (double) y, &ra, &dec));
      g_assert_cmpfloat_with_epsilon (world[0], ra, 1e-10);
      g_assert_cmpfloat_with_epsilon (world[1], dec, 1e-10);
      /* channel velocities to 1e-9 km/s, via astropy.units' radio Doppler equivalency for FREQ */
      lookup (out, "vel", &key[2], 1, &vel, 1);
      g_assert_cmpfloat_with_epsilon (vel, cube->velocity[k], 1e-9);
    }
}

static void
compare_loaded (const EffluxCube *cube,
                const char       *path,
                double            rel_tol)
{
  EffluxCubeLoadOptions opts = { 0, TRUE };
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxCube) back = efflux_cube_load (path, &opts, NULL, NULL, NULL, &error);

  g_assert_no_error (error);
  g_assert_nonnull (back);
  g_assert_cmpuint (back->nx, ==, cube->nx);
  g_assert_cmpuint (back->ny, ==, cube->ny);
  g_assert_cmpuint (back->nchan, ==, cube->nchan);
  for (gsize i = 0; i < cube->nx * cube->ny * cube->nchan; i++)
    g_assert_cmpfloat_with_epsilon (back->data[i], cube->data[i], rel_tol * fabs (cube->data[i]) + 1e-30);
  for (gsize k = 0; k < cube->nchan; k++)
    g_assert_cmpfloat_with_epsilon (back->velocity[k], cube->velocity[k], 1e-9);
  g_assert_cmpfloat_with_epsilon (back->restfreq_hz, cube->restfreq_hz, 1e-6);
  g_assert_true (back->has_beam);
  g_assert_cmpfloat_with_epsilon (back->bmaj_arcsec, 1.2, 1e-9);
  g_assert_cmpfloat_with_epsilon (back->bmin_arcsec, 0.9, 1e-9);
  g_assert_cmpfloat_with_epsilon (back->bpa_deg, 30.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (back->pixel_arcsec[0], 0.5, 1e-9);
  g_assert_cmpfloat_with_epsilon (back->pixel_arcsec[1], 0.5, 1e-9);
  for (gsize y = 0; y < cube->ny; y += 2)
    for (gsize x = 0; x < cube->nx; x += 3)
      {
        double ra1, dec1, ra2, dec2;
        g_assert_true (efflux_cube_pixel_to_icrs (cube, (double) x, (double) y, &ra1, &dec1));
        g_assert_true (efflux_cube_pixel_to_icrs (back, (double) x, (double) y, &ra2, &dec2));
        g_assert_cmpfloat_with_epsilon (ra1, ra2, 1e-11);
        g_assert_cmpfloat_with_epsilon (dec1, dec2, 1e-11);
      }
}

static void
test_vrad_kelvin (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autofree char *path = g_build_filename (tmpdir, "vrad-k.fits", NULL);
  const char *history[] = { "written by test-fitsout", NULL };
  EffluxFitsCubeOptions opts = { EFFLUX_FITS_SPECTRAL_VRAD, FALSE, 0, "Test object", history };
  g_autoptr (GError) error = NULL;
  fitsfile *f = NULL;
  int status = 0;
  char value[FLEN_VALUE];

  g_assert_true (efflux_fits_write_cube (cube, path, &opts, &error));
  g_assert_no_error (error);
  g_assert_true (g_file_test (tmpdir, G_FILE_TEST_IS_DIR));
  g_assert_cmpuint (efflux_test_count_entries (tmpdir), ==, 1);   /* no temporary file left beside it */
  compare_loaded (cube, path, 0.0);
  check_against_astropy (cube, path, FALSE);

  /* the cards the header promises */
  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_read_key (f, TSTRING, "CTYPE3", value, NULL, &status);
  g_assert_cmpstr (value, ==, "VRAD");
  fits_read_key (f, TSTRING, "CUNIT3", value, NULL, &status);
  g_assert_cmpstr (value, ==, "m/s");
  fits_read_key (f, TSTRING, "SPECSYS", value, NULL, &status);
  g_assert_cmpstr (value, ==, "LSRK");
  fits_read_key (f, TSTRING, "BUNIT", value, NULL, &status);
  g_assert_cmpstr (value, ==, "K");
  fits_read_key (f, TSTRING, "OBJECT", value, NULL, &status);
  g_assert_cmpstr (value, ==, "Test object");
  g_assert_cmpint (status, ==, 0);
  fits_close_file (f, &status);
  remove_file (path);
}

static void
test_freq_jy_beam (void)
{
  /* channel 2 sits at v = 0 (nu = nu0), where REFERENCES.md 4.1 gives the check value */
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -1.0, 0.5);
  g_autofree char *path = g_build_filename (tmpdir, "freq-jy.fits", NULL);
  EffluxFitsCubeOptions opts = { EFFLUX_FITS_SPECTRAL_FREQ, TRUE, -32, NULL, NULL };
  g_autoptr (GError) error = NULL;
  fitsfile *f = NULL;
  int status = 0, anynul = 0;
  float raw = 0.0f;
  long fpixel[3] = { 4, 3, 3 };   /* x = 3, y = 2, channel 2 */
  char value[FLEN_VALUE];

  g_assert_true (efflux_fits_write_cube (cube, path, &opts, &error));
  g_assert_no_error (error);
  /* the loader converts Jy/beam back to K with the same Rayleigh-Jeans factor per channel */
  compare_loaded (cube, path, 2e-7);
  check_against_astropy (cube, path, TRUE);

  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_read_key (f, TSTRING, "CTYPE3", value, NULL, &status);
  g_assert_cmpstr (value, ==, "FREQ");
  fits_read_key (f, TSTRING, "BUNIT", value, NULL, &status);
  g_assert_cmpstr (value, ==, "Jy/beam");
  fits_read_pix (f, TFLOAT, fpixel, 1, NULL, &raw, &anynul, &status);
  g_assert_cmpint (status, ==, 0);
  fits_close_file (f, &status);
  /* REFERENCES.md 4.1 [C]: 1.222120e6 K GHz^2 arcsec^2 per Jy/beam, i.e. at 230.538 GHz and a
   * 1.2" x 0.9" beam: 1.222120e6 / (230.538^2 x 1.08) = 21.29146 K per Jy/beam */
  g_assert_cmpfloat_with_epsilon (raw * 1.222120e6 / (230.538 * 230.538 * 1.2 * 0.9), voxel_value (3, 2, 2),
                                  2e-6 * voxel_value (3, 2, 2));
  remove_file (path);
}

static void
test_integer_output (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autofree char *path = g_build_filename (tmpdir, "int16.fits", NULL);
  EffluxFitsCubeOptions opts = { EFFLUX_FITS_SPECTRAL_VRAD, FALSE, 16, NULL, NULL };
  EffluxCubeLoadOptions lopts = { 0, TRUE };
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxCube) back = NULL;
  double lo = voxel_value (0, 0, 0), hi = voxel_value (6, 4, 3);
  double step = (hi - lo) / (2.0 * 32766.0);

  cube->data[5] = NAN;
  g_assert_true (efflux_fits_write_cube (cube, path, &opts, &error));
  g_assert_no_error (error);
  back = efflux_cube_load (path, &lopts, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_true (isnan (back->data[5]));   /* NaN -> BLANK -> NaN */
  for (gsize i = 0; i < cube->nx * cube->ny * cube->nchan; i++)
    if (i != 5)
      g_assert_cmpfloat (fabs (back->data[i] - cube->data[i]), <=, 0.5 * step * 1.0001 + 1e-4);
  remove_file (path);
}

static void
test_refusals_leave_nothing (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autoptr (EffluxCube) nofreq = make_cube (0.0, -3.0, 0.25);
  g_autofree char *path = g_build_filename (tmpdir, "refused.fits", NULL);
  EffluxFitsCubeOptions freq = { EFFLUX_FITS_SPECTRAL_FREQ, FALSE, 0, NULL, NULL };
  EffluxFitsCubeOptions bad_bitpix = { EFFLUX_FITS_SPECTRAL_VRAD, FALSE, 8, NULL, NULL };
  GError *error = NULL;

  /* channels that are not uniform to 1e-6 of the step */
  cube->velocity[2] += 1e-3;
  g_assert_false (efflux_fits_write_cube (cube, path, NULL, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_nonnull (strstr (error->message, path));
  g_assert_nonnull (strstr (error->message, "CDELT3"));
  g_clear_error (&error);
  g_assert_false (g_file_test (path, G_FILE_TEST_EXISTS));

  /* a frequency axis without a rest frequency */
  g_assert_false (efflux_fits_write_cube (nofreq, path, &freq, &error));
  g_assert_nonnull (strstr (error->message, "RESTFRQ"));
  g_clear_error (&error);

  /* Jy/beam without a beam */
  nofreq->has_beam = FALSE;
  nofreq->restfreq_hz = 230.538e9;
  freq.jy_per_beam = TRUE;
  g_assert_false (efflux_fits_write_cube (nofreq, path, &freq, &error));
  g_assert_nonnull (strstr (error->message, "BMAJ"));
  g_clear_error (&error);

  g_assert_false (efflux_fits_write_cube (nofreq, path, &bad_bitpix, &error));
  g_assert_nonnull (strstr (error->message, "BITPIX"));
  g_clear_error (&error);

  /* a failure after the temporary file was created: a card the writer refuses half-way */
  {
    const char *cards[] = { "GOODKEY", "1", "", "MUCHTOOLONGKEY", "2", "", NULL };
    float image[35] = { 0 };
    g_assert_false (efflux_fits_write_sky_image (cube, image, "K", cards, path, &error));
    g_assert_nonnull (strstr (error->message, "MUCHTOOLONGKEY"));
    g_assert_nonnull (strstr (error->message, path));
    g_clear_error (&error);
  }

  /* nothing at all was left in the directory, not even a temporary file */
  g_assert_true (g_file_test (tmpdir, G_FILE_TEST_IS_DIR));
  g_assert_cmpuint (efflux_test_count_entries (tmpdir), ==, 0);
}

static void
test_unwritable_directory (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autofree char *dir = g_build_filename (tmpdir, "no-such-dir", NULL);
  g_autofree char *path = g_build_filename (dir, "cube.fits", NULL);
  float image[35] = { 0 };
  GError *error = NULL;

  g_assert_false (efflux_fits_write_cube (cube, path, NULL, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO);
  g_assert_nonnull (strstr (error->message, path));
  g_assert_null (strchr (error->message, '\n'));
  g_clear_error (&error);

  g_assert_false (efflux_fits_write_sky_image (cube, image, "K km/s", NULL, path, &error));
  g_assert_nonnull (strstr (error->message, path));
  g_assert_null (strchr (error->message, '\n'));
  g_clear_error (&error);

  g_assert_false (efflux_fits_write_linear_image (image, 7, 5, "OFFSET", "arcsec", 0, 0.5, "VRAD", "km/s",
                                                  -3, 0.25, "K", NULL, path, &error));
  g_assert_nonnull (strstr (error->message, path));
  g_clear_error (&error);
  g_assert_false (g_file_test (dir, G_FILE_TEST_EXISTS));
}

static void
test_sky_image (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autofree char *path = g_build_filename (tmpdir, "mom0.fits", NULL);
  const char *cards[] = { "VMIN", "-2.5", "[km/s] first channel centre", "MOMENT", "0", "", NULL };
  float image[35];
  g_autoptr (GError) error = NULL;
  fitsfile *f = NULL;
  int status = 0, anynul = 0, naxis = 0;
  long naxes[2] = { 0, 0 }, fpixel[2] = { 1, 1 };
  float back[35];
  double v = 0, crval1 = 0, crpix1 = 0;
  char value[FLEN_VALUE];

  for (int i = 0; i < 35; i++)
    image[i] = (float) i * 0.5f - 3.0f;
  g_assert_true (efflux_fits_write_sky_image (cube, image, "K km/s", cards, path, &error));
  g_assert_no_error (error);

  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_get_img_dim (f, &naxis, &status);
  fits_get_img_size (f, 2, naxes, &status);
  g_assert_cmpint (naxis, ==, 2);
  g_assert_cmpint (naxes[0], ==, 7);
  g_assert_cmpint (naxes[1], ==, 5);
  fits_read_key (f, TSTRING, "CTYPE1", value, NULL, &status);
  g_assert_cmpstr (value, ==, "RA---TAN");
  fits_read_key (f, TDOUBLE, "CRVAL1", &crval1, NULL, &status);
  fits_read_key (f, TDOUBLE, "CRPIX1", &crpix1, NULL, &status);
  /* efflux_cube_new_simple: centre (121.375, -12.48) at pixel (nx + 1) / 2 */
  g_assert_cmpfloat_with_epsilon (crval1, 121.375, 1e-12);
  g_assert_cmpfloat_with_epsilon (crpix1, 4.0, 1e-12);
  fits_read_key (f, TSTRING, "BUNIT", value, NULL, &status);
  g_assert_cmpstr (value, ==, "K km/s");
  fits_read_key (f, TDOUBLE, "VMIN", &v, NULL, &status);
  g_assert_cmpfloat (v, ==, -2.5);
  fits_read_key (f, TDOUBLE, "MOMENT", &v, NULL, &status);
  g_assert_cmpfloat (v, ==, 0.0);
  fits_read_pix (f, TFLOAT, fpixel, 35, NULL, back, &anynul, &status);
  g_assert_cmpint (status, ==, 0);
  fits_close_file (f, &status);
  for (int i = 0; i < 35; i++)
    g_assert_cmpfloat (back[i], ==, image[i]);
  remove_file (path);
}

static void
test_linear_image (void)
{
  g_autofree char *path = g_build_filename (tmpdir, "pv.fits", NULL);
  float image[6 * 4];
  g_autoptr (GError) error = NULL;
  fitsfile *f = NULL;
  int status = 0, anynul = 0;
  long fpixel[2] = { 1, 1 };
  float back[24];
  double crval2 = 0, cdelt1 = 0, crpix2 = 0;
  char value[FLEN_VALUE];

  for (int i = 0; i < 24; i++)
    image[i] = (float) (i * i) - 7.5f;
  image[3] = NAN;
  g_assert_true (efflux_fits_write_linear_image (image, 6, 4, "OFFSET", "arcsec", 0.0, 0.5, "VRAD", "km/s",
                                                 -3.25, 0.25, "K", NULL, path, &error));
  g_assert_no_error (error);
  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_read_key (f, TSTRING, "CTYPE1", value, NULL, &status);
  g_assert_cmpstr (value, ==, "OFFSET");
  fits_read_key (f, TSTRING, "CUNIT2", value, NULL, &status);
  g_assert_cmpstr (value, ==, "km/s");
  fits_read_key (f, TDOUBLE, "CDELT1", &cdelt1, NULL, &status);
  fits_read_key (f, TDOUBLE, "CRVAL2", &crval2, NULL, &status);
  fits_read_key (f, TDOUBLE, "CRPIX2", &crpix2, NULL, &status);
  g_assert_cmpfloat (cdelt1, ==, 0.5);
  g_assert_cmpfloat (crval2, ==, -3.25);
  g_assert_cmpfloat (crpix2, ==, 1.0);
  fits_read_pix (f, TFLOAT, fpixel, 24, NULL, back, &anynul, &status);
  g_assert_cmpint (status, ==, 0);
  fits_close_file (f, &status);
  for (int i = 0; i < 24; i++)
    if (i == 3)
      g_assert_true (isnan (back[i]));
    else
      g_assert_cmpfloat (back[i], ==, image[i]);
  remove_file (path);
}

static char *
read_date (const char *path)
{
  fitsfile *f = NULL;
  int status = 0;
  char value[FLEN_VALUE] = "";

  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_read_key (f, TSTRING, "DATE", value, NULL, &status);
  if (status == KEY_NO_EXIST)
    {
      status = 0;
      fits_close_file (f, &status);
      return NULL;
    }
  g_assert_cmpint (status, ==, 0);
  fits_close_file (f, &status);
  return g_strdup (value);
}

static void
test_date (void)
{
  g_autoptr (EffluxCube) cube = make_cube (230.538e9, -3.0, 0.25);
  g_autofree char *path = g_build_filename (tmpdir, "date.fits", NULL);
  g_autoptr (GError) error = NULL;
  g_autofree char *d1 = NULL;
  g_autofree char *d2 = NULL;
  g_autofree char *d3 = NULL;

  /* SOURCE_DATE_EPOCH (reproducible-builds.org): 1700000000 s is 2023-11-14T22:13:20 UTC */
  g_setenv ("SOURCE_DATE_EPOCH", "1700000000", TRUE);
  g_assert_true (efflux_fits_write_cube (cube, path, NULL, &error));
  g_unsetenv ("SOURCE_DATE_EPOCH");
  d1 = read_date (path);
  g_assert_cmpstr (d1, ==, "2023-11-14T22:13:20");
  g_assert_true (efflux_fits_write_cube_with_date (cube, path, NULL, "", &error));
  d2 = read_date (path);
  g_assert_null (d2);
  g_assert_true (efflux_fits_write_cube_with_date (cube, path, NULL, "2026-01-02T03:04:05", &error));
  d3 = read_date (path);
  g_assert_cmpstr (d3, ==, "2026-01-02T03:04:05");
  g_assert_no_error (error);
  remove_file (path);
}

int
main (int    argc,
      char **argv)
{
  g_autoptr (GError) error = NULL;
  int rc;

  g_test_init (&argc, &argv, NULL);
  tmpdir = efflux_test_tmp_dir ("efflux-fitsout");

  g_test_add_func ("/fitsout/cube-vrad-kelvin", test_vrad_kelvin);
  g_test_add_func ("/fitsout/cube-freq-jy-beam", test_freq_jy_beam);
  g_test_add_func ("/fitsout/cube-integer", test_integer_output);
  g_test_add_func ("/fitsout/refusals-leave-nothing", test_refusals_leave_nothing);
  g_test_add_func ("/fitsout/unwritable-directory", test_unwritable_directory);
  g_test_add_func ("/fitsout/sky-image", test_sky_image);
  g_test_add_func ("/fitsout/linear-image", test_linear_image);
  g_test_add_func ("/fitsout/date", test_date);
  rc = g_test_run ();
  g_rmdir (tmpdir);
  g_free (tmpdir);
  return rc;
}
