/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Loading a channel subset (EffluxCubeLoadOptions.channel_subset): the cube read with a velocity
 * range must equal the channels of that range in the whole cube, voxel for voxel, with the same
 * velocities and per-channel noise, on the float32 fast path (several row blocks and ragged
 * 16-channel chunks) and on the CFITSIO path (BITPIX 16), for both channel orderings. The whole
 * cube read is itself checked against astropy in test-cube-astropy.c; here the reference is the
 * whole cube written and read back. */
#include "config.h"

#include <math.h>
#include <string.h>

#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-test-util.h"

#define NX 70
#define NY 130
#define NCHAN 150

static EffluxCube *
make_cube (double dv)
{
  EffluxCube *cube = efflux_cube_new_simple (NX, NY, NCHAN, 52.26, 31.25, 2.0,
                                             dv > 0 ? -10.0 : 27.25, dv, 115.2712018e9);
  g_autoptr(GRand) rand = g_rand_new_with_seed (4242);

  g_assert_nonnull (cube);
  for (gsize i = 0; i < (gsize) NX * NY * NCHAN; i++)
    cube->data[i] = (float) (g_rand_double_range (rand, -1.0, 1.0) + (i % 97 == 0 ? 5.0 : 0.0));
  /* blanks in a few places */
  for (gsize i = 0; i < (gsize) NX * NY * NCHAN; i += 1009)
    cube->data[i] = NAN;
  cube->bmaj_arcsec = cube->bmin_arcsec = 6.0;
  cube->has_beam = TRUE;
  return cube;
}

static void
check_subset (const char *path,
              double      v1,
              double      v2,
              gboolean    expect_subset)
{
  g_autoptr(GError) error = NULL;
  EffluxCubeLoadOptions whole_opt = { 0 };
  EffluxCubeLoadOptions sub_opt = { 0 };
  g_autoptr(EffluxCube) whole = NULL;
  g_autoptr(EffluxCube) sub = NULL;
  gsize kb = 0, ke = 0;

  whole = efflux_cube_load (path, &whole_opt, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  sub_opt.channel_subset = TRUE;
  sub_opt.v1_kms = v1;
  sub_opt.v2_kms = v2;
  sub = efflux_cube_load (path, &sub_opt, NULL, NULL, NULL, &error);
  g_assert_no_error (error);

  if (!expect_subset)
    {
      g_assert_cmpuint (sub->nchan, ==, whole->nchan);
      kb = 0;
      ke = whole->nchan;
    }
  else
    {
      g_assert_true (efflux_cube_channel_range (whole, v1, v2, &kb, &ke));
      g_assert_cmpuint (ke - kb, <, whole->nchan);
      g_assert_cmpuint (sub->nchan, ==, ke - kb);
    }
  g_assert_cmpuint (sub->nx, ==, whole->nx);
  g_assert_cmpuint (sub->ny, ==, whole->ny);
  for (gsize k = 0; k < sub->nchan; k++)
    {
      g_assert_cmpfloat (sub->velocity[k], ==, whole->velocity[kb + k]);
      g_assert_cmpfloat (sub->k_per_unit[k], ==, whole->k_per_unit[kb + k]);
      /* the noise is estimated channel by channel: the same numbers */
      g_assert_cmpfloat (sub->rms[k], ==, whole->rms[kb + k]);
      g_assert_cmpfloat (sub->rms[k], >, 0.0f);
    }
  for (gsize y = 0; y < sub->ny; y++)
    for (gsize x = 0; x < sub->nx; x++)
      {
        const float *s = efflux_cube_spectrum (sub, x, y);
        const float *w = efflux_cube_spectrum (whole, x, y) + kb;

        for (gsize k = 0; k < sub->nchan; k++)
          {
            if (isnan (w[k]))
              g_assert_true (isnan (s[k]));
            else
              g_assert_cmpfloat (s[k], ==, w[k]);
          }
      }
  /* the range as callers find it on the loaded cube: all of its channels */
  if (expect_subset)
    {
      gsize sb = 0, se = 0;

      g_assert_true (efflux_cube_channel_range (sub, v1, v2, &sb, &se));
      g_assert_cmpuint (sb, ==, 0);
      g_assert_cmpuint (se, ==, sub->nchan);
    }
}

static void
run_case (int    bitpix,
          double dv)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-test-subset");
  g_autofree char *path = NULL;
  g_autoptr(EffluxCube) cube = make_cube (dv);
  EffluxFitsCubeOptions wopt = { EFFLUX_FITS_SPECTRAL_VRAD, FALSE, bitpix, NULL, NULL };

  g_assert_no_error (error);
  path = g_build_filename (dir, "cube.fits", NULL);
  g_assert_true (efflux_fits_write_cube (cube, path, &wopt, &error));
  g_assert_no_error (error);

  /* channel centres run -10 .. 27.25 km/s in steps of 0.25 */
  check_subset (path, -3.0, 5.0, TRUE);        /* 33 channels: ragged chunks of 16 */
  check_subset (path, 5.0, -3.0, TRUE);        /* either order of the ends */
  check_subset (path, -20.0, -9.9, TRUE);      /* the first channel alone */
  check_subset (path, 27.2, 40.0, TRUE);       /* the last one alone */
  check_subset (path, -2.0, -2.0, TRUE);       /* exactly one channel centre */
  check_subset (path, -100.0, 100.0, FALSE);   /* all channels */
  check_subset (path, 50.0, 60.0, FALSE);      /* none: all kept, the caller says what is wrong */

  g_unlink (path);
  g_rmdir (dir);
}

static void
test_float32_rising (void)
{
  run_case (-32, 0.25);
}

static void
test_float32_falling (void)
{
  run_case (-32, -0.25);
}

static void
test_int16 (void)
{
  run_case (16, 0.25);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/cube-subset/float32-rising", test_float32_rising);
  g_test_add_func ("/cube-subset/float32-falling", test_float32_falling);
  g_test_add_func ("/cube-subset/int16", test_int16);
  return g_test_run ();
}
