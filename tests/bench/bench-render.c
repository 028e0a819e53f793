/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Rendering helpers of the sky view, timed: display limits (percentiles) of a 1024 x 1024 map,
 * colour mapping through a stretch, and one coordinate grid; beside numpy.nanpercentile on the
 * same map (tests/bench/render_numpy.py, run with EFFLUX_PYTHON). Best and median of the runs. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdlib.h>

#include "../../src/render/efflux-colormap.h"
#include "../../src/render/efflux-skygrid.h"
#include "../../src/render/efflux-stretch.h"

#define RUNS 15

static int
cmp_double (const void *a,
            const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;
  return (x > y) - (x < y);
}

static void
report (const char *what,
        double     *ms,
        int         n)
{
  qsort (ms, n, sizeof (double), cmp_double);
  g_print ("%-44s best %8.3f ms   median %8.3f ms\n", what, ms[0], ms[n / 2]);
}

int
main (int    argc,
      char **argv)
{
  const gsize nx = 1024, ny = 1024, n = nx * ny;
  g_autofree float *map = g_new (float, n);
  g_autofree guint8 *rgba = g_malloc (n * 4);
  g_autoptr(GRand) rand = g_rand_new_with_seed (7);
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  double ms[RUNS], lo = 0, hi = 0;
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (512, 512, 1, 121.375, -12.48, 0.2, 0, 1, 230.538e9);

  for (gsize i = 0; i < n; i++)
    map[i] = g_rand_double (rand) < 0.05 ? NAN : (float) (-log (g_rand_double_range (rand, 1e-9, 1.0)));

  for (int r = 0; r < RUNS; r++)
    {
      gint64 t0 = g_get_monotonic_time ();
      g_assert_true (efflux_percentile_limits (map, n, 99.5, &lo, &hi));
      ms[r] = (g_get_monotonic_time () - t0) / 1000.0;
    }
  report ("percentile limits 99.5 %, 1024 x 1024", ms, RUNS);

  efflux_colormap_fill (EFFLUX_COLORMAP_CUBEHELIX, lut);
  for (int r = 0; r < RUNS; r++)
    {
      gint64 t0 = g_get_monotonic_time ();
      efflux_colormap_apply (lut, EFFLUX_STRETCH_ASINH, lo, hi, map, n, rgba);
      ms[r] = (g_get_monotonic_time () - t0) / 1000.0;
    }
  report ("colour map + asinh stretch, 1024 x 1024", ms, RUNS);

  for (int r = 0; r < RUNS; r++)
    {
      gint64 t0 = g_get_monotonic_time ();
      g_autoptr(EffluxSkyGrid) grid = efflux_skygrid_new (cube, -0.5, -0.5, 511.5, 511.5,
                                                          EFFLUX_SKYGRID_SEXAGESIMAL, 0, 0, 6);
      ms[r] = (g_get_monotonic_time () - t0) / 1000.0;
      g_assert_nonnull (grid);
    }
  report ("sexagesimal grid over 512 x 512 (TAN)", ms, RUNS);

  /* numpy on the same map */
  {
    const char *python = g_getenv ("EFFLUX_PYTHON");
    g_autofree char *dir = g_dir_make_tmp ("efflux-bench-render-XXXXXX", NULL);
    g_autofree char *path = g_build_filename (dir, "map.f32", NULL);
    g_autofree char *script = NULL;
    g_autofree char *out = NULL;
    g_autoptr(GError) error = NULL;
    int status = 0;

    if (python == NULL || *python == '\0')
      {
        g_printerr ("bench-render: EFFLUX_PYTHON is not set\n");
        return 1;
      }
    script = g_build_filename (g_getenv ("EFFLUX_SOURCE_ROOT"), "tests", "bench", "render_numpy.py", NULL);
    g_assert_true (g_file_set_contents (path, (const char *) map, (gssize) (n * sizeof (float)), NULL));
    {
      const char *args[] = { python, script, path, NULL };
      g_spawn_sync (NULL, (char **) args, NULL, G_SPAWN_DEFAULT, NULL, NULL, &out, NULL, &status, &error);
    }
    g_assert_no_error (error);
    g_unlink (path);
    g_rmdir (dir);
    g_assert_true (g_spawn_check_wait_status (status, NULL));
    g_print ("%s", out);
    g_print ("our limits: %.9g %.9g\n", lo, hi);
  }
  return 0;
}
