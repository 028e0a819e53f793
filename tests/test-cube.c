/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The in-memory cube API, the Jy/beam -> K factor, the noise estimate and the refusal of bad
 * FITS files (efflux_cube_load and `efflux-cli info`). */
#include "config.h"

#include <gio/gio.h>
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>

#include "efflux-cube.h"
#include "efflux-test-util.h"

static char *tmpdir;

/* ---------------------------------------------------------------------------------------- */

static void
test_new_simple (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (11, 9, 20, 52.263, 31.255, 0.2, -5.0, 0.5, 230.538e9);
  double ra, dec, ra2, dec2, x, y;

  g_assert_nonnull (cube);
  g_assert_cmpuint (cube->nx, ==, 11);
  g_assert_cmpuint (cube->ny, ==, 9);
  g_assert_cmpuint (cube->nchan, ==, 20);
  for (gsize i = 0; i < cube->nx * cube->ny * cube->nchan; i++)
    g_assert_cmpfloat (cube->data[i], ==, 0.0f);
  g_assert_cmpfloat (cube->velocity[0], ==, -5.0);
  g_assert_cmpfloat (cube->velocity[19], ==, 4.5);
  g_assert_cmpfloat (cube->dv, ==, 0.5);
  g_assert_cmpfloat (cube->pixel_arcsec[0], ==, 0.2);

  /* reference pixel: FITS ((nx+1)/2, (ny+1)/2) = 0-based (5, 4) */
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 5.0, 4.0, &ra, &dec));
  g_assert_cmpfloat_with_epsilon (ra, 52.263, 1e-12);
  g_assert_cmpfloat_with_epsilon (dec, 31.255, 1e-12);
  /* RA increases to the left */
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 4.0, 4.0, &ra2, &dec2));
  g_assert_cmpfloat (ra2, >, ra);

  /* TAN (gnomonic) inverse, independent of wcslib: Snyder 1987, Map Projections - A Working
   * Manual, USGS PP 1395, eqs. 20-14 and 20-15 (gnomonic), with the intermediate coordinates of
   * Calabretta & Greisen 2002, A&A 395, 1077: x = CDELT1 (p1 - CRPIX1), y = CDELT2 (p2 - CRPIX2). */
  for (int i = 0; i < 20; i++)
    {
      double px = -3.0 + 0.9 * i, py = 12.0 - 0.77 * i;
      double xr = -0.2 / 3600.0 * (px + 1.0 - 6.0) * G_PI / 180.0;
      double yr = 0.2 / 3600.0 * (py + 1.0 - 5.0) * G_PI / 180.0;
      double d0 = 31.255 * G_PI / 180.0;
      double rho = hypot (xr, yr), c = atan (rho);
      double dec_e, ra_e;

      if (rho == 0.0)
        {
          dec_e = 31.255;
          ra_e = 52.263;
        }
      else
        {
          dec_e = asin (cos (c) * sin (d0) + yr * sin (c) * cos (d0) / rho) * 180.0 / G_PI;
          ra_e = 52.263 + atan2 (xr * sin (c), rho * cos (d0) * cos (c) - yr * sin (d0) * sin (c)) * 180.0 / G_PI;
        }
      g_assert_true (efflux_cube_pixel_to_icrs (cube, px, py, &ra, &dec));
      g_assert_cmpfloat_with_epsilon (ra, ra_e, 1e-10);
      g_assert_cmpfloat_with_epsilon (dec, dec_e, 1e-10);
      /* and back */
      g_assert_true (efflux_cube_icrs_to_pixel (cube, ra, dec, &x, &y));
      g_assert_cmpfloat_with_epsilon (x, px, 1e-8);
      g_assert_cmpfloat_with_epsilon (y, py, 1e-8);
    }
  efflux_cube_add_note (cube, "note %d", 7);
  g_assert_cmpuint (cube->notes->len, ==, 1);
  g_assert_cmpstr (g_ptr_array_index (cube->notes, 0), ==, "note 7");
}

static void
test_channel_range (void)
{
  g_autoptr(EffluxCube) up = efflux_cube_new_simple (3, 3, 20, 10.0, -20.0, 1.0, -5.0, 0.5, 0.0);
  g_autoptr(EffluxCube) down = efflux_cube_new_simple (3, 3, 20, 10.0, -20.0, 1.0, 4.5, -0.5, 0.0);
  g_autoptr(EffluxCube) tenth = efflux_cube_new_simple (3, 3, 10, 10.0, -20.0, 1.0, 0.1, 0.1, 0.0);
  g_autoptr(EffluxCube) third = efflux_cube_new_simple (3, 3, 10, 10.0, -20.0, 1.0, 0.1, 0.3, 0.0);
  gsize b, e;

  /* -5, -4.5, ... 4.5: [-4, -3] is channels 2, 3, 4 (edges inclusive) */
  g_assert_true (efflux_cube_channel_range (up, -4.0, -3.0, &b, &e));
  g_assert_cmpuint (b, ==, 2);
  g_assert_cmpuint (e, ==, 5);
  g_assert_true (efflux_cube_channel_range (up, -3.0, -4.0, &b, &e));
  g_assert_cmpuint (b, ==, 2);
  g_assert_cmpuint (e, ==, 5);
  /* the same velocities, channels in decreasing order: 4.5, 4, ... -5 => -4 is k 17, -3 is k 15 */
  g_assert_true (efflux_cube_channel_range (down, -4.0, -3.0, &b, &e));
  g_assert_cmpuint (b, ==, 15);
  g_assert_cmpuint (e, ==, 18);
  g_assert_true (efflux_cube_channel_range (down, -3.0, -4.0, &b, &e));
  g_assert_cmpuint (b, ==, 15);
  g_assert_cmpuint (e, ==, 18);
  /* between two channel centres: nothing; outside: nothing */
  g_assert_false (efflux_cube_channel_range (up, 0.1, 0.2, &b, &e));
  g_assert_false (efflux_cube_channel_range (up, 10.0, 20.0, &b, &e));
  /* the whole axis */
  g_assert_true (efflux_cube_channel_range (down, -100.0, 100.0, &b, &e));
  g_assert_cmpuint (b, ==, 0);
  g_assert_cmpuint (e, ==, 20);
  /* 0.1 + 2 x 0.1 = 0.30000000000000004 in doubles: still inside [0.1, 0.3] */
  g_assert_cmpfloat (tenth->velocity[2], >, 0.3);
  g_assert_true (efflux_cube_channel_range (tenth, 0.1, 0.3, &b, &e));
  g_assert_cmpuint (b, ==, 0);
  g_assert_cmpuint (e, ==, 3);
  /* 0.1 + 3 x 0.3 = 0.9999999999999999: inside [1, 2] */
  g_assert_cmpfloat (third->velocity[3], <, 1.0);
  g_assert_true (efflux_cube_channel_range (third, 2.0, 1.0, &b, &e));
  g_assert_cmpuint (b, ==, 3);
  g_assert_cmpuint (e, ==, 7);
}

static void
test_jy_beam_to_k (void)
{
  /* REFERENCES.md 4.1 check values (constant 1.222120e6 K GHz^2 arcsec^2 per Jy/beam, from the
   * Rayleigh-Jeans relation; Shirley 2015, PASP 127, 299: 1 K <-> 0.818 Jy/beam at 100 GHz, 10") */
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (230.538e9, 1.0, 1.0), 22.9948, 5e-5);
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (345.796e9, 0.5, 0.5), 40.8822, 5e-5);
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (115.271e9, 2.0, 2.0), 22.9940, 5e-5);
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (100e9, 10.0, 10.0), 1.2221, 5e-5);
  g_assert_cmpfloat_with_epsilon (1.0 / efflux_jy_beam_to_k (100e9, 10.0, 10.0), 0.8183, 5e-5);
  /* the practical constant itself: T nu_GHz^2 bmaj bmin = 1.2221203e6 (REFERENCES 1.1) */
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (1e9, 1.0, 1.0), 1222120.3, 0.5);
  /* elliptical beam: inversely proportional to bmaj x bmin */
  g_assert_cmpfloat_with_epsilon (efflux_jy_beam_to_k (230.538e9, 2.0, 0.5),
                                  efflux_jy_beam_to_k (230.538e9, 1.0, 1.0), 1e-12);
}

static double
gauss (GRand *r)
{
  /* Box-Muller */
  double u1 = g_rand_double (r), u2 = g_rand_double (r);

  if (u1 < 1e-300)
    u1 = 1e-300;
  return sqrt (-2.0 * log (u1)) * cos (2.0 * G_PI * u2);
}

static int
cmp_float (const void *a,
           const void *b)
{
  float x = *(const float *) a, y = *(const float *) b;

  return (x > y) - (x < y);
}

static double
sorted_median (float *v,
               gsize  n)
{
  qsort (v, n, sizeof (float), cmp_float);
  return n % 2 ? v[n / 2] : 0.5 * ((double) v[n / 2 - 1] + (double) v[n / 2]);
}

static void
check_mad_exact (EffluxCube *c,
                 GRand      *r)
{
  gsize npx = c->nx * c->ny;

  g_assert_cmpuint (c->nchan, ==, 7);
  for (gsize p = 0; p < npx; p++)
    {
      float *spec = c->data + p * c->nchan;

      spec[0] = (float) gauss (r);
      spec[1] = (float) gauss (r) * 3.0f;
      spec[2] = (float) g_rand_int_range (r, -5, 6);                 /* many ties */
      spec[3] = p % 97 == 0 ? 1e30f : (float) gauss (r);           /* far outliers */
      spec[4] = 2.5f;                                               /* constant */
      spec[5] = p % 2 ? (float) gauss (r) * 1e-3f : 1e6f + (float) gauss (r);   /* two clumps */
      /* a range too wide for float bins (the selection alone) */
      spec[6] = p % 89 == 0 ? -3e38f : p % 83 == 0 ? 3e38f : (float) gauss (r);
    }
  c->data[5 * c->nchan + 1] = NAN;   /* channel 1: an even (or odd) count */
  efflux_cube_estimate_noise (c);
  for (gsize k = 0; k < c->nchan; k++)
    {
      gsize n = 0;
      g_autofree float *v = g_new (float, npx);
      double med;

      for (gsize p = 0; p < npx; p++)
        if (isfinite (c->data[p * c->nchan + k]))
          v[n++] = c->data[p * c->nchan + k];
      med = sorted_median (v, n);
      for (gsize i = 0; i < n; i++)
        v[i] = fabsf (v[i] - (float) med);
      if (c->rms[k] != (float) (1.4826 * sorted_median (v, n)))
        g_error ("%" G_GSIZE_FORMAT " pixels, channel %" G_GSIZE_FORMAT ": rms %.9g, sorted %.9g", npx, k,
                 c->rms[k], 1.4826 * sorted_median (v, n));
    }
}

static void
test_noise (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (300, 301, 9, 0.0, 0.0, 1.0, 0.0, 1.0, 0.0);
  g_autoptr(EffluxCube) small = efflux_cube_new_simple (31, 33, 7, 0.0, 0.0, 1.0, 0.0, 1.0, 0.0);
  g_autoptr(EffluxCube) large = efflux_cube_new_simple (100, 101, 7, 0.0, 0.0, 1.0, 0.0, 1.0, 0.0);
  g_autoptr(GRand) r = g_rand_new_with_seed (20261201);
  gsize npix = cube->nx * cube->ny;

  /* The estimate is 1.4826 x MAD, a consistent estimator of a Gaussian's sigma (Rousseeuw &
   * Croux 1993, JASA 88, 1273); with 65536 samples its standard error is about 0.5%, so 3% is a
   * wide margin that still catches a wrong factor or a wrong median.
   * channel k: Gaussian with sigma = 0.1 (k + 1) and offset k; channel 8 half NaN */
  for (gsize p = 0; p < npix; p++)
    for (gsize k = 0; k < cube->nchan; k++)
      cube->data[p * cube->nchan + k] = (float) (k + 0.1 * (k + 1) * gauss (r));
  for (gsize p = 0; p < npix; p += 2)
    cube->data[p * cube->nchan + 8] = NAN;
  /* a line in 3% of the pixels of channel 2, 20 sigma: the MAD barely moves */
  for (gsize p = 0; p < npix; p += 33)
    cube->data[p * cube->nchan + 2] += 6.0f;
  efflux_cube_estimate_noise (cube);
  for (gsize k = 0; k < cube->nchan; k++)
    {
      double sigma = 0.1 * (k + 1);

      if (fabs (cube->rms[k] - sigma) > 0.03 * sigma + (k == 2 ? 0.02 * sigma : 0.0))
        g_error ("channel %" G_GSIZE_FORMAT ": rms %.5f, sigma %.5f", k, cube->rms[k], sigma);
    }

  /* exactness of the selection against a full sort: 1023 pixels (the selection) and 10100 pixels
   * (the histogram search), odd and even counts, ties, outliers, a constant channel, a range
   * of 6e38 */
  check_mad_exact (small, r);
  check_mad_exact (large, r);
}

/* ---------------------------------------------------------------------------------------- */
/* bad files                                                                                   */

/* A FITS file: the cards (NULL-terminated), END, padding, then data_bytes bytes of zeros, padded
 * to a whole 2880-byte block when pad is TRUE (FITS standard). */
static char *
write_fits_full (const char         *name,
                 const char *const  *cards,
                 gsize               data_bytes,
                 gboolean            pad)
{
  GString *h = g_string_new (NULL);
  char *path = g_build_filename (tmpdir, name, NULL);

  for (int i = 0; cards[i] != NULL; i++)
    efflux_test_fits_card (h, cards[i]);
  efflux_test_fits_card (h, "END");
  while (h->len % 2880)
    g_string_append_c (h, ' ');
  {
    gsize hl = h->len;

    if (pad && data_bytes % 2880)
      data_bytes += 2880 - data_bytes % 2880;
    g_string_set_size (h, hl + data_bytes);
    memset (h->str + hl, 0, data_bytes);
  }
  g_assert_true (g_file_set_contents (path, h->str, (gssize) h->len, NULL));
  g_string_free (h, TRUE);
  return path;
}

static char *
write_fits (const char        *name,
            const char *const *cards,
            gsize              data_bytes)
{
  return write_fits_full (name, cards, data_bytes, TRUE);
}

#define CUBE_CARDS(bitpix, n1, n2, n3) \
  "SIMPLE  =                    T", "BITPIX  = " bitpix, "NAXIS   =                    3", \
  "NAXIS1  = " n1, "NAXIS2  = " n2, "NAXIS3  = " n3

#define SKY_CARDS \
  "CTYPE1  = 'RA---SIN'", "CRVAL1  = 52.263", "CDELT1  = -0.0001", "CRPIX1  = 4.0", "CUNIT1  = 'deg'", \
  "CTYPE2  = 'DEC--SIN'", "CRVAL2  = 31.255", "CDELT2  = 0.0001", "CRPIX2  = 3.0", "CUNIT2  = 'deg'", \
  "RADESYS = 'ICRS'"

static void
expect_refusal (const char *path,
                const char *card)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxCube) cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
  g_autofree char *base = g_path_get_basename (path);

  g_assert_null (cube);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  if (strstr (error->message, base) == NULL || strstr (error->message, card) == NULL ||
      strchr (error->message, '\n') != NULL)
    g_error ("refusal of %s: expected one line naming '%s', got: %s", base, card, error->message);
  g_test_message ("%s", error->message);
}

static void
test_bad_files (void)
{
  g_autofree char *empty = g_build_filename (tmpdir, "empty.fits", NULL);
  g_autofree char *text = g_build_filename (tmpdir, "text.fits", NULL);
  g_autofree char *truncated = NULL, *nospec = NULL, *zerostep = NULL, *zerocd = NULL, *norest = NULL;
  g_autofree char *huge = NULL, *nobeam = NULL, *flat = NULL, *zeroaxis = NULL, *cuthead = NULL;
  g_autofree char *extra = NULL;
  const char *c_trunc[] = { CUBE_CARDS ("-32", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                            "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", "BUNIT   = 'K'", NULL };
  const char *c_nospec[] = { CUBE_CARDS ("-32", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'STOKES'",
                             "CRVAL3  = 1.0", "CDELT3  = 1.0", "CRPIX3  = 1.0", NULL };
  const char *c_zero[] = { CUBE_CARDS ("-32", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                           "CRVAL3  = 0.0", "CDELT3  = 0.0", "CRPIX3  = 1.0", NULL };
  const char *c_zerocd[] = { CUBE_CARDS ("-32", "7", "5", "6"), "CTYPE1  = 'RA---TAN'", "CRVAL1  = 52.0",
                             "CD1_1   = -0.0001", "CRPIX1  = 4.0", "CTYPE2  = 'DEC--TAN'", "CRVAL2  = 31.0",
                             "CD2_2   = 0.0001", "CRPIX2  = 3.0", "CTYPE3  = 'VRAD'", "CRVAL3  = 0.0",
                             "CRPIX3  = 1.0", "CD3_3   = 0.0", NULL };
  const char *c_norest[] = { CUBE_CARDS ("-32", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'FREQ'",
                             "CRVAL3  = 230.538E9", "CDELT3  = 1.0E5", "CRPIX3  = 1.0", "CUNIT3  = 'Hz'", NULL };
  const char *c_huge[] = { CUBE_CARDS ("-32", "2000000000", "5", "6"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                           "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", NULL };
  const char *c_nobeam[] = { CUBE_CARDS ("-32", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'FREQ'",
                             "CRVAL3  = 230.538E9", "CDELT3  = 1.0E5", "CRPIX3  = 1.0", "CUNIT3  = 'Hz'",
                             "RESTFRQ = 230.538E9", "BUNIT   = 'Jy/beam'", NULL };
  const char *c_flat[] = { "SIMPLE  =                    T", "BITPIX  =                  -32",
                           "NAXIS   =                    2", "NAXIS1  =                    7",
                           "NAXIS2  =                    5", NULL };
  const char *c_zeroaxis[] = { CUBE_CARDS ("-32", "7", "5", "0"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                               "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", NULL };
  const char *c_extra[] = { "SIMPLE  =                    T", "BITPIX  =                  -32",
                            "NAXIS   =                    4", "NAXIS1  =                    7",
                            "NAXIS2  =                    5", "NAXIS3  =                    6",
                            "NAXIS4  =                    2", SKY_CARDS, "CTYPE3  = 'VRAD'",
                            "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", "CTYPE4  = 'TIME'", NULL };

  g_assert_true (g_file_set_contents (empty, "", 0, NULL));
  expect_refusal (empty, "SIMPLE");
  g_assert_true (g_file_set_contents (text, "This is a text file, not an image.\n", -1, NULL));
  expect_refusal (text, "SIMPLE");

  truncated = write_fits_full ("truncated.fits", c_trunc, 7 * 5 * 6 * 4 / 2, FALSE);
  expect_refusal (truncated, "NAXIS1");
  nospec = write_fits ("nospec.fits", c_nospec, 7 * 5 * 6 * 4);
  expect_refusal (nospec, "CTYPE3");
  zerostep = write_fits ("zerostep.fits", c_zero, 7 * 5 * 6 * 4);
  expect_refusal (zerostep, "CDELT3 = 0");
  zerocd = write_fits ("zerocd.fits", c_zerocd, 7 * 5 * 6 * 4);
  expect_refusal (zerocd, "CD3_3 = 0");
  norest = write_fits ("norest.fits", c_norest, 7 * 5 * 6 * 4);
  expect_refusal (norest, "RESTFRQ");
  huge = write_fits_full ("huge.fits", c_huge, 2880, FALSE);
  expect_refusal (huge, "NAXIS1");
  nobeam = write_fits ("nobeam.fits", c_nobeam, 7 * 5 * 6 * 4);
  expect_refusal (nobeam, "BMAJ");
  flat = write_fits ("flat.fits", c_flat, 7 * 5 * 4);
  expect_refusal (flat, "NAXIS");
  zeroaxis = write_fits ("zeroaxis.fits", c_zeroaxis, 0);
  expect_refusal (zeroaxis, "NAXIS3 = 0");
  extra = write_fits ("extra.fits", c_extra, 7 * 5 * 6 * 2 * 4);
  expect_refusal (extra, "NAXIS4 = 2");

  /* a gzip file cannot be checked against its size: a header claiming 2000000000 x 5 x 6 floats
   * must then be refused by the memory check, before any allocation */
  {
    g_autofree char *plain = NULL, *gzpath = g_build_filename (tmpdir, "huge.fits.gz", NULL);
    g_autoptr(GZlibCompressor) z = g_zlib_compressor_new (G_ZLIB_COMPRESSOR_FORMAT_GZIP, 6);
    g_autoptr(GError) gerror = NULL;
    g_autoptr(EffluxCube) none = NULL;
    gsize len = 0, nread = 0, nwritten = 0;
    gsize cap = 1 << 20;
    g_autofree char *packed = g_malloc (cap);

    g_assert_true (g_file_get_contents (huge, &plain, &len, NULL));
    g_assert_cmpint (g_converter_convert (G_CONVERTER (z), plain, len, packed, cap, G_CONVERTER_INPUT_AT_END,
                                          &nread, &nwritten, &gerror), ==, G_CONVERTER_FINISHED);
    g_assert_no_error (gerror);
    g_assert_true (g_file_set_contents (gzpath, packed, (gssize) nwritten, NULL));
    none = efflux_cube_load (gzpath, NULL, NULL, NULL, NULL, &gerror);
    g_assert_null (none);
    g_assert_error (gerror, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY);
    g_assert_nonnull (strstr (gerror->message, "huge.fits.gz"));
    g_assert_nonnull (strstr (gerror->message, "NAXIS1"));
    g_assert_nonnull (strstr (gerror->message, "223.5 GiB"));   /* 2e9 x 5 x 6 x 4 bytes + 32 MiB */
    g_assert_nonnull (strstr (gerror->message, "GiB available"));
    g_test_message ("%s", gerror->message);
    g_unlink (gzpath);
  }

  /* a header cut short (no END card) */
  {
    g_autofree char *whole = NULL;
    gsize len = 0;

    cuthead = g_build_filename (tmpdir, "cuthead.fits", NULL);
    g_assert_true (g_file_get_contents (truncated, &whole, &len, NULL));
    g_assert_true (g_file_set_contents (cuthead, whole, 800, NULL));
    expect_refusal (cuthead, "END");
  }

  /* the good version of the truncated file loads */
  {
    g_autofree char *good = write_fits ("good.fits", c_trunc, 7 * 5 * 6 * 4);
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxCube) cube = efflux_cube_load (good, NULL, NULL, NULL, NULL, &error);

    g_assert_no_error (error);
    g_assert_cmpuint (cube->nchan, ==, 6);
    g_assert_cmpfloat_with_epsilon (cube->velocity[1], 0.25, 1e-12);
    g_unlink (good);
  }

  /* the command line: exit 1 and one line on stderr naming the file */
  {
    const char *files[] = { empty, zerostep };
    const char *cards[] = { "SIMPLE", "CDELT3" };

    for (int i = 0; i < 2; i++)
      {
        const char *args[] = { "info", files[i], NULL };
        g_autofree char *out = NULL, *err = NULL;

        g_assert_cmpint (efflux_test_run_cli (args, &out, &err), ==, 1);
        g_assert_cmpstr (out, ==, "");
        g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
        g_assert_nonnull (strstr (err, files[i]));
        g_assert_nonnull (strstr (err, cards[i]));
        g_assert_true (g_str_has_suffix (err, "\n"));
        g_assert_true (strchr (err, '\n') == err + strlen (err) - 1);   /* exactly one line */
      }
    /* usage errors exit 2 */
    {
      const char *args[] = { "info", NULL };

      g_assert_cmpint (efflux_test_run_cli (args, NULL, NULL), ==, 2);
    }
  }

  g_unlink (empty);
  g_unlink (text);
  g_unlink (truncated);
  g_unlink (nospec);
  g_unlink (zerostep);
  g_unlink (zerocd);
  g_unlink (norest);
  g_unlink (huge);
  g_unlink (nobeam);
  g_unlink (flat);
  g_unlink (zeroaxis);
  g_unlink (extra);
  g_unlink (cuthead);
}

/* Seeded mutations of a good file's header: every outcome must be a cube or a one-line
 * EFFLUX_ERROR naming the file (a crash fails the test). wcslib 7.12 overran a buffer on a string
 * value without its closing quote before the loader checked for it. */
static void
test_mutations (void)
{
  const char *cards[] = { CUBE_CARDS ("16", "7", "5", "6"), SKY_CARDS, "CTYPE3  = 'FREQ'",
                          "CRVAL3  = 230.538E9", "CDELT3  = 1.0E5", "CRPIX3  = 1.0", "CUNIT3  = 'Hz'",
                          "RESTFRQ = 230.538E9", "BUNIT   = 'Jy/beam'", "BMAJ    = 2.7E-4", "BMIN    = 2.5E-4",
                          "BPA     = 30.0", "BSCALE  = 0.01", "BZERO   = 0.0", "BLANK   = -32768",
                          "SPECSYS = 'BARYCENT'", "VELREF  = 258", "DATE-OBS= '2020-01-02T03:04:05'", NULL };
  g_autofree char *good = write_fits ("mutate-good.fits", cards, 7 * 5 * 6 * 2);
  g_autofree char *bytes = NULL;
  g_autofree char *mpath = g_build_filename (tmpdir, "mutated.fits", NULL);
  g_autoptr(GRand) r = g_rand_new_with_seed (4242);
  static const char alphabet[] = "0123456789-+.E ='TFXYZ";
  static const char *const values[] = {
    "                   0", "                  -1", "         99999999999", "               1E300",
    "'FREQ'              ", "                 NaN", "                    ", "'RA---SIN",
  };
  gsize len = 0;
  int refused = 0, loaded = 0;

  g_assert_true (g_file_get_contents (good, &bytes, &len, NULL));
  for (int it = 0; it < 300; it++)
    {
      g_autofree char *b = g_memdup2 (bytes, len);
      gsize blen = len;
      int nmut = g_rand_int_range (r, 1, 5);
      g_autoptr(GError) error = NULL;
      g_autoptr(EffluxCube) cube = NULL;
      g_autofree char *base = g_path_get_basename (mpath);

      for (int m = 0; m < nmut; m++)
        {
          double mode = g_rand_double (r);
          gsize pos = (gsize) g_rand_int_range (r, 0, (gint32) MIN (blen, (gsize) 2880));

          if (mode < 0.5)
            b[pos] = mode < 0.4 ? alphabet[g_rand_int_range (r, 0, sizeof alphabet - 1)]
                                : (char) g_rand_int_range (r, 0, 256);
          else if (mode < 0.9)
            {
              gsize card = pos / 80 * 80;
              const char *v = values[g_rand_int_range (r, 0, G_N_ELEMENTS (values))];

              if (card + 10 + strlen (v) <= blen)
                memcpy (b + card + 10, v, strlen (v));
            }
          else
            blen = (gsize) g_rand_int_range (r, 1, (gint32) blen);
        }
      g_assert_true (g_file_set_contents (mpath, b, (gssize) blen, NULL));
      cube = efflux_cube_load (mpath, NULL, NULL, NULL, NULL, &error);
      if (cube != NULL)
        {
          g_assert_no_error (error);
          loaded++;
          continue;
        }
      g_assert_nonnull (error);
      g_assert_true (error->domain == EFFLUX_ERROR);
      g_assert_nonnull (strstr (error->message, base));
      g_assert_null (strchr (error->message, '\n'));
      refused++;
    }
  /* the corpus exercises both outcomes */
  g_assert_cmpint (loaded, >, 0);
  g_assert_cmpint (refused, >, 0);
  g_test_message ("%d loaded, %d refused", loaded, refused);
  g_unlink (mpath);
  g_unlink (good);
}

/* Every voxel in place, on the float32 path with several chunks and both threads: value =
 * x + 100 y + 10000 k (exact in float32), NaN kept. nchan = 40 (a multiple of 4: whole 16-byte
 * runs) and nchan = 37 (odd runs). */
static void
test_layout_float32 (void)
{
  const gsize nx = 67, ny = 48;
  const gsize nchans[] = { 40, 37 };

  for (gsize t = 0; t < G_N_ELEMENTS (nchans); t++)
    {
      gsize nchan = nchans[t];
      g_autofree char *n3 = g_strdup_printf ("NAXIS3  = %" G_GSIZE_FORMAT, nchan);
      const char *cards[] = { "SIMPLE  =                    T", "BITPIX  =                  -32",
                              "NAXIS   =                    3", "NAXIS1  =                   67",
                              "NAXIS2  =                   48", n3, SKY_CARDS, "CTYPE3  = 'VRAD'",
                              "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", "BUNIT   = 'K'", NULL };
      gsize nvox = nx * ny * nchan;
      g_autofree char *path = write_fits ("layout.fits", cards, nvox * 4);
      g_autofree char *bytes = NULL;
      gsize len = 0, head;
      g_autoptr(GError) error = NULL;
      g_autoptr(EffluxCube) cube = NULL;

      g_assert_true (g_file_get_contents (path, &bytes, &len, NULL));
      head = len - (nvox * 4 + (2880 - nvox * 4 % 2880) % 2880);
      for (gsize k = 0; k < nchan; k++)
        for (gsize y = 0; y < ny; y++)
          for (gsize x = 0; x < nx; x++)
            {
              union { float f; guint32 u; } v;
              guint32 be;

              v.f = (x == 5 && y == 7) ? NAN : (float) (x + 100 * y + 10000 * k);
              be = GUINT32_TO_BE (v.u);
              memcpy (bytes + head + ((k * ny + y) * nx + x) * 4, &be, 4);
            }
      g_assert_true (g_file_set_contents (path, bytes, (gssize) len, NULL));
      cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
      g_assert_no_error (error);
      for (gsize y = 0; y < ny; y++)
        for (gsize x = 0; x < nx; x++)
          {
            const float *spec = efflux_cube_spectrum (cube, x, y);

            for (gsize k = 0; k < nchan; k++)
              if (x == 5 && y == 7)
                g_assert_true (isnan (spec[k]));
              else if (spec[k] != (float) (x + 100 * y + 10000 * k))
                g_error ("voxel (%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT "): %g",
                         x, y, k, spec[k]);
          }
      g_unlink (path);
    }
}

static void
on_progress (double   fraction,
             gpointer data)
{
  double *last = data;

  g_assert_cmpfloat (fraction, >=, *last);
  g_assert_cmpfloat (fraction, <=, 1.0);
  *last = fraction;
}

static void
cancel_on_progress (double   fraction,
                    gpointer data)
{
  g_cancellable_cancel (data);
}

static void
test_progress_cancel (void)
{
  const char *cards[] = { CUBE_CARDS ("16", "64", "64", "200"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                          "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", "BUNIT   = 'K'",
                          "BSCALE  = 0.5", "BZERO   = 1.0", NULL };
  g_autofree char *path = write_fits ("progress.fits", cards, 64 * 64 * 200 * 2);
  g_autoptr(GError) error = NULL;
  g_autoptr(GCancellable) cancel = g_cancellable_new ();
  double last = 0.0;
  g_autoptr(EffluxCube) cube = efflux_cube_load (path, NULL, NULL, on_progress, &last, &error);
  g_autoptr(EffluxCube) none = NULL;

  g_assert_no_error (error);
  g_assert_cmpfloat (last, ==, 1.0);
  /* zeros stored: BZERO + BSCALE x 0 = 1 */
  g_assert_cmpfloat (cube->data[12345], ==, 1.0f);
  none = efflux_cube_load (path, NULL, cancel, cancel_on_progress, cancel, &error);
  g_assert_null (none);
  g_assert_error (error, G_IO_ERROR, G_IO_ERROR_CANCELLED);
  g_unlink (path);

  /* the float32 path (pread on two threads): progress, values, cancellation */
  {
    const char *fcards[] = { CUBE_CARDS ("-32", "64", "64", "300"), SKY_CARDS, "CTYPE3  = 'VRAD'",
                             "CRVAL3  = 0.0", "CDELT3  = 250.0", "CRPIX3  = 1.0", "BUNIT   = 'K'", NULL };
    g_autofree char *fpath = write_fits ("progress32.fits", fcards, 64 * 64 * 300 * 4);
    g_autoptr(GCancellable) cancel2 = g_cancellable_new ();
    g_autoptr(EffluxCube) c32 = NULL, none32 = NULL;

    g_clear_error (&error);
    last = 0.0;
    c32 = efflux_cube_load (fpath, NULL, NULL, on_progress, &last, &error);
    g_assert_no_error (error);
    g_assert_cmpfloat (last, ==, 1.0);
    g_assert_cmpfloat (c32->data[4321], ==, 0.0f);
    none32 = efflux_cube_load (fpath, NULL, cancel2, cancel_on_progress, cancel2, &error);
    g_assert_null (none32);
    g_assert_error (error, G_IO_ERROR, G_IO_ERROR_CANCELLED);
    g_unlink (fpath);
  }
}

int
main (int    argc,
      char **argv)
{
  g_autoptr(GError) error = NULL;
  int ret;

  g_test_init (&argc, &argv, NULL);
  tmpdir = efflux_test_tmp_dir ("efflux-cube");
  g_test_add_func ("/cube/new-simple", test_new_simple);
  g_test_add_func ("/cube/channel-range", test_channel_range);
  g_test_add_func ("/cube/jy-beam-to-k", test_jy_beam_to_k);
  g_test_add_func ("/cube/noise", test_noise);
  g_test_add_func ("/cube/bad-files", test_bad_files);
  g_test_add_func ("/cube/progress-cancel", test_progress_cancel);
  g_test_add_func ("/cube/mutations", test_mutations);
  g_test_add_func ("/cube/layout-float32", test_layout_float32);
  ret = g_test_run ();
  g_rmdir (tmpdir);
  g_free (tmpdir);
  return ret;
}
