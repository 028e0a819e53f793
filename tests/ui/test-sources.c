/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (under xvfb-run): the Sources list of a sample folder (src/app/efflux-sources.c).
 *
 * A temporary folder holds three dossiers in the three states the core defines (efflux-sample.h:
 * no [Status]; [Status] measured; [Status] reviewed-by) and a small cube they all name. Opened as
 * the window's sample (`efflux FOLDER` goes through efflux_window_open), the list shows three rows
 * in the core's order (efflux_sample_scan, read here independently) with each source's name and
 * state; activating a row opens that dossier in the window; "Mark as measured" records
 * [Status] measured through the document (one undoable command, shown on the row at once, on disk
 * after a save); with unsaved changes, activating another row asks first; a dossier written into
 * the folder by someone else appears (GFileMonitor); the folder is remembered in the settings. */
#include "config.h"

#include <gtk/gtk.h>
#include <glib/gstdio.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-fitsout.h"
#include "efflux-sample.h"
#include "efflux-settings.h"
#include "efflux-sources.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

#define REST_12CO21 230.538e9

static gboolean
window_loaded (gpointer data)
{
  return !efflux_window_is_loading (data);
}

static gboolean
sources_scanned (gpointer data)
{
  return !efflux_sources_is_scanning (data);
}

static void
write_text (const char *dir,
            const char *name,
            const char *text)
{
  g_autofree char *path = g_build_filename (dir, name, NULL);
  g_autoptr(GError) error = NULL;

  g_assert_true (g_file_set_contents (path, text, -1, &error));
  g_assert_no_error (error);
}

static char *
dossier_text (const char *name,
              const char *status)
{
  return g_strdup_printf ("# %s: a comment that must survive\n"
                          "[Source]\nname=%s\nra-deg=83.8\ndec-deg=-5.4\ndistance-pc=400\nvsys-kms=0\n"
                          "[Assumptions]\ntex-k=20\nco-abundance=1e-4\nmc-samples=0\n"
                          "[Cube co]\npath=co.fits\nline=12CO 2-1\nrms-k=0.1\n%s",
                          name, name, status);
}

static char *
status_value (EffluxDocument *document,
              const char     *key)
{
  return g_key_file_get_value (efflux_document_get_dossier (document)->keyfile, "Status", key, NULL);
}

static void
test_sample (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-sources-XXXXXX", &error);
  g_autofree char *cube_path = NULL;
  g_autofree char *t1 = dossier_text ("Source Alpha", "");
  g_autofree char *t2 = dossier_text ("Source Beta", "[Status]\nmeasured=2026-12-01T10:00:00Z\nmeasured-with=0.1.0\n");
  g_autofree char *t3 = dossier_text ("Source Gamma", "[Status]\nmeasured=2026-12-01T10:00:00Z\nreviewed-by=A. Colleague\nreviewed=2026-12-02T08:30:00Z\n");
  g_autofree char *t4 = dossier_text ("Source Delta", "");
  g_autoptr(GPtrArray) core = NULL;
  g_autoptr(GFile) folder = NULL;
  g_autoptr(EffluxCube) cube = NULL;
  g_autofree char *on_disk_before = NULL;
  g_autofree char *on_disk_after = NULL;
  EffluxWindow *window;
  EffluxSources *sources;
  EffluxDocument *document;
  EffluxSourceState state;
  GtkWindow *dialog;
  guint n_undo;

  g_assert_no_error (error);
  cube = efflux_cube_new_simple (24, 20, 8, 83.8, -5.4, 2.0, -3.5, 1.0, REST_12CO21);
  for (gsize i = 0; i < 24 * 20 * 8; i++)
    cube->data[i] = 1.0f;
  cube_path = g_build_filename (dir, "co.fits", NULL);
  g_assert_true (efflux_fits_write_cube (cube, cube_path, NULL, &error));
  g_assert_no_error (error);
  /* file names sort in another order than the source names: the list follows the file names */
  write_text (dir, "c-gamma.efflux", t3);
  write_text (dir, "a-alpha.efflux", t1);
  write_text (dir, "b-beta.efflux", t2);
  write_text (dir, "notes.txt", "not a dossier\n");

  /* the core's own view of the folder */
  core = efflux_sample_scan (dir, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (core->len, ==, 3);

  window = efflux_window_new (NULL);
  gtk_window_set_default_size (GTK_WINDOW (window), 1200, 700);
  gtk_window_present (GTK_WINDOW (window));
  sources = efflux_window_get_sources (window);
  g_assert_nonnull (sources);

  /* `efflux FOLDER`: the window opens a folder as the sample */
  folder = g_file_new_for_path (dir);
  efflux_window_open (window, folder);
  efflux_ui_test_poll_until (sources_scanned, sources, 20);
  g_assert_cmpuint (efflux_sources_get_n_rows (sources), ==, 3);
  for (guint i = 0; i < 3; i++)
    {
      EffluxSampleEntry *e = g_ptr_array_index (core, i);
      g_autofree char *canon = g_canonicalize_filename (e->path, NULL);

      g_assert_cmpstr (efflux_sources_get_row_path (sources, i), ==, canon);
      g_assert_cmpstr (efflux_sources_get_row_name (sources, i), ==, e->name);
      g_assert_true (efflux_sources_get_row_state (sources, i, &state));
      g_assert_cmpint (state, ==, e->state);
      /* the badge says the state (the tests run untranslated) */
      g_assert_cmpstr (efflux_sources_get_row_badge (sources, i), ==, efflux_source_state_name (e->state));
    }
  /* and the three states are the ones written above */
  g_assert_cmpstr (efflux_sources_get_row_name (sources, 0), ==, "Source Alpha");
  g_assert_true (efflux_sources_get_row_state (sources, 0, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  g_assert_true (efflux_sources_get_row_state (sources, 1, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_MEASURED);
  g_assert_true (efflux_sources_get_row_state (sources, 2, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_REVIEWED);
  g_assert_cmpstr (efflux_sources_get_row_badge (sources, 2), ==, "reviewed");

  /* remembered for the next start */
  g_assert_nonnull (efflux_settings_get ());
  {
    g_autofree char *saved = g_settings_get_string (efflux_settings_get (), "sample-folder");
    g_autofree char *canon = g_canonicalize_filename (dir, NULL);

    g_assert_cmpstr (saved, ==, canon);
    g_assert_cmpstr (efflux_sources_get_folder (sources), ==, canon);
  }

  /* activating a row (the list box's own signal, as a double click or Enter gives) opens its
   * dossier in the window */
  {
    GtkWidget *list = efflux_ui_test_find_widget (GTK_WIDGET (sources), GTK_TYPE_LIST_BOX);
    GtkListBoxRow *row;

    g_assert_nonnull (list);
    row = gtk_list_box_get_row_at_index (GTK_LIST_BOX (list), 1);
    g_assert_nonnull (row);
    g_signal_emit_by_name (list, "row-activated", row);
  }
  efflux_ui_test_poll_until (window_loaded, window, 60);
  document = efflux_window_get_document (window);
  g_assert_nonnull (document);
  g_assert_cmpstr (efflux_document_get_dossier (document)->name, ==, "Source Beta");
  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (window)), ==, "Source Beta - Efflux");
  g_assert_cmpuint (efflux_sources_get_n_rows (sources), ==, 3);   /* no extra row for it */

  efflux_sources_activate_row (sources, 0);
  efflux_ui_test_poll_until (window_loaded, window, 60);
  document = efflux_window_get_document (window);
  g_assert_cmpstr (efflux_document_get_dossier (document)->name, ==, "Source Alpha");
  {
    g_autofree char *measured = status_value (document, "measured");

    g_assert_null (measured);
  }

  /* Mark as measured: [Status] measured (ISO 8601 UTC) and measured-with, one undoable command */
  n_undo = efflux_document_get_n_undo (document);
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "sources.mark-measured", NULL));
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo + 1);
  g_assert_true (efflux_document_get_modified (document));
  {
    g_autofree char *measured = status_value (document, "measured");
    g_autofree char *with = status_value (document, "measured-with");
    g_autoptr(GDateTime) when = NULL;
    g_autoptr(GDateTime) now = g_date_time_new_now_utc ();

    g_assert_nonnull (measured);
    when = g_date_time_new_from_iso8601 (measured, NULL);
    g_assert_nonnull (when);
    g_assert_cmpint (g_date_time_difference (now, when), <, 120 * G_TIME_SPAN_SECOND);
    g_assert_cmpint (g_date_time_difference (now, when), >=, -G_TIME_SPAN_SECOND);
    g_assert_cmpstr (with, ==, PACKAGE_VERSION);
  }
  g_assert_cmpint (efflux_sample_state (efflux_document_get_dossier (document)->keyfile), ==,
                   EFFLUX_SOURCE_MEASURED);
  /* the row shows the open document's state at once */
  g_assert_true (efflux_sources_get_row_state (sources, 0, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_MEASURED);
  /* undo takes both keys back, in one step */
  g_assert_true (efflux_document_undo (document));
  {
    g_autofree char *measured = status_value (document, "measured");
    g_autofree char *with = status_value (document, "measured-with");

    g_assert_null (measured);
    g_assert_null (with);
  }
  g_assert_false (efflux_document_get_modified (document));
  g_assert_true (efflux_sources_get_row_state (sources, 0, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  g_assert_true (efflux_document_redo (document));

  /* unsaved changes: activating another row asks first; "Open without Saving" opens it and the
   * file of the first stays as it was */
  g_assert_true (g_file_get_contents (efflux_sources_get_row_path (sources, 0), &on_disk_before, NULL, NULL));
  efflux_sources_activate_row (sources, 2);
  efflux_ui_test_spin (0.1);
  dialog = efflux_ui_test_find_visible_toplevel (GTK_TYPE_MESSAGE_DIALOG);
  g_assert_nonnull (dialog);
  /* nothing opened yet */
  g_assert_true (efflux_window_get_document (window) == document);
  gtk_dialog_response (GTK_DIALOG (dialog), GTK_RESPONSE_CANCEL);
  efflux_ui_test_spin (0.1);
  g_assert_null (efflux_ui_test_find_visible_toplevel (GTK_TYPE_MESSAGE_DIALOG));
  g_assert_true (efflux_window_get_document (window) == document);

  /* save instead: the file on disk is measured now, and the list reads it so */
  efflux_sources_activate_row (sources, 2);
  efflux_ui_test_spin (0.1);
  dialog = efflux_ui_test_find_visible_toplevel (GTK_TYPE_MESSAGE_DIALOG);
  g_assert_nonnull (dialog);
  gtk_dialog_response (GTK_DIALOG (dialog), GTK_RESPONSE_ACCEPT);
  efflux_ui_test_poll_until (window_loaded, window, 60);
  document = efflux_window_get_document (window);
  g_assert_cmpstr (efflux_document_get_dossier (document)->name, ==, "Source Gamma");
  g_assert_true (g_file_get_contents (efflux_sources_get_row_path (sources, 0), &on_disk_after, NULL, NULL));
  g_assert_cmpstr (on_disk_before, !=, on_disk_after);
  g_assert_nonnull (strstr (on_disk_after, "# Source Alpha: a comment that must survive"));
  g_assert_nonnull (strstr (on_disk_after, "[Status]"));
  efflux_ui_test_spin (0.5);
  efflux_ui_test_poll_until (sources_scanned, sources, 20);
  g_assert_cmpuint (efflux_sources_get_n_rows (sources), ==, 3);
  g_assert_true (efflux_sources_get_row_state (sources, 0, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_MEASURED);

  /* someone else adds a dossier to the folder: the monitor sees it */
  write_text (dir, "b2-delta.efflux", t4);
  {
    gint64 deadline = g_get_monotonic_time () + 20 * G_USEC_PER_SEC;

    while (efflux_sources_get_n_rows (sources) < 4 && g_get_monotonic_time () < deadline)
      {
          if (!g_main_context_iteration (NULL, FALSE))
            g_usleep (5000);
        }
  }
  efflux_ui_test_poll_until (sources_scanned, sources, 20);
  g_assert_cmpuint (efflux_sources_get_n_rows (sources), ==, 4);
  g_assert_cmpstr (efflux_sources_get_row_name (sources, 2), ==, "Source Delta");
  g_assert_true (efflux_sources_get_row_state (sources, 2, &state));
  g_assert_cmpint (state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  efflux_ui_test_save_screenshot_after_frames (GTK_WIDGET (window), "screenshot-sources.png", 4);

  /* a file opened from elsewhere gets its own row after the sample's */
  {
    g_autoptr(GFile) cube_file = g_file_new_for_path (cube_path);

    efflux_window_open (window, cube_file);
  }
  efflux_ui_test_poll_until (window_loaded, window, 60);
  g_assert_cmpuint (efflux_sources_get_n_rows (sources), ==, 5);
  g_assert_false (efflux_sources_get_row_state (sources, 4, NULL));
  g_assert_cmpstr (efflux_sources_get_row_badge (sources, 4), ==, "");

  /* the window closed while the unsaved-changes question is open: the question goes with it and
   * lets go of the list, which is then freed with the window */
  efflux_sources_activate_row (sources, 1);
  efflux_ui_test_poll_until (window_loaded, window, 60);
  document = efflux_window_get_document (window);
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "sources.mark-measured", NULL));
  g_assert_true (efflux_document_get_modified (document));
  efflux_sources_activate_row (sources, 2);
  efflux_ui_test_spin (0.1);
  g_assert_nonnull (efflux_ui_test_find_visible_toplevel (GTK_TYPE_MESSAGE_DIALOG));
  g_object_add_weak_pointer (G_OBJECT (sources), (gpointer *) &sources);
  gtk_window_destroy (GTK_WINDOW (window));
  efflux_ui_test_spin (0.3);
  g_assert_null (efflux_ui_test_find_visible_toplevel (GTK_TYPE_MESSAGE_DIALOG));
  g_assert_null (sources);
  efflux_ui_test_remove_flat_dir (dir);
}

/* A folder that cannot be read is refused with its name, and the list stays as it was. */
static void
test_bad_folder (void)
{
  g_autoptr(GError) error = NULL;
  GtkWidget *sources = efflux_sources_new ();

  g_object_ref_sink (sources);
  g_assert_false (efflux_sources_set_folder (EFFLUX_SOURCES (sources), "/nonexistent/efflux-sample", &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_true (g_str_has_prefix (error->message, "/nonexistent/efflux-sample: "));
  g_assert_null (efflux_sources_get_folder (EFFLUX_SOURCES (sources)));
  g_assert_cmpuint (efflux_sources_get_n_rows (EFFLUX_SOURCES (sources)), ==, 0);
  g_object_unref (sources);
}

int
main (int   argc,
      char *argv[])
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/sources/sample", test_sample);
  g_test_add_func ("/sources/bad-folder", test_bad_folder);
  return g_test_run ();
}
