/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Figures timed: every view of the demo source (efflux-cli synth sample-data/demo.recipe, a
 * 96 x 96 x 100 cube) as PNG at 300 dpi, PDF and SVG, 120 mm wide, and the five-page report.
 * Each figure is drawn twice (once to find its height, once to the file); the measurement and
 * maps are computed inside the timing, the cube loading is not. Best and median of the runs and
 * the file sizes. No numpy counterpart: nothing comparable to time there. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <stdlib.h>

#include "efflux-dossier.h"
#include "efflux-figure.h"

#define RUNS 5

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
        int         n,
        const char *path)
{
  GStatBuf st;

  qsort (ms, n, sizeof (double), cmp_double);
  g_assert_cmpint (g_stat (path, &st), ==, 0);
  g_print ("%-32s best %8.1f ms   median %8.1f ms   %8.1f KiB\n", what, ms[0], ms[n / 2],
           st.st_size / 1024.0);
  g_assert_cmpint (g_remove (path), ==, 0);
}

int
main (int    argc,
      char **argv)
{
  const char *cli = g_getenv ("EFFLUX_CLI"), *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  const char *formats[] = { "png", "pdf", "svg" };
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-bench-figure-XXXXXX", &error);
  g_autofree char *recipe = NULL;
  g_autofree char *src = NULL;
  g_autofree char *dossier_path = NULL;
  g_autofree char *text = NULL;
  g_autoptr (EffluxDossier) dossier = NULL;
  double ms[RUNS];
  int status = 0;

  g_assert_no_error (error);
  g_assert_nonnull (cli);
  g_assert_nonnull (root);
  recipe = g_build_filename (root, "sample-data", "demo.recipe", NULL);
  {
    const char *a[] = { cli, "synth", recipe, "-o", dir, NULL };

    g_assert_true (g_spawn_sync (NULL, (char **) a, NULL, G_SPAWN_STDOUT_TO_DEV_NULL, NULL, NULL, NULL,
                                 NULL, &status, &error));
    g_assert_no_error (error);
    g_assert_true (g_spawn_check_wait_status (status, NULL));
  }
  src = g_build_filename (root, "sample-data", "demo.efflux", NULL);
  dossier_path = g_build_filename (dir, "demo.efflux", NULL);
  g_assert_true (g_file_get_contents (src, &text, NULL, NULL));
  g_assert_true (g_file_set_contents (dossier_path, text, -1, NULL));
  dossier = efflux_dossier_load (dossier_path, &error);
  g_assert_no_error (error);

  for (int v = 0; v < EFFLUX_N_FIGURE_VIEWS; v++)
    for (gsize f = 0; f < G_N_ELEMENTS (formats); f++)
      {
        g_autofree char *path = g_strdup_printf ("%s/fig.%s", dir, formats[f]);
        g_autofree char *what = g_strdup_printf ("%s %s", efflux_figure_view_to_string (v), formats[f]);

        for (int r = 0; r < RUNS; r++)
          {
            /* A new figure each run: the measurement is part of the cost. */
            g_autoptr (EffluxFigure) figure = efflux_figure_new (dossier, &error);
            EffluxFigureOptions o;
            gint64 t0;

            g_assert_no_error (error);
            efflux_figure_options_init (&o);
            o.view = v;
            t0 = g_get_monotonic_time ();
            g_assert_true (efflux_figure_write (figure, &o, path, &error));
            ms[r] = (g_get_monotonic_time () - t0) / 1000.0;
            g_assert_no_error (error);
          }
        report (what, ms, RUNS, path);
      }
  {
    g_autofree char *path = g_strdup_printf ("%s/report.pdf", dir);

    for (int r = 0; r < RUNS; r++)
      {
        g_autoptr (EffluxFigure) figure = efflux_figure_new (dossier, &error);
        gint64 t0;

        g_assert_no_error (error);
        t0 = g_get_monotonic_time ();
        g_assert_true (efflux_figure_write_report (figure, path, &error));
        ms[r] = (g_get_monotonic_time () - t0) / 1000.0;
        g_assert_no_error (error);
      }
    report ("report pdf (5 pages)", ms, RUNS, path);
  }
  {
    g_autoptr (GDir) d = g_dir_open (dir, 0, NULL);
    const char *name;

    while ((name = g_dir_read_name (d)) != NULL)
      {
        g_autofree char *p = g_build_filename (dir, name, NULL);
        g_remove (p);
      }
    g_rmdir (dir);
  }
  return 0;
}
