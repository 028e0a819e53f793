/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (run under xvfb-run): loading cubes in the window.
 *   - one read serves the map and the measurement: the window's cube and the document's cube of
 *     the demo's shown tracer are the same object, and the cube store read each file once;
 *   - a cancelled load (a ~200 MiB synthetic cube opened as a bare cube, then as the cube of a
 *     dossier, cancelled through the window's cancel action while its progress bar moves) leaves
 *     the window as it was: the same document, title, cube and map, no cube kept in the store,
 *     and the process's resident memory back to what it was before the load;
 *   - a load that fails (a file cut short) shows a message and keeps the dossier. */
#include "config.h"

#include <gtk/gtk.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <glib/gstdio.h>

#include "efflux-application.h"
#include "efflux-cube-store.h"
#include "efflux-cut-tools.h"
#include "efflux-document.h"
#include "efflux-fitsout.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

#define BIG_NX 256
#define BIG_NY 256
#define BIG_NCHAN 800        /* 256 x 256 x 800 float32 = 200 MiB */

static gboolean
is_loading (gpointer window)
{
  return efflux_window_is_loading (window);
}

static gboolean
is_measuring (gpointer window)
{
  EffluxDocument *document = efflux_window_get_document (window);

  return document == NULL || efflux_document_is_measuring (document)
         || efflux_document_get_result (document) == NULL;
}

/* The Cut view's tracers come from the same store: wait until its cut is made too. */
static gboolean
is_cutting (gpointer window)
{
  EffluxCutTools *tools = EFFLUX_CUT_TOOLS (efflux_ui_test_find_widget (GTK_WIDGET (window),
                                                                     EFFLUX_TYPE_CUT_TOOLS));

  return tools != NULL && efflux_cut_tools_get_busy (tools);
}

/* Resident memory of this process, KiB (/proc/self/status VmRSS). */
static guint64
rss_kib (void)
{
  g_autofree char *status = NULL;
  const char *p;

  g_assert_true (g_file_get_contents ("/proc/self/status", &status, NULL, NULL));
  p = strstr (status, "VmRSS:");
  g_assert_nonnull (p);
  return g_ascii_strtoull (p + 6, NULL, 10);
}

typedef struct
{
  EffluxDocument   *document;
  const EffluxCube *cube;
  char             *title;
  double            lo, hi;
  guint             n_store;
} Shown;

static void
shown_take (Shown        *shown,
            EffluxWindow *window)
{
  shown->document = efflux_window_get_document (window);
  shown->cube = efflux_window_get_cube (window);
  shown->title = g_strdup (gtk_window_get_title (GTK_WINDOW (window)));
  g_assert_true (efflux_sky_view_get_limits (efflux_window_get_sky_view (window), &shown->lo, &shown->hi));
  shown->n_store = efflux_cube_store_count ();
}

static void
shown_assert_same (const Shown  *shown,
                   EffluxWindow *window)
{
  double lo, hi;

  g_assert_true (efflux_window_get_document (window) == shown->document);
  g_assert_true (efflux_window_get_cube (window) == shown->cube);
  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (window)), ==, shown->title);
  g_assert_true (efflux_sky_view_has_map (efflux_window_get_sky_view (window)));
  g_assert_true (efflux_sky_view_get_limits (efflux_window_get_sky_view (window), &lo, &hi));
  g_assert_cmpfloat (lo, ==, shown->lo);
  g_assert_cmpfloat (hi, ==, shown->hi);
  g_assert_cmpuint (efflux_cube_store_count (), ==, shown->n_store);
}

/* Open path, cancel (the window's cancel action, as Escape does) as soon as the progress bar has
 * moved, and wait until the load has ended. Returns the fraction at the moment of the cancel. */
static double
open_and_cancel (EffluxWindow *window,
                 const char   *path,
                 guint64      *peak_kib)
{
  g_autoptr(GFile) file = g_file_new_for_path (path);
  GtkProgressBar *bar = GTK_PROGRESS_BAR (efflux_ui_test_find_widget (GTK_WIDGET (window),
                                                                     GTK_TYPE_PROGRESS_BAR));
  gint64 deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;
  double fraction;

  g_assert_nonnull (bar);
  efflux_window_open (window, file);
  g_assert_true (efflux_window_is_loading (window));
  while (gtk_progress_bar_get_fraction (bar) <= 0.0 && efflux_window_is_loading (window)
         && g_get_monotonic_time () < deadline)
    {
      g_main_context_iteration (NULL, FALSE);
      *peak_kib = MAX (*peak_kib, rss_kib ());
      g_usleep (200);
    }
  /* the load must still be running: a machine that reads 200 MiB before the first progress
   * report reaches the main loop makes this test fail rather than pass without a cancel */
  g_assert_true (efflux_window_is_loading (window));
  fraction = gtk_progress_bar_get_fraction (bar);
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "win.cancel", NULL));
  efflux_ui_test_iterate_while (is_loading, window, 60);
  g_assert_cmpstr (efflux_window_get_status (window), ==, "Loading cancelled.");
  return fraction;
}

static void
test_load (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GFile) demo_file = NULL;
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-load-XXXXXX", &error);
  g_autofree char *big = NULL, *dossier_path = NULL, *dossier_text = NULL, *cut = NULL;
  EffluxWindow *window;
  const EffluxDossier *d;
  const char *shown_id = NULL;
  Shown shown = { 0 };
  guint64 before_kib, after_kib, peak_kib;
  guint reads;

  g_assert_no_error (error);
  g_assert_nonnull (demo);

  /* the demo: its shown tracer is read once, for the map and for the measurement */
  window = efflux_window_new (NULL);
  gtk_window_set_default_size (GTK_WINDOW (window), 1200, 740);
  gtk_window_present (GTK_WINDOW (window));
  demo_file = g_file_new_for_path (demo);
  reads = efflux_cube_store_reads ();
  efflux_window_open (window, demo_file);
  efflux_ui_test_iterate_while (is_loading, window, 60);
  efflux_ui_test_iterate_while (is_measuring, window, 120);
  efflux_ui_test_iterate_while (is_cutting, window, 120);
  g_assert_null (efflux_document_get_measure_error (efflux_window_get_document (window)));
  d = efflux_document_get_dossier (efflux_window_get_document (window));
  for (guint i = 0; i < d->cubes->len && shown_id == NULL; i++)
    if (((EffluxDossierCube *) g_ptr_array_index (d->cubes, i))->role == EFFLUX_CUBE_ROLE_TRACER)
      shown_id = ((EffluxDossierCube *) g_ptr_array_index (d->cubes, i))->id;
  g_assert_nonnull (shown_id);
  g_assert_nonnull (efflux_window_get_cube (window));
  g_assert_true (efflux_document_get_cube (efflux_window_get_document (window), shown_id)
                 == efflux_window_get_cube (window));
  {
    /* every file read once: as many reads as distinct cubes in the store */
    guint n = efflux_cube_store_count ();

    g_assert_cmpuint (n, >=, 1);
    g_assert_cmpuint (efflux_cube_store_reads () - reads, ==, n);
  }
  shown_take (&shown, window);

  /* a large cube, written here and freed before the load */
  big = g_build_filename (dir, "big.fits", NULL);
  {
    g_autoptr(EffluxCube) cube = efflux_cube_new_simple (BIG_NX, BIG_NY, BIG_NCHAN, 83.8, -5.4, 0.5,
                                                         -40.0, 0.1, 230.538e9);
    guint64 s = 12345;

    g_assert_nonnull (cube);
    for (gsize i = 0; i < (gsize) BIG_NX * BIG_NY * BIG_NCHAN; i++)
      {
        s = s * 6364136223846793005ULL + 1442695040888963407ULL;   /* Knuth's MMIX LCG */
        cube->data[i] = (float) ((s >> 40) & 0xffff) / 65536.0f - 0.5f;
      }
    g_assert_true (efflux_fits_write_cube (cube, big, NULL, &error));
    g_assert_no_error (error);
  }
  dossier_path = g_build_filename (dir, "big.efflux", NULL);
  dossier_text = g_strdup_printf ("[Source]\nname=Big\nra-deg=83.8\ndec-deg=-5.4\ndistance-pc=400\n"
                                  "vsys-kms=0\n[Assumptions]\ntex-k=30\nco-abundance=1e-4\n[Cube co]\npath=big.fits\nline=12CO 2-1\nrole=tracer\n");
  g_assert_true (g_file_set_contents (dossier_path, dossier_text, -1, &error));
  g_assert_no_error (error);
  /* settle the allocator, then the baseline */
  for (int i = 0; i < 20; i++)
    g_main_context_iteration (NULL, FALSE);
  before_kib = rss_kib ();

  /* 1. the big cube as a bare cube, cancelled */
  peak_kib = before_kib;
  g_test_message ("bare cube cancelled at %.2f of the load", open_and_cancel (window, big, &peak_kib));
  shown_assert_same (&shown, window);
  after_kib = rss_kib ();
  g_test_message ("resident memory before %.1f MiB, peak %.1f MiB, after the cancel %.1f MiB",
                  before_kib / 1024.0, peak_kib / 1024.0, after_kib / 1024.0);
  /* the cube's 200 MiB are given back (large blocks are mmap'd and unmapped by free) */
  g_assert_cmpuint (after_kib, <, before_kib + 24 * 1024);

  /* 2. a dossier whose cube is the big one, cancelled: the demo stays the window's dossier */
  peak_kib = before_kib;
  g_test_message ("dossier cancelled at %.2f of the load", open_and_cancel (window, dossier_path, &peak_kib));
  shown_assert_same (&shown, window);
  after_kib = rss_kib ();
  g_test_message ("resident memory before %.1f MiB, peak %.1f MiB, after the cancel %.1f MiB",
                  before_kib / 1024.0, peak_kib / 1024.0, after_kib / 1024.0);
  g_assert_cmpuint (after_kib, <, before_kib + 24 * 1024);

  /* 3. a file cut short: a message, and the dossier stays */
  cut = g_build_filename (dir, "cut.fits", NULL);
  {
    /* the header and a few blocks of data of the big cube */
    g_autofree char *data = g_malloc (2880 * 40);
    FILE *in = fopen (big, "rb");

    g_assert_nonnull (in);
    g_assert_cmpuint (fread (data, 1, 2880 * 40, in), ==, 2880 * 40);
    fclose (in);
    g_assert_true (g_file_set_contents (cut, data, 2880 * 40, &error));
    g_assert_no_error (error);
  }
  {
    g_autoptr(GFile) file = g_file_new_for_path (cut);

    efflux_window_open (window, file);
    efflux_ui_test_iterate_while (is_loading, window, 60);
  }
  g_assert_nonnull (efflux_window_get_error (window));
  g_assert_nonnull (strstr (efflux_window_get_error (window), "cut.fits"));
  g_test_message ("error shown: %s", efflux_window_get_error (window));
  shown_assert_same (&shown, window);

  /* the demo can still be edited and measured */
  g_assert_true (efflux_window_get_document (window) == shown.document);

  gtk_window_destroy (GTK_WINDOW (window));
  for (int i = 0; i < 20; i++)
    g_main_context_iteration (NULL, FALSE);
  g_free (shown.title);
  g_assert_cmpint (g_remove (big), ==, 0);
  g_assert_cmpint (g_remove (cut), ==, 0);
  g_assert_cmpint (g_remove (dossier_path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/load/cancel-and-share", test_load);
  return g_test_run ();
}
