/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The float32 fast path of efflux_cube_load (batched reads on several threads, the SIMD byte-swap
 * transpose by 4 x 4 blocks with SSE2, 8 x 8 with AVX2 or 16 x 16 with AVX-512, units of 64 channels by a few
 * rows) on shapes that exercise every edge: several units of channels and of rows, widths and
 * channel counts that are not multiples of 4, 8 or 16, NaN voxels, and the channel subset; each
 * shape is read with the SSE2 code and, where the processor has them, with the AVX2 and the
 * AVX-512 code, and
 * with one and four reading threads. The reference is the file itself: every voxel is
 * written here as a big-endian IEEE 754 float32, as the FITS standard 4.0 defines BITPIX = -32
 * (Pence et al. 2010, A&A 524, A42, section 5.3), with a value known from its position, and
 * every voxel read back must be that float exactly. */
#include "config.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-cube.h"
#include "efflux-readbatch.h"
#include "efflux-test-util.h"

/* voxel (x, y, k): a smooth value, NaN on a sparse pattern */
static float
voxel (gsize x,
       gsize y,
       gsize k,
       gsize nx)
{
  gsize p = y * nx + x;

  if ((p * 31 + k * 7) % 997 == 0)
    return NAN;
  return (float) sin (0.001 * (double) p + 0.1 * (double) k) + (float) k;
}

static void
write_cube (const char *path,
            gsize       nx,
            gsize       ny,
            gsize       nchan)
{
  GString *h = g_string_new (NULL);
  g_autofree guint32 *plane = g_new (guint32, nx * ny);
  FILE *fp;

  efflux_test_fits_cube_header (h, nx, ny, nchan, 10.0, 0.5, 1.0);
  fp = fopen (path, "wb");
  g_assert_nonnull (fp);
  g_assert_cmpuint (fwrite (h->str, 1, h->len, fp), ==, h->len);
  for (gsize k = 0; k < nchan; k++)
    {
      for (gsize y = 0; y < ny; y++)
        for (gsize x = 0; x < nx; x++)
          {
            union { float f; guint32 u; } v;

            v.f = voxel (x, y, k, nx);
            plane[y * nx + x] = GUINT32_TO_BE (v.u);
          }
      g_assert_cmpuint (fwrite (plane, sizeof (guint32), nx * ny, fp), ==, nx * ny);
    }
  /* pad the data to a whole FITS block */
  {
    gsize data = nx * ny * nchan * 4;
    char zero[2880] = { 0 };

    if (data % 2880)
      g_assert_cmpuint (fwrite (zero, 1, 2880 - data % 2880, fp), ==, 2880 - data % 2880);
  }
  g_string_free (h, TRUE);
  g_assert_cmpint (fclose (fp), ==, 0);
}

static gboolean with_progress;   /* check_shape_once passes a progress function */

static void
count_progress (double   fraction,
                gpointer data)
{
  double *last = data;

  g_assert_cmpfloat (fraction, >=, *last);
  g_assert_cmpfloat (fraction, <=, 1.0);
  *last = fraction;
}

static void
check_shape_once (gsize nx,
                  gsize ny,
                  gsize nchan)
{
  double last = 0.0;
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-test-cube-reader-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autoptr(EffluxCube) cube = NULL;
  g_autoptr(EffluxCube) sub = NULL;
  EffluxCubeLoadOptions options = { 0 };
  gsize bad = 0, kb = 0, ke = 0;

  g_assert_no_error (error);
  path = g_build_filename (dir, "cube.fits", NULL);
  write_cube (path, nx, ny, nchan);

  options.no_noise = TRUE;
  cube = efflux_cube_load (path, &options, NULL, with_progress ? count_progress : NULL, &last, &error);
  g_assert_no_error (error);
  if (with_progress)
    g_assert_cmpfloat (last, ==, 1.0);
  g_assert_cmpuint (cube->nx, ==, nx);
  g_assert_cmpuint (cube->ny, ==, ny);
  g_assert_cmpuint (cube->nchan, ==, nchan);
  for (gsize y = 0; y < ny; y++)
    for (gsize x = 0; x < nx; x++)
      {
        const float *spec = efflux_cube_spectrum (cube, x, y);

        for (gsize k = 0; k < nchan; k++)
          {
            float want = voxel (x, y, k, nx);

            if (isnan (want) ? !isnan (spec[k]) : spec[k] != want)
              bad++;
          }
      }
  g_assert_cmpuint (bad, ==, 0);
  if (nchan < 8)
    {
      g_unlink (path);
      g_rmdir (dir);
      return;
    }

  /* channels 3 .. nchan - 2 (velocities 0.5 k km/s): the subset starts at a channel that is not
   * a multiple of 4 and is not one either in length */
  options.channel_subset = TRUE;
  options.v1_kms = 1.5;
  options.v2_kms = 0.5 * (double) (nchan - 2);
  sub = efflux_cube_load (path, &options, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_cube_channel_range (cube, options.v1_kms, options.v2_kms, &kb, &ke));
  g_assert_cmpuint (kb, ==, 3);
  g_assert_cmpuint (sub->nchan, ==, ke - kb);
  for (gsize y = 0; y < ny; y++)
    for (gsize x = 0; x < nx; x++)
      {
        const float *spec = efflux_cube_spectrum (sub, x, y);

        for (gsize k = 0; k < sub->nchan; k++)
          {
            float want = voxel (x, y, kb + k, nx);

            if (isnan (want) ? !isnan (spec[k]) : spec[k] != want)
              bad++;
          }
      }
  g_assert_cmpuint (bad, ==, 0);

  g_unlink (path);
  g_rmdir (dir);
}

/* every shape with the SSE2 code, then with the AVX2 and the AVX-512 code where the processor
 * has them (the default passes below use the widest one), then
 * with one and with four reading threads whatever the processors, then with pread () instead
 * of the io_uring batches (where the kernel offers those, every other pass uses them) */
static void
check_shape (gsize nx,
             gsize ny,
             gsize nchan)
{
  efflux_read_batch_allow_ring (FALSE);
  check_shape_once (nx, ny, nchan);
  efflux_read_batch_allow_ring (TRUE);
  efflux_cube_loader_allow_avx2 (FALSE);
  g_assert_false (efflux_cube_loader_uses_avx2 ());
  check_shape_once (nx, ny, nchan);
  efflux_cube_loader_allow_avx2 (TRUE);
  efflux_cube_loader_allow_avx512 (FALSE);
  g_assert_false (efflux_cube_loader_uses_avx512 ());
  if (efflux_cube_loader_uses_avx2 ())
    check_shape_once (nx, ny, nchan);
  efflux_cube_loader_allow_avx512 (TRUE);
  if (efflux_cube_loader_uses_avx512 ())
    check_shape_once (nx, ny, nchan);
  for (guint n = 1; n <= EFFLUX_CUBE_MAX_THREADS; n += EFFLUX_CUBE_MAX_THREADS - 1)
    {
      efflux_cube_force_threads (n);
      g_assert_cmpuint (efflux_cube_worker_threads (), ==, n);
      check_shape_once (nx, ny, nchan);
      with_progress = TRUE;
      check_shape_once (nx, ny, nchan);
      with_progress = FALSE;
    }
  efflux_cube_force_threads (0);
}

/* The noise estimate shares its blocks of 64 channels among the threads: the same rms, bit for
 * bit, with one thread and with four (150 channels: three blocks) */
static void
test_noise_threads (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-test-cube-reader-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autoptr(EffluxCube) one = NULL;
  g_autoptr(EffluxCube) four = NULL;
  EffluxCubeLoadOptions options = { 0 };

  g_assert_no_error (error);
  path = g_build_filename (dir, "cube.fits", NULL);
  write_cube (path, 40, 30, 150);
  efflux_cube_force_threads (1);
  one = efflux_cube_load (path, &options, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  efflux_cube_force_threads (4);
  four = efflux_cube_load (path, &options, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  efflux_cube_force_threads (0);
  for (gsize k = 0; k < 150; k++)
    {
      g_assert_true (isfinite (one->rms[k]) && one->rms[k] > 0.0f);
      g_assert_cmpfloat (four->rms[k], ==, one->rms[k]);
    }
  g_unlink (path);
  g_rmdir (dir);
}

static void
test_wide_rows (void)
{
  /* 1030 words a row: 7 rows a unit, so 19 rows make three row blocks; 150 channels make three
   * units of 64, the last of 22 */
  check_shape (1030, 19, 150);
}

static void
test_odd_sizes (void)
{
  /* neither the width nor the channel count a multiple of 4; one row block */
  check_shape (37, 29, 67);
  check_shape (5, 3, 2);
  check_shape (1, 1, 9);
}

static void
test_vector_blocks (void)
{
  /* whole AVX2 blocks (widths multiple of 8, channels of 16) with non-temporal stores */
  check_shape (64, 40, 128);
  /* channels a multiple of 4 but not of 8: the SSE2 code keeps its non-temporal stores */
  check_shape (24, 9, 132);
  /* a width of 8 k + 3 and 16 k + 5 channels: AVX2 blocks, and SSE2 and scalar edges */
  check_shape (43, 6, 85);
  /* whole AVX-512 blocks of 16 pixels by 16 channels, with a width of 16 k + 8 (an AVX2 block
   * left over) and 16 k + 13 (AVX2, SSE2 and scalar edges) */
  check_shape (48, 5, 64);
  check_shape (40, 7, 96);
  check_shape (61, 4, 83);
  /* spectra not a multiple of 64 bytes: the AVX-512 code stages its stores, in units of 256
   * channels (here one whole and one of 44) */
  check_shape (35, 3, 300);
  /* more staged shapes: three units (256, 256, 88), a last unit of 5 channels, and rows wide
   * enough for units of 128 channels */
  check_shape (18, 2, 600);
  check_shape (21, 2, 261);
  check_shape (2100, 2, 301);
  if (!efflux_cube_loader_uses_avx2 ())
    g_test_message ("no AVX2 on this processor: only the SSE2 code was checked");
  else if (!efflux_cube_loader_uses_avx512 ())
    g_test_message ("no AVX-512 on this processor: the SSE2 and AVX2 code were checked");
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/cube-reader/wide-rows", test_wide_rows);
  g_test_add_func ("/cube-reader/odd-sizes", test_odd_sizes);
  g_test_add_func ("/cube-reader/vector-blocks", test_vector_blocks);
  g_test_add_func ("/cube-reader/noise-threads", test_noise_threads);
  return g_test_run ();
}
