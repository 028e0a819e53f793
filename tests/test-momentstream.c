/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Moment maps streamed from the file (src/core/efflux-momentstream.c).
 *
 * - The streamed map equals efflux_cube_load (channel_subset over the range, as `efflux-cli
 *   moment` loads) + efflux_moment_map BITWISE (memcmp: NaN at the same pixels with the same
 *   bits), for orders 0, 1, 2 and peak, on cubes with NaN voxels, an all-NaN pixel and pixels of
 *   negative sum, both channel orderings, K and Jy/beam (a FREQ axis: a different K factor per
 *   channel), odd sizes (nx = 203, not a multiple of 4; several tiles of rows per thread), ranges
 *   at both edges of the cube, the whole cube and a single channel.
 * - Against numpy (tests/ref/momentstream_ref.py: astropy.io.fits reads the file, astropy.wcs
 *   gives the channel velocities, numpy.nansum / nanmax sum them): moment 0 within 1e-7 relative
 *   (the float32 rounding of the map, 6e-8), the peak exactly, moment 1 within 1e-6 km/s where
 *   the line is detected.
 * - A range whose voxels are all NaN is refused with the loader's message; a cancelled stream
 *   stops with G_IO_ERROR_CANCELLED.
 * - The cubes of tests/ref/make_cubes.py (every kind the loader reads): streamed exactly when
 *   they are of the streamed kind, and then bitwise the loaded cube's map.
 * - Files the stream does not take (BITPIX 16 with BSCALE/BZERO) are UNSUPPORTED, and
 *   `efflux-cli moment` gives the loaded cube's map for them; for a float file it gives the
 *   streamed map; the header-only cube writes the same FITS header as the loaded one. */
#include "config.h"

#include <math.h>
#include <string.h>

#include <fitsio.h>
#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-maps.h"
#include "efflux-momentstream.h"
#include "efflux-test-util.h"

#define NX 203
#define NY 150
#define NCHAN 45
#define DV 0.3
#define VSPAN 6.6   /* channels from -6.6 to +6.6 km/s */

/* whether the middle range had pixel (7, 3)'s channel out of it [0] and in it [1] */
static gboolean seen_single[2];

static const EffluxMomentOrder orders[] = {
  EFFLUX_MOMENT_0, EFFLUX_MOMENT_1, EFFLUX_MOMENT_2, EFFLUX_MOMENT_PEAK,
};

/* A cube with a Gaussian line (3 K peak, 1 km/s dispersion) whose centre drifts across the map,
 * noise, scattered NaN voxels, one pixel NaN in every channel, one pixel with a single finite
 * channel, and a few pixels of negative values only (moment 1 and 2 NaN there). */
static EffluxCube *
make_cube (double dv)
{
  EffluxCube *cube = efflux_cube_new_simple (NX, NY, NCHAN, 83.81, -5.39, 1.5,
                                             dv > 0 ? -VSPAN : VSPAN, dv, 230.538e9);
  g_autoptr (GRand) rand = g_rand_new_with_seed (20261202);

  g_assert_nonnull (cube);
  for (gsize y = 0; y < NY; y++)
    for (gsize x = 0; x < NX; x++)
      {
        float *spec = efflux_cube_spectrum (cube, x, y);
        double vc = -2.0 + 4.0 * (double) x / NX + (double) y / NY;

        for (gsize k = 0; k < NCHAN; k++)
          {
            double d = cube->velocity[k] - vc;
            double t = 3.0 * exp (-0.5 * d * d) + g_rand_double_range (rand, -0.3, 0.3);

            if (y == 0 && x < 10)
              t = -1.0 - g_rand_double (rand);
            spec[k] = (float) t;
          }
      }
  for (gsize i = 0; i < (gsize) NX * NY * NCHAN; i += 1013)
    cube->data[i] = NAN;
  for (gsize k = 0; k < NCHAN; k++)
    {
      efflux_cube_spectrum (cube, 5, 5)[k] = NAN;
      if (k != 30)
        efflux_cube_spectrum (cube, 7, 3)[k] = NAN;
    }
  cube->has_beam = TRUE;
  cube->bmaj_arcsec = 4.0;
  cube->bmin_arcsec = 3.0;
  cube->bpa_deg = 20.0;
  return cube;
}

static char *
write_cube (const char        *dir,
            const char        *name,
            double             dv,
            EffluxFitsSpectral spectral,
            gboolean           jy,
            int                bitpix)
{
  g_autoptr (EffluxCube) cube = make_cube (dv);
  g_autoptr (GError) error = NULL;
  EffluxFitsCubeOptions options = { 0 };
  char *path = g_build_filename (dir, name, NULL);

  options.spectral = spectral;
  options.jy_per_beam = jy;
  options.bitpix = bitpix;
  g_assert_true (efflux_fits_write_cube (cube, path, &options, &error));
  g_assert_no_error (error);
  return path;
}

/* The map `efflux-cli moment` made before the stream: the channels of the range loaded, then the
 * direct sums. */
static float *
cube_path_map (const char        *path,
               EffluxMomentOrder  order,
               double             v1,
               double             v2,
               EffluxCube       **cube_out)
{
  g_autoptr (GError) error = NULL;
  EffluxCubeLoadOptions load = { 0 };
  g_autoptr (EffluxCube) cube = NULL;
  float *map;

  load.no_noise = TRUE;
  load.channel_subset = TRUE;
  load.v1_kms = v1;
  load.v2_kms = v2;
  cube = efflux_cube_load (path, &load, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  map = g_new (float, cube->nx * cube->ny);
  g_assert_true (efflux_moment_map (cube, order, v1, v2, 0.0, map, &error));
  g_assert_no_error (error);
  if (cube_out != NULL)
    *cube_out = g_steal_pointer (&cube);
  return map;
}

static gsize
count_nan (const float *map,
           gsize        n)
{
  gsize c = 0;

  for (gsize i = 0; i < n; i++)
    c += isnan (map[i]);
  return c;
}

typedef struct
{
  const char *what;
  double      v1, v2;
  gboolean    one_channel;
} Range;

static void
check_file_bitwise (const char *path,
                    double      dv)
{
  /* the channel nearest -1.5 km/s, for a one-channel range */
  double vone = dv > 0 ? -VSPAN + 17 * DV : VSPAN - 17 * DV;
  const Range ranges[] = {
    { "middle", -2.0, 3.1, FALSE },
    { "low edge", -100.0, -4.0, FALSE },
    { "high edge", 100.0, 4.0, FALSE },
    { "whole cube", -100.0, 100.0, FALSE },
    { "one channel", vone - 0.1, vone + 0.1, TRUE },
  };
  gboolean edge_first = FALSE, edge_last = FALSE;

  for (guint r = 0; r < G_N_ELEMENTS (ranges); r++)
    for (guint o = 0; o < G_N_ELEMENTS (orders); o++)
      {
        g_autoptr (GError) error = NULL;
        g_autoptr (EffluxCube) header = NULL;
        g_autoptr (EffluxCube) cube = NULL;
        g_autofree float *map = NULL;
        g_autofree float *want = NULL;
        EffluxMomentStreamResult res;
        gsize npix = (gsize) NX * NY;

        res = efflux_moment_stream_file (path, 0, orders[o], ranges[r].v1, ranges[r].v2, NULL,
                                         &header, &map, &error);
        g_assert_no_error (error);
        g_assert_cmpint (res, ==, EFFLUX_MOMENT_STREAM_DONE);
        g_assert_null (header->data);
        want = cube_path_map (path, orders[o], ranges[r].v1, ranges[r].v2, &cube);

        /* the header-only cube is the loaded one without its data */
        g_assert_cmpuint (header->nx, ==, cube->nx);
        g_assert_cmpuint (header->ny, ==, cube->ny);
        g_assert_cmpuint (header->nchan, ==, cube->nchan);
        g_assert_cmpmem (header->velocity, header->nchan * sizeof (double),
                         cube->velocity, cube->nchan * sizeof (double));
        g_assert_cmpmem (header->k_per_unit, header->nchan * sizeof (double),
                         cube->k_per_unit, cube->nchan * sizeof (double));
        g_assert_cmpfloat (header->dv, ==, cube->dv);
        if (ranges[r].one_channel)
          g_assert_cmpuint (header->nchan, ==, 1);
        else if (r == 3)
          g_assert_cmpuint (header->nchan, ==, NCHAN);
        else
          g_assert_cmpuint (header->nchan, <, NCHAN);
        if (r == 1 || r == 2)
          {
            /* the edge ranges reach the file's first or last channel */
            edge_first |= fabs (header->velocity[0] - (dv > 0 ? -VSPAN : VSPAN)) < 1e-6;
            edge_last |= fabs (header->velocity[header->nchan - 1] - (dv > 0 ? VSPAN : -VSPAN)) < 1e-6;
          }

        if (memcmp (map, want, npix * sizeof (float)) != 0)
          for (gsize i = 0; i < npix; i++)
            if (memcmp (&map[i], &want[i], sizeof (float)) != 0)
              g_error ("%s, range %s, order %s: pixel (%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT
                       "): streamed %.9g, loaded cube %.9g", path, ranges[r].what,
                       efflux_moment_order_name (orders[o]), i % NX, i / NX, map[i], want[i]);
        /* NaN where it must be: the all-NaN pixel always, the negative pixels in moments 1, 2 */
        g_assert_true (isnan (map[5 * NX + 5]));
        if (orders[o] == EFFLUX_MOMENT_1 || orders[o] == EFFLUX_MOMENT_2)
          g_assert_cmpuint (count_nan (map, npix), >=, 10);
        if (orders[o] == EFFLUX_MOMENT_0 || orders[o] == EFFLUX_MOMENT_PEAK)
          {
            /* a number where there is one, and pixel (7, 3), whose one finite voxel is file
             * channel 30, a number exactly when that channel is in the range */
            double v30 = dv > 0 ? -VSPAN + 30 * DV : VSPAN - 30 * DV;
            gboolean in = v30 >= MIN (ranges[r].v1, ranges[r].v2) - 1e-6 &&
                          v30 <= MAX (ranges[r].v1, ranges[r].v2) + 1e-6;

            g_assert_false (isnan (map[10 * NX + 100]));
            g_assert_cmpint (isnan (map[3 * NX + 7]), ==, !in);
            if (r == 0)
              seen_single[in] = TRUE;
          }
      }
  g_assert_true (edge_first);
  g_assert_true (edge_last);
}

static void
test_bitwise (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-momentstream");
  struct
  {
    const char        *name;
    double             dv;
    EffluxFitsSpectral spectral;
    gboolean           jy;
  } files[] = {
    { "k-up.fits", DV, EFFLUX_FITS_SPECTRAL_VRAD, FALSE },
    { "k-down.fits", -DV, EFFLUX_FITS_SPECTRAL_VRAD, FALSE },
    { "jy-freq-up.fits", DV, EFFLUX_FITS_SPECTRAL_FREQ, TRUE },
    { "jy-down.fits", -DV, EFFLUX_FITS_SPECTRAL_VRAD, TRUE },
  };

  for (guint f = 0; f < G_N_ELEMENTS (files); f++)
    {
      g_autofree char *path = write_cube (dir, files[f].name, files[f].dv, files[f].spectral,
                                          files[f].jy, -32);
      g_autoptr (GError) error = NULL;
      EffluxCubeLoadOptions load = { 0 };
      EffluxCubeFileLayout layout = { 0 };
      g_autoptr (EffluxCube) header = NULL;

      load.header_only = TRUE;
      load.layout = &layout;
      header = efflux_cube_load (path, &load, NULL, NULL, NULL, &error);
      g_assert_no_error (error);
      g_assert_true (efflux_moment_stream_applies (header, &layout));
      if (files[f].jy)
        {
          g_assert_cmpint (header->bunit_kind, ==, EFFLUX_BUNIT_JY_BEAM);
          /* a FREQ axis: each channel its own factor (Rayleigh-Jeans goes as 1 / nu^2) */
          if (files[f].spectral == EFFLUX_FITS_SPECTRAL_FREQ)
            g_assert_cmpfloat (header->k_per_unit[0], !=, header->k_per_unit[NCHAN - 1]);
        }
      check_file_bitwise (path, files[f].dv);
      if (f == 0)
        {
          /* the tiles shared by one thread and by four, whatever the processors: the same bits */
          efflux_cube_force_threads (1);
          check_file_bitwise (path, files[f].dv);
          efflux_cube_force_threads (4);
          check_file_bitwise (path, files[f].dv);
          efflux_cube_force_threads (0);
        }
    }
  g_assert_true (seen_single[0]);
  g_assert_true (seen_single[1]);
  efflux_test_remove_tree (dir);
}

/* Against numpy on the K cubes, both channel orders: tests/ref/momentstream_ref.py reads the
 * file with astropy.io.fits, takes the channel velocities from astropy.wcs and sums with
 * numpy.nansum / nanmax (float64). */
static void
test_numpy (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-momentstream-np");
  const double dvs[] = { DV, -DV };
  const double v1 = -2.0, v2 = 3.1;

  for (guint f = 0; f < G_N_ELEMENTS (dvs); f++)
    {
      g_autofree char *path = write_cube (dir, dvs[f] > 0 ? "up.fits" : "down.fits", dvs[f],
                                          EFFLUX_FITS_SPECTRAL_VRAD, FALSE, -32);
      g_autofree char *out = NULL;
      g_autofree double *m0 = NULL, *m1 = NULL, *peak = NULL, *s0 = NULL;
      gsize n, npix = (gsize) NX * NY, compared_m1 = 0;
      const char *args[] = { path, "-2.0", "3.1", dir, NULL };
      g_autofree float *map0 = NULL, *map1 = NULL, *mapp = NULL;
      EffluxMomentOrder want_orders[] = { EFFLUX_MOMENT_0, EFFLUX_MOMENT_1, EFFLUX_MOMENT_PEAK };
      float **maps[] = { &map0, &map1, &mapp };

      out = efflux_test_python ("momentstream_ref.py", args);
      /* 17 channels lie in -2.0 .. 3.1 km/s (-1.8, -1.5, ..., 3.0) */
      g_assert_cmpint ((int) g_ascii_strtod (out, NULL), ==, 17);
      m0 = efflux_test_read_f64 (dir, "m0", &n);
      g_assert_cmpuint (n, ==, npix);
      m1 = efflux_test_read_f64 (dir, "m1", &n);
      g_assert_cmpuint (n, ==, npix);
      peak = efflux_test_read_f64 (dir, "peak", &n);
      g_assert_cmpuint (n, ==, npix);
      s0 = efflux_test_read_f64 (dir, "s0", &n);
      g_assert_cmpuint (n, ==, npix);

      for (guint o = 0; o < G_N_ELEMENTS (want_orders); o++)
        {
          g_autoptr (GError) error = NULL;
          g_autoptr (EffluxCube) header = NULL;

          g_assert_cmpint (efflux_moment_stream_file (path, 0, want_orders[o], v1, v2, NULL, &header,
                                                      maps[o], &error), ==, EFFLUX_MOMENT_STREAM_DONE);
          g_assert_no_error (error);
        }
      for (gsize i = 0; i < npix; i++)
        {
          /* NaN at the same pixels (no finite voxel in the range) */
          g_assert_cmpint (isnan (map0[i]), ==, isnan (m0[i]));
          g_assert_cmpint (isnan (mapp[i]), ==, isnan (peak[i]));
          if (isnan (m0[i]))
            continue;
          /* moment 0: the map is float32, so within its rounding (2^-24 = 6e-8 relative) plus
           * the difference of two double summation orders (negligible here) */
          if (!(fabs (map0[i] - m0[i]) <= 1e-7 * fabs (m0[i]) + 1e-12))
            g_error ("pixel %" G_GSIZE_FORMAT ": moment 0 %.9g, numpy %.9g", i, map0[i], m0[i]);
          /* the peak is one of the file's float32 values: exactly */
          g_assert_cmpfloat ((double) mapp[i], ==, peak[i]);
          /* moment 1 where the line is detected (sum T > 3 K: about 10 x the noise of the sum) */
          if (s0[i] > 3.0)
            {
              if (!(fabs (map1[i] - m1[i]) <= 1e-6))
                g_error ("pixel %" G_GSIZE_FORMAT ": moment 1 %.9g, numpy %.9g", i, map1[i], m1[i]);
              compared_m1++;
            }
        }
      g_assert_cmpuint (compared_m1, >, npix / 2);
      g_assert_true (isnan (map0[5 * NX + 5]));
    }
  efflux_test_remove_tree (dir);
}

/* A range whose voxels are all NaN: the loader's refusal, word for word; a cancelled stream. */
static void
test_refusals (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-momentstream-err");
  g_autofree char *path = g_build_filename (dir, "nan-low.fits", NULL);
  g_autoptr (EffluxCube) cube = make_cube (DV);
  g_autoptr (GError) error = NULL;
  g_autoptr (GError) load_error = NULL;
  g_autoptr (EffluxCube) header = NULL;
  g_autoptr (EffluxCube) loaded = NULL;
  g_autoptr (GCancellable) cancellable = g_cancellable_new ();
  g_autofree float *map = NULL;
  EffluxCubeLoadOptions load = { 0 };

  /* channels 0 .. 9 (-6.6 .. -3.9 km/s) NaN everywhere */
  for (gsize p = 0; p < (gsize) NX * NY; p++)
    for (gsize k = 0; k < 10; k++)
      cube->data[p * NCHAN + k] = NAN;
  g_assert_true (efflux_fits_write_cube (cube, path, NULL, &error));
  g_assert_no_error (error);

  g_assert_cmpint (efflux_moment_stream_file (path, 0, EFFLUX_MOMENT_0, -100.0, -4.0, NULL, &header,
                                              &map, &error), ==, EFFLUX_MOMENT_STREAM_FAILED);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_null (header);
  g_assert_null (map);
  load.channel_subset = TRUE;
  load.v1_kms = -100.0;
  load.v2_kms = -4.0;
  loaded = efflux_cube_load (path, &load, NULL, NULL, NULL, &load_error);
  g_assert_null (loaded);
  g_assert_error (load_error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_cmpstr (error->message, ==, load_error->message);
  g_assert_nonnull (strstr (error->message, "nan-low.fits"));
  g_clear_error (&error);

  /* a range with finite voxels in the same file streams */
  g_assert_cmpint (efflux_moment_stream_file (path, 0, EFFLUX_MOMENT_0, -100.0, -3.0, NULL, &header,
                                              &map, &error), ==, EFFLUX_MOMENT_STREAM_DONE);
  g_assert_no_error (error);
  g_clear_pointer (&header, efflux_cube_free);
  g_clear_pointer (&map, g_free);

  g_cancellable_cancel (cancellable);
  g_assert_cmpint (efflux_moment_stream_file (path, 0, EFFLUX_MOMENT_2, -2.0, 3.0, cancellable,
                                              &header, &map, &error), ==, EFFLUX_MOMENT_STREAM_FAILED);
  g_assert_error (error, G_IO_ERROR, G_IO_ERROR_CANCELLED);
  g_assert_null (header);
  efflux_test_remove_tree (dir);
}

/* A 2-D float image of a FITS file (BITPIX -32), NaN kept. */
static float *
read_image (const char *path,
            gsize      *n)
{
  fitsfile *f = NULL;
  int status = 0, naxis = 0, anynul = 0;
  long naxes[2] = { 0, 0 };
  float *image;

  g_assert_cmpint (fits_open_file (&f, path, READONLY, &status), ==, 0);
  fits_get_img_dim (f, &naxis, &status);
  g_assert_cmpint (naxis, ==, 2);
  fits_get_img_size (f, 2, naxes, &status);
  *n = (gsize) naxes[0] * (gsize) naxes[1];
  image = g_new (float, *n);
  /* nulval 0: no null check, NaN come through as they are */
  fits_read_img (f, TFLOAT, 1, (LONGLONG) *n, NULL, image, &anynul, &status);
  fits_close_file (f, &status);
  g_assert_cmpint (status, ==, 0);
  return image;
}

/* The file's bytes with the DATE card blanked (the one card that differs from run to run). */
static char *
read_without_date (const char *path,
                   gsize      *length)
{
  char *data = efflux_test_read_file (path, length);
  gboolean found = FALSE;

  for (gsize i = 0; i + 80 <= *length; i += 80)
    {
      if (memcmp (data + i, "END     ", 8) == 0)
        break;
      if (memcmp (data + i, "DATE    =", 9) == 0)
        {
          memset (data + i, ' ', 80);
          found = TRUE;
        }
    }
  g_assert_true (found);
  return data;
}

/* What the stream does not take goes through the loaded cube, in the CLI too. */
static void
test_fallback_cli (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-momentstream-cli");
  g_autofree char *f32 = write_cube (dir, "f32.fits", -DV, EFFLUX_FITS_SPECTRAL_VRAD, TRUE, -32);
  g_autofree char *i16 = write_cube (dir, "i16.fits", DV, EFFLUX_FITS_SPECTRAL_VRAD, FALSE, 16);
  g_autofree char *out = g_build_filename (dir, "m.fits", NULL);
  const char *order_names[] = { "0", "1", "2", "peak" };

  {
    /* BITPIX 16 with BSCALE/BZERO: not streamed */
    g_autoptr (GError) error = NULL;
    g_autoptr (EffluxCube) header = NULL;
    g_autofree float *map = NULL;
    EffluxCubeLoadOptions load = { 0 };
    EffluxCubeFileLayout layout = { 0 };
    g_autoptr (EffluxCube) h2 = NULL;

    g_assert_cmpint (efflux_moment_stream_file (i16, 0, EFFLUX_MOMENT_0, -2.0, 3.1, NULL, &header,
                                                &map, &error), ==, EFFLUX_MOMENT_STREAM_UNSUPPORTED);
    g_assert_no_error (error);
    g_assert_null (header);
    g_assert_null (map);
    load.header_only = TRUE;
    load.layout = &layout;
    h2 = efflux_cube_load (i16, &load, NULL, NULL, NULL, &error);
    g_assert_no_error (error);
    g_assert_false (layout.raw_float);
    g_assert_true (layout.spectral_slowest);
    g_assert_false (efflux_moment_stream_applies (h2, &layout));
  }

  for (guint o = 0; o < G_N_ELEMENTS (orders); o++)
    for (guint f = 0; f < 2; f++)
      {
        const char *in = f == 0 ? f32 : i16;
        const char *args[] = { "moment", in, "--order", order_names[o], "--range", "-2:3.1", "-o",
                               out, NULL };
        g_autofree char *err = NULL;
        g_autofree float *got = NULL;
        g_autofree float *want = NULL;
        gsize n = 0;

        g_assert_cmpint (efflux_test_run_cli (args, NULL, &err), ==, 0);
        got = read_image (out, &n);
        g_assert_cmpuint (n, ==, (gsize) NX * NY);
        want = cube_path_map (in, orders[o], -2.0, 3.1, NULL);
        g_assert_cmpmem (got, n * sizeof (float), want, n * sizeof (float));
        g_assert_cmpint (g_unlink (out), ==, 0);
      }

  {
    /* the header-only cube writes the loaded cube's header, card for card */
    g_autoptr (GError) error = NULL;
    g_autoptr (EffluxCube) header = NULL;
    g_autoptr (EffluxCube) cube = NULL;
    g_autofree float *map = NULL;
    g_autofree float *want = NULL;
    g_autofree char *a = g_build_filename (dir, "a.fits", NULL);
    g_autofree char *b = g_build_filename (dir, "b.fits", NULL);
    g_autofree char *da = NULL, *db = NULL;
    gsize la = 0, lb = 0;
    const char *cards[] = { "MOMENT", "'1'", "moment order", NULL };

    g_assert_cmpint (efflux_moment_stream_file (f32, 0, EFFLUX_MOMENT_1, -2.0, 3.1, NULL, &header,
                                                &map, &error), ==, EFFLUX_MOMENT_STREAM_DONE);
    g_assert_no_error (error);
    want = cube_path_map (f32, EFFLUX_MOMENT_1, -2.0, 3.1, &cube);
    g_assert_true (efflux_fits_write_sky_image (header, map, "km/s", cards, a, &error));
    g_assert_no_error (error);
    g_assert_true (efflux_fits_write_sky_image (cube, want, "km/s", cards, b, &error));
    g_assert_no_error (error);
    da = read_without_date (a, &la);
    db = read_without_date (b, &lb);
    g_assert_cmpmem (da, la, db, lb);
  }
  efflux_test_remove_tree (dir);
}

/* The cubes of tests/ref/make_cubes.py (astropy.io.fits writes them: every BITPIX, scaling,
 * axis order, extension HDU, STOKES axes, BEAMS table, gzip and tile compression, every spectral
 * type and brightness unit the loader reads): streamed exactly when the data are unscaled float32
 * with the spectral axis slowest and longitude fastest, and then bitwise the loaded cube's map. */
static void
test_corpus (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-momentstream-corpus");
  const char *not_streamed[] = {
    "f64-tan-fk5-vrad-ms.fits", "u8-arc-freq-hz.fits", "i16-ncp-freq-mhz.fits",
    "i32-sfl-gal-freq-ghz.fits", "i64-gls-vopt.fits", "f32-car-fra.fits", "f32-tan-dvr.fits",
    "f32-gzip.fits.gz", "i16-rice.fits", NULL,
  };
  g_autoptr (GDir) listing = NULL;
  const char *name;
  guint streamed = 0, loaded = 0;

  g_free (efflux_test_python ("make_cubes.py", (const char *[]) { dir, NULL }));
  listing = g_dir_open (dir, 0, NULL);
  g_assert_nonnull (listing);
  while ((name = g_dir_read_name (listing)) != NULL)
    {
      g_autofree char *path = g_build_filename (dir, name, NULL);
      g_autoptr (GError) error = NULL;
      g_autoptr (EffluxCube) whole = NULL;
      EffluxCubeLoadOptions load = { 0 };
      gboolean expect_stream = !g_strv_contains (not_streamed, name);
      double ranges[3][2];

      if (!g_str_has_suffix (name, ".fits") && !g_str_has_suffix (name, ".fits.gz"))
        continue;
      load.header_only = TRUE;
      whole = efflux_cube_load (path, &load, NULL, NULL, NULL, &error);
      g_assert_no_error (error);
      g_assert_cmpuint (whole->nchan, >=, 5);
      /* channels 1 .. 4, the whole cube, channel 2 alone */
      ranges[0][0] = whole->velocity[1];
      ranges[0][1] = whole->velocity[4];
      ranges[1][0] = whole->velocity[0] - 2.0 * whole->dv;
      ranges[1][1] = whole->velocity[whole->nchan - 1] + 2.0 * whole->dv;
      ranges[2][0] = ranges[2][1] = whole->velocity[2];

      for (guint r = 0; r < 3; r++)
        for (guint o = 0; o < G_N_ELEMENTS (orders); o++)
          {
            g_autoptr (EffluxCube) header = NULL;
            g_autofree float *map = NULL;
            g_autofree float *want = NULL;
            EffluxMomentStreamResult res;

            res = efflux_moment_stream_file (path, 0, orders[o], ranges[r][0], ranges[r][1], NULL,
                                             &header, &map, &error);
            g_assert_no_error (error);
            want = cube_path_map (path, orders[o], ranges[r][0], ranges[r][1], NULL);
            loaded++;
            if (!expect_stream)
              {
                if (res != EFFLUX_MOMENT_STREAM_UNSUPPORTED)
                  g_error ("%s: streamed, but its data are not unscaled float32 in the usual order", name);
                continue;
              }
            if (res != EFFLUX_MOMENT_STREAM_DONE)
              g_error ("%s: not streamed (%d)", name, res);
            streamed++;
            if (memcmp (map, want, header->nx * header->ny * sizeof (float)) != 0)
              g_error ("%s, range %u, order %s: the streamed map differs from the loaded cube's",
                       name, r, efflux_moment_order_name (orders[o]));
          }
    }
  g_test_message ("%u maps of the corpus compared, %u of them streamed", loaded, streamed);
  /* 36 cubes in make_cubes.py at the time of writing, 27 of them streamed */
  g_assert_cmpuint (loaded, >=, 30 * 12);
  g_assert_cmpuint (streamed, >=, 25 * 12);
  efflux_test_remove_tree (dir);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/momentstream/bitwise", test_bitwise);
  g_test_add_func ("/momentstream/numpy", test_numpy);
  g_test_add_func ("/momentstream/refusals", test_refusals);
  g_test_add_func ("/momentstream/fallback-cli", test_fallback_cli);
  g_test_add_func ("/momentstream/corpus", test_corpus);
  return g_test_run ();
}
