/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Benchmark: what the autosave costs the UI thread (efflux-autosave.h).
 *
 * On the main thread an autosave makes the dossier's text (efflux_dossier_to_data) and hands it
 * to a GTask worker, which writes it atomically with its fsync (efflux_recovery_write_data). For
 * the demo dossier and for larger invented ones (many lobes, many vertices) this prints the median
 * of: the main-thread part as the autosave measures it in a real cycle (edit, timer, write), the
 * text alone, one edit through the document (which parses the whole dossier again: the cost the
 * user already pays per edit), and the worker's write. Timings on a shared machine are noisy: the
 * ratios of figures taken back to back are the ones to read. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>

#include "efflux-application.h"
#include "efflux-autosave.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-recovery.h"

static int
cmp_double (const void *a,
            const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

static double
median (double *v,
        guint   n)
{
  qsort (v, n, sizeof *v, cmp_double);
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

/* The demo dossier with n_extra more lobes of n_vertices each (a circle around the source). */
static char *
make_dossier (const char *dir,
              const char *demo,
              guint       n_extra,
              guint       n_vertices)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) d = efflux_dossier_load (demo, &error);
  g_autofree char *name = g_strdup_printf ("bench-%u-%u.efflux", n_extra, n_vertices);
  char *path = g_build_filename (dir, name, NULL);

  g_assert_no_error (error);
  for (guint l = 0; l < n_extra; l++)
    {
      g_autofree char *group = g_strdup_printf ("Lobe extra-%u", l);
      g_autoptr(GString) poly = g_string_new (NULL);

      for (guint k = 0; k < n_vertices; k++)
        {
          double t = 2 * G_PI * k / n_vertices;
          char ra[G_ASCII_DTOSTR_BUF_SIZE], dec[G_ASCII_DTOSTR_BUF_SIZE];

          g_ascii_formatd (ra, sizeof ra, "%.6f", d->ra_deg + 0.001 * (1 + l % 7) * cos (t));
          g_ascii_formatd (dec, sizeof dec, "%.6f", d->dec_deg + 0.001 * (1 + l % 7) * sin (t));
          g_string_append_printf (poly, "%s%s,%s", k ? ";" : "", ra, dec);
        }
      g_key_file_set_value (d->keyfile, group, "kind", l % 2 ? "red" : "blue");
      g_key_file_set_value (d->keyfile, group, "cube", "co");
      g_key_file_set_value (d->keyfile, group, "polygon", poly->str);
      g_key_file_set_value (d->keyfile, group, "velocity-kms", l % 2 ? "7.6;22.5" : "-13.5;3.2");
    }
  g_assert_true (efflux_dossier_save_as (d, path, &error));
  g_assert_no_error (error);
  return path;
}

static gboolean
wake (gpointer data)
{
  *(gboolean *) data = TRUE;
  return G_SOURCE_REMOVE;
}

static void
run (const char *path,
     const char *label)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDocument) document = efflux_document_load (path, &error);
  g_autoptr(EffluxAutosave) autosave = NULL;
  enum { N = 31, CYCLES = 5 };
  double text_us[N], edit_us[N], write_us[N], main_us[CYCLES];
  gsize length = 0;

  g_assert_no_error (error);
  {
    g_autofree char *data = efflux_dossier_to_data ((EffluxDossier *) efflux_document_get_dossier (document),
                                                    &length);
  }
  for (guint i = 0; i < N; i++)
    {
      gint64 t0 = g_get_monotonic_time ();
      g_autofree char *data = NULL;

      g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -13.5 + 0.01 * i, 3.2, 0, &error));
      edit_us[i] = (double) (g_get_monotonic_time () - t0);
      t0 = g_get_monotonic_time ();
      data = efflux_dossier_to_data ((EffluxDossier *) efflux_document_get_dossier (document), NULL);
      text_us[i] = (double) (g_get_monotonic_time () - t0);
      t0 = g_get_monotonic_time ();
      g_assert_true (efflux_recovery_write_data (path, data, &error));
      write_us[i] = (double) (g_get_monotonic_time () - t0);
    }
  /* real cycles: an edit, the timer, the hand-over, the worker's write */
  autosave = efflux_autosave_new (document, NULL);
  for (guint c = 0; c < CYCLES; c++)
    {
      guint before = efflux_autosave_get_n_writes (autosave);
      gint64 deadline = g_get_monotonic_time () + 10 * G_USEC_PER_SEC;

      g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -12.0 - 0.01 * c, 3.2, 0, &error));
      while (efflux_autosave_get_n_writes (autosave) == before && g_get_monotonic_time () < deadline)
        {
          gboolean done = FALSE;

          g_timeout_add (5, wake, &done);
          while (!done)
            g_main_context_iteration (NULL, TRUE);
        }
      g_assert_cmpuint (efflux_autosave_get_n_writes (autosave), ==, before + 1);
      main_us[c] = (double) efflux_autosave_get_main_us (autosave);
    }
  efflux_autosave_discard (autosave);
  {
    double m = median (main_us, CYCLES), t = median (text_us, N), e = median (edit_us, N);
    double w = median (write_us, N);

    printf ("%-34s %9zu bytes: autosave on the UI thread %8.3f ms (text %8.3f ms); "
            "one edit %8.3f ms; worker's write %8.3f ms; text/edit %.3f\n",
            label, length, m / 1000, t / 1000, e / 1000, w / 1000, t / e);
  }
  g_assert_true (efflux_recovery_remove (path, &error));
}

int
main (int    argc,
      char **argv)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *dir = g_dir_make_tmp ("efflux-bench-autosave-XXXXXX", &error);
  struct { guint lobes, vertices; const char *label; } cases[] = {
    { 0, 0, "demo (2 lobes)" },
    { 20, 100, "20 more lobes of 100 vertices" },
    { 100, 500, "100 more lobes of 500 vertices" },
  };

  g_assert_no_error (error);
  g_assert_nonnull (demo);
  g_setenv ("EFFLUX_AUTOSAVE", "1", TRUE);
  printf ("medians (31 runs; real autosave cycles: 5), machine shared with other work\n");
  for (guint i = 0; i < G_N_ELEMENTS (cases); i++)
    {
      g_autofree char *path = make_dossier (dir, demo, cases[i].lobes, cases[i].vertices);

      run (path, cases[i].label);
      g_assert_no_errno (g_unlink (path));
    }
  g_assert_no_errno (g_rmdir (dir));
  return 0;
}
