/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Benchmark of context images (efflux-reproject.h): a 600 x 600 TAN image of 0.7" pixels rotated by
 * 30 degrees, reprojected onto a 512 x 512 cube grid of 0.5" pixels (262144 target pixels, one
 * thread), once in the same frame (ICRS) and once from galactic coordinates; median of 5 runs in
 * CPU seconds. Against tests/bench/reproject_numpy.py doing the same with astropy.wcs
 * (pixel_to_world, world_to_pixel) and scipy.ndimage.map_coordinates(order=1), timed inside
 * python (imports left out). Needs EFFLUX_PYTHON and EFFLUX_SOURCE_ROOT (tests/meson.build). */
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include <wcslib/wcs.h>

#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-reproject.h"

#define RUNS 5

static double
cpu_seconds (void)
{
  struct timespec ts;

  clock_gettime (CLOCK_PROCESS_CPUTIME_ID, &ts);
  return ts.tv_sec + ts.tv_nsec * 1e-9;
}

static int
compare_double (const void *a,
                const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

static double
median_seconds (const EffluxCube *src,
                const EffluxCube *target,
                float            *out)
{
  double t[RUNS];

  for (int r = 0; r < RUNS; r++)
    {
      g_autoptr(GError) error = NULL;
      double t0 = cpu_seconds ();

      if (!efflux_reproject_image (src, target, out, NULL, NULL, &error))
        g_error ("%s", error->message);
      t[r] = cpu_seconds () - t0;
    }
  qsort (t, RUNS, sizeof t[0], compare_double);
  return t[RUNS / 2];
}

/* A 600 x 600 source image through a FITS file (so that it is read as the program reads it). */
static EffluxCube *
make_source (const char *dir,
             const char *name,
             gboolean    galactic)
{
  g_autoptr(EffluxCube) like = efflux_cube_new_simple (600, 600, 1, 83.8221, -5.3911, 0.7, 0.0, 1.0,
                                                        230.538e9);
  g_autofree float *img = g_new (float, 600 * 600);
  g_autofree char *path = g_build_filename (dir, name, NULL);
  g_autoptr(GError) error = NULL;
  const char *cards[] = { NULL };
  EffluxCube *src;
  double a = 30.0 * G_PI / 180.0;

  for (int i = 0; i < 600 * 600; i++)
    img[i] = 10.0f + (i % 600) * 0.01f + sinf (i / 600 * 0.05f);
  like->sky->pc[0] = cos (a);
  like->sky->pc[1] = -sin (a);
  like->sky->pc[2] = sin (a);
  like->sky->pc[3] = cos (a);
  if (galactic)
    {
      /* the same field in galactic coordinates: l, b of ICRS (83.8221, -5.3911) from astropy 5.2
       * (SkyCoord(...).galactic: 209.013743, -19.381582) */
      strcpy (like->sky->ctype[0], "GLON-TAN");
      strcpy (like->sky->ctype[1], "GLAT-TAN");
      like->sky->crval[0] = 209.013743;
      like->sky->crval[1] = -19.381582;
      like->frame = EFFLUX_SKY_GALACTIC;
    }
  like->sky->flag = 0;
  if (wcsset (like->sky) != 0)
    g_error ("wcsset");
  if (!efflux_fits_write_sky_image (like, img, "K", cards, path, &error))
    g_error ("%s", error->message);
  src = efflux_image_load (path, 0, &error);
  if (src == NULL)
    g_error ("%s", error->message);
  if (src->frame != (galactic ? EFFLUX_SKY_GALACTIC : EFFLUX_SKY_ICRS))
    g_error ("%s: the frame was not written as intended", path);
  return src;
}

int
main (int    argc,
      char **argv)
{
  const char *python = g_getenv ("EFFLUX_PYTHON");
  const char *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-bench-reproject-XXXXXX", &error);
  g_autoptr(EffluxCube) target = efflux_cube_new_simple (512, 512, 1, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                          230.538e9);
  g_autofree float *out = g_new (float, 512 * 512);
  g_autofree float *zeros = g_new0 (float, 512 * 512);
  g_autofree char *target_path = NULL;
  int status = 0;

  if (python == NULL || root == NULL || dir == NULL)
    {
      fprintf (stderr, "bench-reproject: EFFLUX_PYTHON and EFFLUX_SOURCE_ROOT are needed\n");
      return 1;
    }
  target_path = g_build_filename (dir, "target.fits", NULL);
  if (!efflux_fits_write_sky_image (target, zeros, "K", NULL, target_path, &error))
    g_error ("%s", error->message);
  for (int g = 0; g < 2; g++)
    {
      g_autoptr(EffluxCube) src = make_source (dir, g ? "gal.fits" : "icrs.fits", g);
      double t = median_seconds (src, target, out);
      gsize finite = 0;

      for (gsize i = 0; i < 512 * 512; i++)
        finite += !isnan (out[i]);
      /* the rotated 420" square covers the 256" map */
      if (finite != 512 * 512)
        g_error ("only %zu of the target pixels fall on the image", finite);

      printf ("reproject 600 x 600 %s TAN (rotated 30 deg) onto 512 x 512: median %.3f s CPU "
              "(%.2f us per target pixel)\n", g ? "galactic" : "ICRS", t, t / (512.0 * 512.0) * 1e6);
    }
  {
    g_autofree char *script = g_build_filename (root, "tests", "bench", "reproject_numpy.py", NULL);
    g_autofree char *out_text = NULL;
    const char *pargv[] = { python, script, dir, NULL };

    if (!g_spawn_sync (NULL, (char **) pargv, NULL, G_SPAWN_DEFAULT, NULL, NULL, &out_text, NULL,
                       &status, &error) || !g_spawn_check_wait_status (status, &error))
      g_error ("reproject_numpy.py: %s", error->message);
    printf ("%s", out_text);
  }
  g_unlink (target_path);
  {
    g_autofree char *a = g_build_filename (dir, "icrs.fits", NULL);
    g_autofree char *b = g_build_filename (dir, "gal.fits", NULL);

    g_unlink (a);
    g_unlink (b);
  }
  g_rmdir (dir);
  return 0;
}
