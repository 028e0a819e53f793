/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (run under xvfb-run): editing the demo dossier in the window. A lobe is drawn through
 * the Sky view's actions (the same code its clicks and Enter run), undone and redone; a velocity
 * range is dragged in the Spectrum view (its "range-changed" signal, as a drag emits it) and the
 * Ledger's numbers are compared with efflux_measure_dossier run here on the same dossier (the
 * core's one-shot measurement, independent of the window's prepared sums); a vertex drag is one
 * undo step; the Assumptions sheet shows the core's message for a refused value; Save As writes a
 * file that reads back equal, with the dossier's comments. Screenshots of each view go to the
 * build directory. */
#include "config.h"

#include <gtk/gtk.h>
#include <math.h>
#include <string.h>
#include <glib/gstdio.h>

#include "efflux-application.h"
#include "efflux-assumptions.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-ledger.h"
#include "efflux-lobe.h"
#include "efflux-maps.h"
#include "efflux-measure.h"
#include "efflux-sky-view.h"
#include "efflux-spectrum-view.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

static gboolean
window_ready (gpointer data)
{
  EffluxWindow *window = data;
  EffluxDocument *document = efflux_window_get_document (window);

  return !efflux_window_is_loading (window) && document != NULL
         && efflux_document_get_result (document) != NULL
         && !efflux_document_is_measuring (document);
}

/* A screenshot of a widget that has a size (asserted). */
static void
save_sized_screenshot (GtkWidget  *widget,
                       const char *name)
{
  g_assert_cmpint (gtk_widget_get_width (widget), >, 0);
  g_assert_cmpint (gtk_widget_get_height (widget), >, 0);
  efflux_ui_test_save_screenshot (widget, name);
}

/* The ledger's row for a lobe (the table's own copy of the numbers). */
static const EffluxMeasureRow *
ledger_row (EffluxWindow *window,
            const char   *lobe)
{
  GListModel *model = efflux_ledger_get_model (EFFLUX_LEDGER (efflux_window_get_ledger (window)));

  for (guint i = 0; i < g_list_model_get_n_items (model); i++)
    {
      g_autoptr(EffluxLedgerRow) item = g_list_model_get_item (model, i);
      const EffluxMeasureRow *row = efflux_ledger_row_get_row (item);

      if (g_strcmp0 (row->lobe, lobe) == 0)
        return row;
    }
  return NULL;
}

/* The same dossier measured by the core in one go (cubes read again, masks built afresh). */
static EffluxMeasureRow *
core_row (EffluxDocument *document,
          const char     *lobe,
          EffluxMeasureResult **keep)
{
  g_autoptr(GError) error = NULL;
  EffluxMeasureResult *result = efflux_measure_dossier (efflux_document_get_dossier (document),
                                                        NULL, &error);

  g_assert_no_error (error);
  *keep = result;
  for (guint i = 0; i < result->rows->len; i++)
    {
      EffluxMeasureRow *row = g_ptr_array_index (result->rows, i);

      if (g_strcmp0 (row->lobe, lobe) == 0)
        return row;
    }
  g_assert_not_reached ();
  return NULL;
}

static void
assert_close (double a,
              double b,
              double rel)
{
  if (isnan (a) && isnan (b))
    return;
  g_assert_cmpfloat (fabs (a - b), <=, rel * MAX (fabs (a), fabs (b)));
}

static void
assert_rows_equal (const EffluxMeasureRow *a,
                   const EffluxMeasureRow *b)
{
  g_assert_cmpuint (a->voxels, ==, b->voxels);
  assert_close (a->mass_msun, b->mass_msun, 1e-9);
  assert_close (a->momentum_msun_kms, b->momentum_msun_kms, 1e-9);
  assert_close (a->energy_erg, b->energy_erg, 1e-9);
  assert_close (a->tdyn_yr, b->tdyn_yr, 1e-9);
  assert_close (a->mdot_msun_yr, b->mdot_msun_yr, 1e-9);
  assert_close (a->force_msun_kms_yr, b->force_msun_kms_yr, 1e-9);
  assert_close (a->lmech_lsun, b->lmech_lsun, 1e-9);
  assert_close (a->mass_err, b->mass_err, 1e-9);
}

static gboolean
title_has_mark (EffluxWindow *window)
{
  return g_str_has_prefix (gtk_window_get_title (GTK_WINDOW (window)), "•");
}

static gboolean
blue_spectrum_shown (gpointer data)
{
  return efflux_spectrum_view_get_spectrum (data, "blue", NULL) != NULL;
}

static void
test_edit_demo (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GFile) file = NULL;
  g_autoptr(GError) error = NULL;
  g_autofree char *tmpdir = NULL;
  g_autofree char *saved_path = NULL;
  g_autofree char *original = NULL;
  g_autofree char *saved = NULL;
  g_autoptr(EffluxDossier) reread = NULL;
  EffluxMeasureResult *keep = NULL;
  const EffluxDossier *d;
  const EffluxDossierLobe *lobe;
  const EffluxCube *cube;
  EffluxWindow *window;
  EffluxDocument *document;
  EffluxSkyView *sky;
  GtkWidget *spectrum;
  const EffluxMeasureRow *shown;
  EffluxMeasureRow *expected;
  double sx, sy, wx[4], wy[4], mass_before;
  guint n_undo, n_lobes;

  g_assert_nonnull (demo);
  file = g_file_new_for_path (demo);
  window = efflux_ui_test_open_window (file, 1366, 740);
  efflux_ui_test_iterate_until (window_ready, window, 60);
  efflux_ui_test_wait_for_frames (GTK_WIDGET (window), 3);

  document = efflux_window_get_document (window);
  sky = efflux_window_get_sky_view (window);
  cube = efflux_window_get_cube (window);
  d = efflux_document_get_dossier (document);
  n_lobes = d->lobes->len;
  g_assert_cmpuint (n_lobes, ==, 2);
  g_assert_false (efflux_document_get_modified (document));
  g_assert_false (title_has_mark (window));

  /* the ledger shows the core's numbers for the dossier as loaded */
  expected = core_row (document, "blue", &keep);
  shown = ledger_row (window, "blue");
  g_assert_nonnull (shown);
  assert_rows_equal (shown, expected);
  g_clear_pointer (&keep, efflux_measure_result_free);

  /* draw a lobe: four clicks around the source, then Enter (sky.finish) */
  g_assert_true (efflux_cube_icrs_to_pixel (cube, d->ra_deg, d->dec_deg, &sx, &sy));
  {
    const double off[4][2] = { { -6, -4 }, { 6, -4 }, { 8, 5 }, { -5, 6 } };

    for (int i = 0; i < 4; i++)
      efflux_sky_view_pixel_to_widget (sky, sx + off[i][0], sy + off[i][1], &wx[i], &wy[i]);
  }
  gtk_widget_activate_action (GTK_WIDGET (sky), "sky.tool", "s", "lobe");
  g_assert_cmpint (efflux_sky_view_get_tool (sky), ==, EFFLUX_SKY_TOOL_LOBE);
  g_object_set (sky, "new-lobe-kind", "red", NULL);
  for (int i = 0; i < 4; i++)
    gtk_widget_activate_action (GTK_WIDGET (sky), "sky.add-vertex", "(dd)", wx[i], wy[i]);
  g_assert_cmpuint (efflux_sky_view_get_n_draft (sky), ==, 4);
  gtk_widget_activate_action (GTK_WIDGET (sky), "sky.finish", NULL);
  g_assert_null (efflux_sky_view_get_edit_error (sky));
  g_assert_cmpuint (efflux_sky_view_get_n_draft (sky), ==, 0);
  d = efflux_document_get_dossier (document);
  g_assert_cmpuint (d->lobes->len, ==, n_lobes + 1);
  lobe = efflux_dossier_find_lobe (d, "red-1");
  g_assert_nonnull (lobe);
  g_assert_cmpint (lobe->kind, ==, EFFLUX_LOBE_RED);
  g_assert_cmpstr (lobe->cube_id, ==, "co");
  g_assert_cmpuint (lobe->n_vertices, ==, 4);
  for (int i = 0; i < 4; i++)
    {
      double px, py, ra, dec;

      /* the vertex is where the click was: widget -> map pixel -> ICRS (the cube's WCS) */
      efflux_sky_view_widget_to_pixel (sky, wx[i], wy[i], &px, &py);
      g_assert_true (efflux_cube_pixel_to_icrs (cube, px, py, &ra, &dec));
      g_assert_cmpfloat (fabs (lobe->ra_deg[i] - ra), <, 1e-7);
      g_assert_cmpfloat (fabs (lobe->dec_deg[i] - dec), <, 1e-7);
    }
  g_assert_cmpstr (efflux_sky_view_get_selected_lobe (sky), ==, "red-1");
  g_assert_true (efflux_document_get_modified (document));
  g_assert_true (title_has_mark (window));
  efflux_ui_test_wait_for_frames (GTK_WIDGET (window), 2);
  save_sized_screenshot (GTK_WIDGET (sky), "screenshot-editing-sky.png");

  /* undo and redo it */
  n_undo = efflux_document_get_n_undo (document);
  gtk_widget_activate_action (GTK_WIDGET (window), "win.undo", NULL);
  d = efflux_document_get_dossier (document);
  g_assert_cmpuint (d->lobes->len, ==, n_lobes);
  g_assert_null (efflux_dossier_find_lobe (d, "red-1"));
  g_assert_false (efflux_document_get_modified (document));
  g_assert_false (title_has_mark (window));
  g_assert_true (efflux_document_can_redo (document));
  gtk_widget_activate_action (GTK_WIDGET (window), "win.redo", NULL);
  d = efflux_document_get_dossier (document);
  g_assert_cmpuint (d->lobes->len, ==, n_lobes + 1);
  g_assert_nonnull (efflux_dossier_find_lobe (d, "red-1"));
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo);
  g_assert_true (title_has_mark (window));

  /* the new lobe in the ledger: the core's numbers for the same lobe */
  efflux_ui_test_iterate_until (window_ready, window, 60);
  expected = core_row (document, "red-1", &keep);
  shown = ledger_row (window, "red-1");
  g_assert_nonnull (shown);
  assert_rows_equal (shown, expected);
  g_clear_pointer (&keep, efflux_measure_result_free);

  /* a vertex dragged in three motion steps: three edits with one merge id, one undo step */
  {
    guint merge = efflux_document_new_merge_id ();
    guint before = efflux_document_get_n_undo (document);
    g_autofree double *ra = NULL, *dec = NULL;

    d = efflux_document_get_dossier (document);
    lobe = efflux_dossier_find_lobe (d, "red-1");
    ra = g_memdup2 (lobe->ra_deg, 4 * sizeof (double));
    dec = g_memdup2 (lobe->dec_deg, 4 * sizeof (double));
    for (int step = 1; step <= 3; step++)
      {
        ra[2] += 0.2 / 3600.0;
        g_assert_true (efflux_document_set_lobe_polygon (document, "red-1", ra, dec, 4, merge, &error));
        g_assert_no_error (error);
      }
    g_assert_cmpuint (efflux_document_get_n_undo (document), ==, before + 1);
    d = efflux_document_get_dossier (document);
    g_assert_cmpfloat (fabs (efflux_dossier_find_lobe (d, "red-1")->ra_deg[2] - ra[2]), <, 1e-8);
    efflux_document_undo (document);
    d = efflux_document_get_dossier (document);
    g_assert_cmpfloat (fabs (efflux_dossier_find_lobe (d, "red-1")->ra_deg[2] - (ra[2] - 0.6 / 3600.0)),
                       <, 1e-8);
    efflux_document_redo (document);
  }

  /* an outline that crosses itself is refused with the core's message and changes nothing */
  {
    double ra[4], dec[4];

    d = efflux_document_get_dossier (document);
    lobe = efflux_dossier_find_lobe (d, "red-1");
    for (int i = 0; i < 4; i++)
      {
        ra[i] = lobe->ra_deg[i];
        dec[i] = lobe->dec_deg[i];
      }
    /* swap two neighbours: a bow tie */
    ra[1] = lobe->ra_deg[2];
    dec[1] = lobe->dec_deg[2];
    ra[2] = lobe->ra_deg[1];
    dec[2] = lobe->dec_deg[1];
    n_undo = efflux_document_get_n_undo (document);
    if (!efflux_document_set_lobe_polygon (document, "red-1", ra, dec, 4, 0, &error))
      {
        g_test_message ("refused: %s", error->message);
        g_assert_nonnull (strstr (error->message, "red-1"));
        g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo);
        g_clear_error (&error);
      }
    else
      {
        /* the core's loader takes crossing outlines; the measurement refuses them */
        g_test_message ("a crossing outline is accepted by the dossier reader");
        efflux_document_undo (document);
      }
  }

  /* drag the blue lobe's range in the Spectrum view; the ledger follows to the core's value */
  efflux_ui_test_iterate_until (window_ready, window, 60);
  mass_before = ledger_row (window, "blue")->mass_msun;
  spectrum = efflux_window_get_spectrum_view (window);
  n_undo = efflux_document_get_n_undo (document);
  g_signal_emit_by_name (spectrum, "range-changed", "blue", -12.0, 2.0, FALSE);
  g_signal_emit_by_name (spectrum, "range-changed", "blue", -10.0, 2.0, TRUE);
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo + 1);
  d = efflux_document_get_dossier (document);
  lobe = efflux_dossier_find_lobe (d, "blue");
  g_assert_cmpfloat (lobe->v1_kms, ==, -10.0);
  g_assert_cmpfloat (lobe->v2_kms, ==, 2.0);
  efflux_ui_test_iterate_until (window_ready, window, 60);
  shown = ledger_row (window, "blue");
  g_assert_cmpfloat (shown->mass_msun, <, mass_before);
  expected = core_row (document, "blue", &keep);
  assert_rows_equal (shown, expected);
  g_clear_pointer (&keep, efflux_measure_result_free);
  /* the selected lobe's mean spectrum, averaged in a worker, is the core's for that outline */
  efflux_sky_view_select_lobe (efflux_window_get_sky_view (window), "blue");
  efflux_ui_test_iterate_until (blue_spectrum_shown, spectrum, 30);
  {
    const EffluxCube *shown_cube = efflux_window_get_cube (window);
    g_autoptr(EffluxLobeMask) mask = efflux_lobe_mask_new (shown_cube, lobe->ra_deg, lobe->dec_deg,
                                                           lobe->n_vertices, lobe->name, NULL);
    g_autofree double *want = g_new (double, shown_cube->nchan);
    const double *got;
    gsize n = 0;

    g_assert_nonnull (mask);
    efflux_spectrum_over_lobe (shown_cube, mask, EFFLUX_SPECTRUM_MEAN, want);
    got = efflux_spectrum_view_get_spectrum (EFFLUX_SPECTRUM_VIEW (spectrum), "blue", &n);
    g_assert_cmpuint (n, ==, shown_cube->nchan);
    for (gsize k = 0; k < n; k++)
      if (!(isnan (want[k]) && isnan (got[k])))
        g_assert_cmpfloat (got[k], ==, want[k]);
  }
  efflux_ui_test_wait_for_frames (GTK_WIDGET (window), 2);
  save_sized_screenshot (spectrum, "screenshot-editing-spectrum.png");
  save_sized_screenshot (efflux_window_get_ledger (window), "screenshot-editing-ledger.png");

  /* the Assumptions sheet: a refused value keeps the core's message beside it */
  {
    EffluxAssumptions *sheet = efflux_window_get_assumptions (window);
    const char *message;

    g_object_set (window, "show-assumptions", TRUE, NULL);
    n_undo = efflux_document_get_n_undo (document);
    efflux_assumptions_enter (sheet, "distance-pc", "-5");
    message = efflux_assumptions_get_message (sheet, "distance-pc");
    g_test_message ("distance-pc=-5: %s", message);
    g_assert_nonnull (strstr (message, "distance-pc"));
    g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo);
    efflux_assumptions_enter (sheet, "distance-pc", "400");
    g_assert_cmpstr (efflux_assumptions_get_message (sheet, "distance-pc"), ==, "");
    g_assert_cmpfloat (efflux_document_get_dossier (document)->distance_pc, ==, 400.0);
    g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo + 1);
    efflux_ui_test_iterate_until (window_ready, window, 60);
    expected = core_row (document, "red", &keep);
    assert_rows_equal (ledger_row (window, "red"), expected);
    g_clear_pointer (&keep, efflux_measure_result_free);
    efflux_ui_test_wait_for_frames (GTK_WIDGET (window), 3);
    save_sized_screenshot (GTK_WIDGET (sheet), "screenshot-editing-assumptions.png");
    save_sized_screenshot (GTK_WIDGET (window), "screenshot-editing-window.png");
  }

  /* a modified dossier asks before the window closes: the window stays */
  gtk_window_close (GTK_WINDOW (window));
  g_assert_true (gtk_widget_get_visible (GTK_WIDGET (window)));

  /* Save As into a temporary directory: unmodified, and the file reads back equal */
  tmpdir = g_dir_make_tmp ("efflux-editing-XXXXXX", &error);
  g_assert_no_error (error);
  saved_path = g_build_filename (tmpdir, "edited.efflux", NULL);
  g_assert_true (efflux_document_save (document, saved_path, &error));
  g_assert_no_error (error);
  g_assert_false (efflux_document_get_modified (document));
  g_assert_false (title_has_mark (window));
  g_assert_cmpstr (efflux_document_get_path (document), ==, saved_path);
  reread = efflux_dossier_load (saved_path, &error);
  g_assert_no_error (error);
  d = efflux_document_get_dossier (document);
  g_assert_cmpstr (reread->name, ==, d->name);
  g_assert_cmpfloat (reread->distance_pc, ==, 400.0);
  g_assert_cmpuint (reread->lobes->len, ==, d->lobes->len);
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *a = g_ptr_array_index (d->lobes, i);
      const EffluxDossierLobe *b = g_ptr_array_index (reread->lobes, i);

      g_assert_cmpstr (a->name, ==, b->name);
      g_assert_cmpint (a->kind, ==, b->kind);
      g_assert_cmpstr (a->cube_id, ==, b->cube_id);
      g_assert_cmpfloat (a->v1_kms, ==, b->v1_kms);
      g_assert_cmpfloat (a->v2_kms, ==, b->v2_kms);
      g_assert_cmpuint (a->n_vertices, ==, b->n_vertices);
      for (gsize k = 0; k < a->n_vertices; k++)
        {
          g_assert_cmpfloat (a->ra_deg[k], ==, b->ra_deg[k]);
          g_assert_cmpfloat (a->dec_deg[k], ==, b->dec_deg[k]);
        }
    }
  /* the comments of the original file are kept */
  g_assert_true (g_file_get_contents (demo, &original, NULL, NULL));
  g_assert_true (g_file_get_contents (saved_path, &saved, NULL, NULL));
  {
    g_auto(GStrv) lines = g_strsplit (original, "\n", -1);
    guint comments = 0;

    for (guint i = 0; lines[i] != NULL; i++)
      if (lines[i][0] == '#')
        {
          g_assert_nonnull (strstr (saved, lines[i]));
          comments++;
        }
    g_assert_cmpuint (comments, >, 0);
  }

  g_assert_no_errno (g_unlink (saved_path));
  g_assert_no_errno (g_rmdir (tmpdir));
  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/editing/demo", test_edit_demo);
  return g_test_run ();
}
