/* SPDX-License-Identifier: GPL-3.0-or-later */
/* How long the demo scenario takes to generate (it is built at build time; target < 2 s):
 * the model, each cube's radiative transfer + beam + noise, and the whole run with the writes. */

#include "efflux-synth.h"

#include <glib/gstdio.h>
#include <stdio.h>

static double
now (void)
{
  return (double) g_get_monotonic_time () / 1e6;
}

int
main (void)
{
  const char *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_autofree char *path = NULL;
  g_autofree char *dir = NULL;
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) recipe = NULL;
  double best_model = G_MAXDOUBLE, best_render = G_MAXDOUBLE, best_run = G_MAXDOUBLE;

  if (root == NULL)
    {
      fprintf (stderr, "bench-synth: EFFLUX_SOURCE_ROOT is not set\n");
      return 1;
    }
  path = g_build_filename (root, "sample-data", "demo.recipe", NULL);
  recipe = efflux_synth_recipe_load (path, &error);
  if (recipe == NULL)
    {
      fprintf (stderr, "bench-synth: %s\n", error->message);
      return 1;
    }
  dir = g_dir_make_tmp ("efflux-bench-synth-XXXXXX", &error);
  if (dir == NULL)
    {
      fprintf (stderr, "bench-synth: %s\n", error->message);
      return 1;
    }

  for (int rep = 0; rep < 5; rep++)
    {
      double t0 = now (), t1, t2, t3;
      g_autoptr (EffluxSynthModel) model = efflux_synth_model_new (recipe, &error);

      if (model == NULL)
        {
          fprintf (stderr, "bench-synth: %s\n", error->message);
          return 1;
        }
      t1 = now ();
      for (guint c = 0; c < efflux_synth_recipe_n_cubes (recipe); c++)
        {
          g_autoptr (EffluxCube) cube = efflux_synth_render (recipe, model, c, &error);
          if (cube == NULL)
            {
              fprintf (stderr, "bench-synth: %s\n", error->message);
              return 1;
            }
        }
      t2 = now ();
      if (!efflux_synth_run (recipe, dir, &error))
        {
          fprintf (stderr, "bench-synth: %s\n", error->message);
          return 1;
        }
      t3 = now ();
      best_model = MIN (best_model, t1 - t0);
      best_render = MIN (best_render, t2 - t1);
      best_run = MIN (best_run, t3 - t2);
    }

  printf ("demo scenario: 96 x 96 x 100 voxels, %u cubes (best of 5)\n", efflux_synth_recipe_n_cubes (recipe));
  printf ("  model (lobes, ambient, jet):              %8.3f s\n", best_model);
  printf ("  transfer + beam + noise, all cubes:        %8.3f s\n", best_render);
  printf ("  whole run (model, cubes, FITS, truth, dossier): %8.3f s (target < 2 s)\n", best_run);

  {
    g_autoptr (GDir) d = g_dir_open (dir, 0, NULL);
    const char *name;
    while (d != NULL && (name = g_dir_read_name (d)) != NULL)
      {
        g_autofree char *p = g_build_filename (dir, name, NULL);
        g_unlink (p);
      }
  }
  g_rmdir (dir);
  return best_run < 2.0 ? 0 : 1;
}
