/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Context images (efflux-reproject.h): reading 2-D images with their own WCS and reprojecting
 * them onto a cube's sky grid, against astropy and scipy (tests/ref/reproject_ref.py):
 * astropy.wcs.WCS.pixel_to_world of the target's pixel centres, astropy.wcs.WCS.world_to_pixel in
 * the source's WCS (astropy's frame transformations), scipy.ndimage.map_coordinates(order=1,
 * mode='constant', cval=nan) on the source image. Three sources: TAN (ICRS) with smaller pixels
 * rotated by 30 degrees; SIN in galactic coordinates with degenerate FREQ and STOKES axes and a
 * smaller field than the cube's (NaN outside); the first plane of a 3-plane FK5 SIN cube whose
 * first axis is the latitude. The maps agree to 1e-4 relative, the source pixel positions to
 * 2e-3 pixel (efflux-sky.h states agreement with astropy's frames well under 1 mas). Refused: an
 * image with no WCS, one that does not overlap the cube; a cancelled reprojection. */
#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-reproject.h"
#include "efflux-test-util.h"

#define TNX 64
#define TNY 48

typedef struct
{
  char       *dir;
  EffluxCube *target;
} Fixture;

static void
fixture_set_up (Fixture       *f,
                gconstpointer  data)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (TNX, TNY, 2, 83.8221, -5.3911, 1.0, 0.0, 1.0,
                                                        230.538e9);
  g_autoptr(GError) error = NULL;
  g_autofree char *path = NULL;
  g_autofree char *out = NULL;
  EffluxCubeLoadOptions opt = { 0 };
  const char *args[2] = { NULL, NULL };

  f->dir = efflux_test_tmp_dir ("efflux-reproject");
  path = g_build_filename (f->dir, "target.fits", NULL);
  g_assert_nonnull (cube);
  g_assert_true (efflux_fits_write_cube (cube, path, NULL, &error));
  g_assert_no_error (error);
  opt.no_noise = TRUE;
  f->target = efflux_cube_load (path, &opt, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  args[0] = f->dir;
  out = efflux_test_python ("reproject_ref.py", args);
}

static void
fixture_tear_down (Fixture       *f,
                   gconstpointer  data)
{
  efflux_cube_free (f->target);
  efflux_test_remove_tree (f->dir);
  g_free (f->dir);
}

static void
check_source (Fixture    *f,
              const char *name,
              gsize       nx,
              gsize       ny,
              gsize       min_nan)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *path = g_strdup_printf ("%s/%s.fits", f->dir, name);
  g_autofree char *map_name = g_strdup_printf ("%s_map", name);
  g_autofree char *u_name = g_strdup_printf ("%s_u", name);
  g_autofree char *v_name = g_strdup_printf ("%s_v", name);
  g_autoptr(EffluxCube) src = efflux_image_load (path, 0, &error);
  g_autofree float *out = g_new (float, TNX * TNY);
  g_autofree double *ref = NULL, *ru = NULL, *rv = NULL;
  gsize n = 0, inside = 0, nan_both = 0, finite = 0;
  double max_rel = 0.0, max_dpix = 0.0;

  g_assert_no_error (error);
  g_assert_nonnull (src);
  g_assert_cmpuint (src->nx, ==, nx);
  g_assert_cmpuint (src->ny, ==, ny);
  g_assert_cmpuint (src->nchan, ==, 1);
  g_assert_true (efflux_reproject_image (src, f->target, out, &inside, NULL, &error));
  g_assert_no_error (error);

  ref = efflux_test_read_f64 (f->dir, map_name, &n);
  g_assert_cmpuint (n, ==, TNX * TNY);
  ru = efflux_test_read_f64 (f->dir, u_name, &n);
  g_assert_cmpuint (n, ==, TNX * TNY);
  rv = efflux_test_read_f64 (f->dir, v_name, &n);
  g_assert_cmpuint (n, ==, TNX * TNY);

  for (gsize y = 0; y < TNY; y++)
    for (gsize x = 0; x < TNX; x++)
      {
        gsize i = y * TNX + x;
        double ra, dec, u, v;

        /* the source pixel position: Efflux's WCS and frame chain against astropy's */
        g_assert_true (efflux_cube_pixel_to_icrs (f->target, x, y, &ra, &dec));
        g_assert_true (efflux_cube_icrs_to_pixel (src, ra, dec, &u, &v));
        max_dpix = MAX (max_dpix, MAX (fabs (u - ru[i]), fabs (v - rv[i])));
        g_assert_cmpfloat (fabs (u - ru[i]), <, 2e-3);
        g_assert_cmpfloat (fabs (v - rv[i]), <, 2e-3);

        if (isnan (ref[i]) != isnan (out[i]))
          {
            /* only a point within rounding of the image's edge may fall on either side */
            double edge = MIN (MIN (fabs (ru[i]), fabs (ru[i] - (nx - 1.0))),
                               MIN (fabs (rv[i]), fabs (rv[i] - (ny - 1.0))));

            g_test_message ("%s: pixel (%zu, %zu): Efflux %g, scipy %g, %.2e pixel from the edge",
                            name, x, y, out[i], ref[i], edge);
            g_assert_cmpfloat (edge, <, 2e-3);
            continue;
          }
        if (isnan (ref[i]))
          {
            nan_both++;
            continue;
          }
        finite++;
        max_rel = MAX (max_rel, fabs (out[i] - ref[i]) / fabs (ref[i]));
        efflux_test_assert_rel (out[i], ref[i], 1e-4);
      }
  g_test_message ("%s: %zu pixels compared, %zu NaN in both; largest relative difference %.2e, "
                  "largest source pixel difference %.2e", name, finite, nan_both, max_rel, max_dpix);
  g_assert_cmpuint (nan_both, >=, min_nan);
  g_assert_cmpuint (finite, >, TNX * TNY / 4);
  g_assert_cmpuint (inside, >=, finite);
}

static void
test_tan_rotated (Fixture       *f,
                  gconstpointer  data)
{
  check_source (f, "tan", 90, 80, 0);
}

static void
test_galactic_sin (Fixture       *f,
                   gconstpointer  data)
{
  /* 30 x 24 pixels of 2" hold 60" x 48"; the cube spans 64" x 48", rotated against galactic
   * axes by about 60 degrees: a good part of the map lies outside */
  check_source (f, "gal", 30, 24, TNX * TNY / 10);
}

static void
test_cube_first_plane (Fixture       *f,
                       gconstpointer  data)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *path = g_strdup_printf ("%s/cube.fits", f->dir);
  g_autoptr(EffluxCube) src = efflux_image_load (path, 0, &error);
  gboolean noted = FALSE;

  g_assert_no_error (error);
  g_assert_cmpint (src->frame, ==, EFFLUX_SKY_FK5);
  for (guint i = 0; i < src->notes->len; i++)
    noted |= strstr (g_ptr_array_index (src->notes, i), "first plane") != NULL;
  g_assert_true (noted);
  /* longitude (RA) is the second axis of the file: nx = NAXIS2 */
  check_source (f, "cube", 80, 70, 0);
}

static void
test_refused (Fixture       *f,
              gconstpointer  data)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *nowcs = g_strdup_printf ("%s/nowcs.fits", f->dir);
  g_autofree char *far = g_strdup_printf ("%s/far.fits", f->dir);
  g_autofree char *tan = g_strdup_printf ("%s/tan.fits", f->dir);
  g_autofree float *out = g_new (float, TNX * TNY);
  g_autoptr(EffluxCube) image = efflux_image_load (nowcs, 0, &error);
  g_autoptr(EffluxCube) far_image = NULL;
  g_autoptr(EffluxCube) tan_image = NULL;
  g_autoptr(GCancellable) cancellable = g_cancellable_new ();

  g_assert_null (image);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_test_message ("%s", error->message);
  g_assert_true (g_str_has_prefix (error->message, nowcs));
  g_assert_nonnull (strstr (error->message, "CTYPE"));
  g_clear_error (&error);

  far_image = efflux_image_load (far, 0, &error);
  g_assert_no_error (error);
  g_assert_false (efflux_reproject_image (far_image, f->target, out, NULL, NULL, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_test_message ("%s", error->message);
  g_assert_true (g_str_has_prefix (error->message, far));
  g_assert_nonnull (strstr (error->message, "CRVAL1/CRVAL2"));
  g_assert_nonnull (strstr (error->message, "does not overlap"));
  g_clear_error (&error);

  tan_image = efflux_image_load (tan, 0, &error);
  g_assert_no_error (error);
  g_cancellable_cancel (cancellable);
  g_assert_false (efflux_reproject_image (tan_image, f->target, out, NULL, cancellable, &error));
  g_assert_error (error, G_IO_ERROR, G_IO_ERROR_CANCELLED);
  g_clear_error (&error);

  /* a missing file */
  g_assert_null (efflux_image_load ("/nonexistent/ctx.fits", 0, &error));
  g_assert_true (g_str_has_prefix (error->message, "/nonexistent/ctx.fits: "));
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add ("/reproject/tan-rotated", Fixture, NULL, fixture_set_up, test_tan_rotated,
              fixture_tear_down);
  g_test_add ("/reproject/galactic-sin", Fixture, NULL, fixture_set_up, test_galactic_sin,
              fixture_tear_down);
  g_test_add ("/reproject/cube-first-plane", Fixture, NULL, fixture_set_up, test_cube_first_plane,
              fixture_tear_down);
  g_test_add ("/reproject/refused", Fixture, NULL, fixture_set_up, test_refused, fixture_tear_down);
  return g_test_run ();
}
