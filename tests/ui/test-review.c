/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (under xvfb-run): the Review side sheet (src/app/efflux-review-sheet.c).
 *
 * Two dossiers of one source on one cube of 1 K everywhere (the layout of tests/test-compare.c):
 * mine at 300 pc with blue-1 over pixels x 10..19, y 10..19; the colleague's at 600 pc with
 * blue-1 over x 15..24 (half the side further) and a red lobe elsewhere. The checks are analytic:
 * - two 10 x 10 pixel squares offset by half their side share 50 pixels: intersection over union
 *   = 50 / (100 + 100 - 50) = 1/3;
 * - mass is proportional to the pixel area, distance^2 x pixel solid angle (CONTRACT.md 4): the
 *   same number of pixels of the same brightness at twice the distance has 4 x the mass, momentum
 *   and energy; the squares are mirror images about the source's meridian (the TAN projection is
 *   symmetric about the reference pixel's column), so rmax in au doubles and tdyn doubles;
 * and the sheet shows what the core computes (efflux_compare_dossiers, called here directly).
 * A dossier of another source is refused naming both files; the colleague's outlines go to the
 * Sky view with their author; a note is one undoable command, survives save and reload (the
 * colleague's dossier opens again from [Review] reviewed), and undo removes it; the reviewer's
 * name is asked once. */
#include "config.h"

#include <gtk/gtk.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-compare.h"
#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-review.h"
#include "efflux-review-sheet.h"
#include "efflux-sample.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"
#include "efflux-test-util.h"
#include "efflux-ui-test-util.h"

typedef struct
{
  char       *dir;
  EffluxCube *cube;
  char       *mine;
  char       *theirs;
  char       *other;
} Fixture;

static void
wait_compared (EffluxReviewSheet *sheet)
{
  gint64 deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;

  while (efflux_review_sheet_is_busy (sheet) && g_get_monotonic_time () < deadline)
    efflux_ui_test_iterate ();
  g_assert_false (efflux_review_sheet_is_busy (sheet));
}

static void
fixture_set_up (Fixture      *f,
                gconstpointer data)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *a = NULL, *b = NULL, *c = NULL, *d = NULL;
  g_autofree char *m1 = NULL, *m2 = NULL, *t1 = NULL, *t2 = NULL, *o1 = NULL;
  g_autofree char *mine = NULL, *theirs = NULL;

  f->dir = g_dir_make_tmp ("efflux-review-XXXXXX", &error);
  g_assert_no_error (error);
  f->cube = efflux_test_write_square_cube (f->dir);

  a = efflux_test_pixel_square (f->cube, 10, 10, 19, 19);
  b = efflux_test_pixel_square (f->cube, 15, 10, 24, 19);
  c = efflux_test_pixel_square (f->cube, 10, 25, 19, 34);
  d = efflux_test_pixel_square (f->cube, 26, 2, 30, 6);
  m1 = efflux_test_lobe_section ("blue-1", "blue", a, "-5.5;-0.5", "Me");
  m2 = efflux_test_lobe_section ("red-1", "red", c, "0.5;5.5", "Me");
  t1 = efflux_test_lobe_section ("blue-1", "blue", b, "-5.5;-0.5", "A. Colleague");
  t2 = efflux_test_lobe_section ("R-far", "red", d, "0.5;5.5", "A. Colleague");
  o1 = efflux_test_lobe_section ("blue-1", "blue", a, "-5.5;-0.5", "Someone");
  mine = g_strconcat (m1, m2, NULL);
  theirs = g_strconcat (t1, t2, NULL);
  /* the same source, written a little differently by the colleague */
  f->mine = efflux_test_write_square_dossier (f->cube, f->dir, "mine.efflux", "Test Source 1", 300, mine);
  f->theirs = efflux_test_write_square_dossier (f->cube, f->dir, "theirs.efflux", "test source 1", 600, theirs);
  f->other = efflux_test_write_square_dossier (f->cube, f->dir, "other.efflux", "Another Source", 300, o1);
}

static void
fixture_tear_down (Fixture      *f,
                   gconstpointer data)
{
  g_autoptr(GDir) d = g_dir_open (f->dir, 0, NULL);
  const char *name;

  while (d != NULL && (name = g_dir_read_name (d)) != NULL)
    {
      g_autofree char *p = g_build_filename (f->dir, name, NULL);

      g_assert_cmpint (g_unlink (p), ==, 0);
    }
  g_assert_cmpint (g_rmdir (f->dir), ==, 0);
  g_free (f->dir);
  g_free (f->mine);
  g_free (f->theirs);
  g_free (f->other);
  efflux_cube_free (f->cube);
}

static char *
note_value (EffluxDocument *document,
            const char     *key)
{
  return g_key_file_get_value (efflux_document_get_dossier (document)->keyfile, "Review blue-1", key, NULL);
}

static EffluxWindow *
open_window (const char *path)
{
  g_autoptr(GFile) file = g_file_new_for_path (path);
  EffluxWindow *window = efflux_ui_test_open_window (file, 1300, 720);

  efflux_ui_test_poll_until_loaded (window);
  g_assert_nonnull (efflux_window_get_document (window));
  return window;
}

static int
find_row (EffluxReviewSheet *sheet,
          const char        *mine,
          const char        *theirs)
{
  const EffluxComparison *c = efflux_review_sheet_get_comparison (sheet);

  g_assert_nonnull (c);
  g_assert_cmpuint (efflux_review_sheet_get_n_rows (sheet), ==, c->rows->len);
  for (guint i = 0; i < c->rows->len; i++)
    {
      const EffluxCompareRow *r = g_ptr_array_index (c->rows, i);

      if (g_strcmp0 (r->mine, mine) == 0 && g_strcmp0 (r->theirs, theirs) == 0)
        return (int) i;
    }
  g_error ("no row %s / %s", mine ? mine : "-", theirs ? theirs : "-");
  return -1;
}

static void
test_compare_and_notes (Fixture      *f,
                        gconstpointer data)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) mine = NULL;
  g_autoptr(EffluxDossier) theirs = NULL;
  g_autoptr(EffluxComparison) core = NULL;
  g_autofree char *canon_theirs = g_canonicalize_filename (f->theirs, NULL);
  EffluxWindow *window;
  EffluxReviewSheet *sheet;
  EffluxDocument *document;
  EffluxSkyView *view;
  GtkRevealer *revealer;
  const EffluxCompareRow *r;
  EffluxReviewStatus status;
  int i;
  guint n_undo;

  window = open_window (f->mine);
  sheet = efflux_window_get_review_sheet (window);
  view = efflux_window_get_sky_view (window);
  document = efflux_window_get_document (window);
  g_assert_nonnull (sheet);
  g_assert_null (efflux_review_sheet_get_colleague (sheet));
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 0);

  /* the header toggle (review.show, F8) shows and hides the sheet */
  revealer = GTK_REVEALER (gtk_widget_get_first_child (GTK_WIDGET (sheet)));
  g_assert_false (gtk_revealer_get_reveal_child (revealer));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "review.show", NULL));
  g_assert_true (gtk_revealer_get_reveal_child (revealer));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "review.show", NULL));
  g_assert_false (gtk_revealer_get_reveal_child (revealer));

  /* another source: refused, naming both files; nothing drawn */
  g_assert_false (efflux_review_sheet_open (sheet, f->other, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_test_message ("refused: %s", error->message);
  g_assert_nonnull (strstr (error->message, "other.efflux"));
  g_assert_nonnull (strstr (error->message, "mine.efflux"));
  g_assert_nonnull (strstr (error->message, "Another Source"));
  /* at the same position under another name: the message says how to make them one source */
  g_assert_nonnull (strstr (error->message, "0.00 arcsec away"));
  g_assert_nonnull (strstr (error->message, "same name"));
  g_assert_cmpstr (efflux_review_sheet_get_message (sheet), ==, error->message);
  /* shown where it is read: the sheet opens, the window's message area says it too */
  g_assert_true (gtk_revealer_get_reveal_child (revealer));
  g_assert_cmpstr (efflux_window_get_error (window), ==, error->message);
  g_assert_null (efflux_review_sheet_get_colleague (sheet));
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 0);
  g_clear_error (&error);

  /* the same name 30 arcsec to the north: opened, with a note to check the positions */
  {
    g_autofree char *text = efflux_test_read_file (f->theirs, NULL);
    g_autofree char *moved_path = g_build_filename (f->dir, "moved.efflux", NULL);
    g_autoptr(GRegex) re = g_regex_new ("^dec-deg=(.*)$", G_REGEX_MULTILINE, 0, NULL);
    g_autoptr(GMatchInfo) m = NULL;
    g_autofree char *dec_text = NULL, *moved = NULL;
    char repl[64], num[G_ASCII_DTOSTR_BUF_SIZE];

    g_assert_true (g_regex_match (re, text, 0, &m));
    dec_text = g_match_info_fetch (m, 1);
    g_snprintf (repl, sizeof repl, "dec-deg=%s",
                g_ascii_formatd (num, sizeof num, "%.12f", g_ascii_strtod (dec_text, NULL) + 30.0 / 3600.0));
    moved = g_regex_replace_literal (re, text, -1, 0, repl, 0, NULL);
    efflux_test_write_file (moved_path, moved);
    g_assert_true (efflux_review_sheet_open (sheet, moved_path, &error));
    g_assert_no_error (error);
    g_assert_nonnull (efflux_review_sheet_get_message (sheet));
    g_assert_nonnull (strstr (efflux_review_sheet_get_message (sheet), "lie 30.0 arcsec from those of"));
    efflux_review_sheet_stop (sheet);
  }

  /* the colleague's dossier: compared in a worker; outlines on the Sky view with the author */
  g_assert_true (efflux_review_sheet_open (sheet, f->theirs, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_review_sheet_is_busy (sheet));
  wait_compared (sheet);
  g_assert_null (efflux_review_sheet_get_message (sheet));
  g_assert_cmpstr (efflux_review_sheet_get_colleague (sheet), ==, canon_theirs);
  g_assert_cmpstr (efflux_review_sheet_get_author (sheet), ==, "A. Colleague");
  g_assert_cmpstr (efflux_sky_view_get_overlay_author (view), ==, "A. Colleague");
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 2);

  /* the core, here: the sheet shows its rows and numbers */
  mine = efflux_dossier_load (f->mine, &error);
  g_assert_no_error (error);
  theirs = efflux_dossier_load (f->theirs, &error);
  g_assert_no_error (error);
  core = efflux_compare_dossiers (mine, theirs, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (efflux_review_sheet_get_n_rows (sheet), ==, core->rows->len);
  /* blue-1 by name, red-1 alone (R-far overlaps nothing), R-far alone */
  g_assert_cmpuint (core->rows->len, ==, 3);
  i = find_row (sheet, "blue-1", "blue-1");
  r = g_ptr_array_index (efflux_review_sheet_get_comparison (sheet)->rows, i);
  g_assert_cmpint (r->match, ==, EFFLUX_MATCH_NAME);
  g_assert_cmpuint (r->n_mine, ==, 100);
  g_assert_cmpuint (r->n_theirs, ==, 100);
  g_assert_cmpuint (r->n_both, ==, 50);
  /* 50 / (100 + 100 - 50) = 1/3, analytic */
  g_assert_cmpfloat_with_epsilon (r->iou, 1.0 / 3.0, 1e-15);
  g_assert_cmpfloat (r->iou, ==, ((const EffluxCompareRow *) g_ptr_array_index (core->rows, i))->iou);
  g_assert_cmpfloat (r->dv1_kms, ==, 0.0);
  g_assert_cmpfloat (r->dv2_kms, ==, 0.0);
  /* distance x 2: mass, momentum, energy x 4; tdyn x 2 (see the top) */
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MASS], 4.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MOMENTUM], 4.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_ENERGY], 4.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_TDYN], 2.0, 1e-9);
  g_test_message ("row: %s", efflux_review_sheet_get_row_text (sheet, (guint) i));
  g_assert_nonnull (strstr (efflux_review_sheet_get_row_text (sheet, (guint) i), "blue-1 ↔ blue-1 (by name)"));
  g_assert_nonnull (strstr (efflux_review_sheet_get_row_text (sheet, (guint) i), "IoU 0.333"));
  g_assert_nonnull (strstr (efflux_review_sheet_get_row_text (sheet, (guint) i), "mass ×4 "));
  g_assert_nonnull (strstr (efflux_review_sheet_get_row_text (sheet, (guint) i), "tdyn ×2"));
  g_assert_false (efflux_review_sheet_get_row_status (sheet, (guint) i, NULL));
  g_assert_cmpstr (efflux_review_sheet_get_row_note (sheet, (guint) i), ==, "");
  i = find_row (sheet, NULL, "R-far");
  g_assert_nonnull (strstr (efflux_review_sheet_get_row_text (sheet, (guint) i), "R-far: only theirs"));
  efflux_ui_test_save_screenshot_after_frames (GTK_WIDGET (window), "screenshot-review.png", 4);

  /* a note: one command that writes the core's review groups into my dossier */
  efflux_review_sheet_set_reviewer (sheet, "A. Reviewer");
  n_undo = efflux_document_get_n_undo (document);
  g_assert_false (efflux_document_get_modified (document));
  g_assert_true (efflux_review_sheet_set_note (sheet, "blue-1", TRUE, EFFLUX_REVIEW_QUESTIONED,
                                               "takes in the ambient cloud to the east", &error));
  g_assert_no_error (error);
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo + 1);
  g_assert_true (efflux_document_get_modified (document));
  {
    g_autoptr(EffluxReview) review = efflux_review_read (efflux_document_get_dossier (document), &error);
    const EffluxReviewNote *n;

    g_assert_no_error (error);
    g_assert_cmpstr (review->reviewer, ==, "A. Reviewer");
    /* the colleague's dossier, relative to mine (the same folder) */
    g_assert_cmpstr (review->reviewed, ==, "theirs.efflux");
    g_assert_cmpuint (review->notes->len, ==, 1);
    n = efflux_review_find (review, "blue-1");
    g_assert_nonnull (n);
    g_assert_cmpint (n->status, ==, EFFLUX_REVIEW_QUESTIONED);
    g_assert_cmpstr (n->note, ==, "takes in the ambient cloud to the east");
    g_assert_cmpstr (n->mine, ==, "blue-1");
    g_assert_nonnull (n->date);
    /* and the source reads as reviewed in a sample */
    g_assert_cmpint (efflux_sample_state (efflux_document_get_dossier (document)->keyfile), ==,
                     EFFLUX_SOURCE_REVIEWED);
  }
  i = find_row (sheet, "blue-1", "blue-1");
  g_assert_true (efflux_review_sheet_get_row_status (sheet, (guint) i, &status));
  g_assert_cmpint (status, ==, EFFLUX_REVIEW_QUESTIONED);
  g_assert_cmpstr (efflux_review_sheet_get_row_note (sheet, (guint) i), ==,
                   "takes in the ambient cloud to the east");

  /* undo removes it, all of it, in one step; redo brings it back */
  g_assert_true (efflux_document_undo (document));
  {
    g_autoptr(EffluxReview) review = efflux_review_read (efflux_document_get_dossier (document), &error);

    g_assert_no_error (error);
    g_assert_cmpuint (review->notes->len, ==, 0);
    g_assert_null (review->reviewer);
    g_assert_cmpint (efflux_sample_state (efflux_document_get_dossier (document)->keyfile), ==,
                     EFFLUX_SOURCE_NOT_MEASURED);
  }
  g_assert_false (efflux_document_get_modified (document));
  g_assert_false (efflux_review_sheet_get_row_status (sheet, (guint) i, NULL));
  g_assert_cmpstr (efflux_review_sheet_get_row_note (sheet, (guint) i), ==, "");
  g_assert_true (efflux_document_redo (document));
  g_assert_true (efflux_review_sheet_get_row_status (sheet, (guint) i, &status));
  g_assert_cmpint (status, ==, EFFLUX_REVIEW_QUESTIONED);

  /* a status change on the same lobe: one more command; "no note" removes it (and undo of that
   * brings it back) */
  g_assert_true (efflux_review_sheet_set_note (sheet, "blue-1", TRUE, EFFLUX_REVIEW_CHANGED,
                                               "redrawn on my side", &error));
  g_assert_no_error (error);
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, n_undo + 2);
  g_assert_true (efflux_review_sheet_set_note (sheet, "blue-1", FALSE, EFFLUX_REVIEW_AGREED, "", &error));
  g_assert_no_error (error);
  g_assert_false (efflux_review_sheet_get_row_status (sheet, (guint) i, NULL));
  g_assert_true (efflux_document_undo (document));
  g_assert_true (efflux_review_sheet_get_row_status (sheet, (guint) i, &status));
  g_assert_cmpint (status, ==, EFFLUX_REVIEW_CHANGED);
  g_assert_cmpstr (efflux_review_sheet_get_row_note (sheet, (guint) i), ==, "redrawn on my side");

  /* save, then open the dossier again: the note is kept, the colleague's dossier opens again */
  g_assert_true (efflux_document_save (document, NULL, &error));
  g_assert_no_error (error);
  gtk_window_destroy (GTK_WINDOW (window));
  efflux_ui_test_spin (0.1);
  {
    g_autofree char *text = NULL;

    g_assert_true (g_file_get_contents (f->mine, &text, NULL, NULL));
    g_assert_nonnull (strstr (text, "# a comment that must survive"));
    g_assert_nonnull (strstr (text, "[Review blue-1]"));
    g_assert_nonnull (strstr (text, "note=redrawn on my side"));
  }
  window = open_window (f->mine);
  sheet = efflux_window_get_review_sheet (window);
  view = efflux_window_get_sky_view (window);
  g_assert_cmpstr (efflux_review_sheet_get_colleague (sheet), ==, canon_theirs);
  wait_compared (sheet);
  g_assert_cmpstr (efflux_sky_view_get_overlay_author (view), ==, "A. Colleague");
  i = find_row (sheet, "blue-1", "blue-1");
  g_assert_true (efflux_review_sheet_get_row_status (sheet, (guint) i, &status));
  g_assert_cmpint (status, ==, EFFLUX_REVIEW_CHANGED);
  g_assert_cmpstr (efflux_review_sheet_get_row_note (sheet, (guint) i), ==, "redrawn on my side");
  g_assert_false (efflux_document_get_modified (efflux_window_get_document (window)));

  /* the row's own widgets: the dropdown and the entry of the first row with a lobe of theirs
   * (blue-1), each change one command */
  {
    g_autoptr(GPtrArray) dropdowns = g_ptr_array_new ();
    g_autoptr(GPtrArray) entries = g_ptr_array_new ();
    EffluxDocument *doc = efflux_window_get_document (window);
    guint n0 = efflux_document_get_n_undo (doc);
    g_autofree char *v1 = NULL, *v2 = NULL, *v3 = NULL, *v4 = NULL;

    efflux_ui_test_collect_widgets (GTK_WIDGET (sheet), GTK_TYPE_DROP_DOWN, dropdowns);
    efflux_ui_test_collect_widgets (GTK_WIDGET (sheet), GTK_TYPE_ENTRY, entries);
    /* blue-1 and R-far have them; my red-1 alone has none */
    g_assert_cmpuint (dropdowns->len, ==, 2);
    g_assert_cmpuint (entries->len, ==, 2);
    g_assert_cmpuint (gtk_drop_down_get_selected (g_ptr_array_index (dropdowns, 0)), ==, 1 + EFFLUX_REVIEW_CHANGED);
    gtk_drop_down_set_selected (g_ptr_array_index (dropdowns, 0), 1 + EFFLUX_REVIEW_AGREED);
    v1 = note_value (doc, "status");
    v2 = note_value (doc, "note");
    g_assert_cmpstr (v1, ==, "agreed");
    g_assert_cmpstr (v2, ==, "redrawn on my side");
    gtk_editable_set_text (GTK_EDITABLE (g_ptr_array_index (entries, 0)), "fine after all");
    g_signal_emit_by_name (g_ptr_array_index (entries, 0), "activate");
    v3 = note_value (doc, "note");
    g_assert_cmpstr (v3, ==, "fine after all");
    /* "no note" removes it, though the entry holds text */
    gtk_drop_down_set_selected (g_ptr_array_index (dropdowns, 0), 0);
    v4 = note_value (doc, "status");
    g_assert_null (v4);
    g_assert_cmpstr (gtk_editable_get_text (g_ptr_array_index (entries, 0)), ==, "");
    /* a note typed without a status is recorded as questioned */
    gtk_editable_set_text (GTK_EDITABLE (g_ptr_array_index (entries, 1)), "no emission there");
    g_signal_emit_by_name (g_ptr_array_index (entries, 1), "activate");
    g_assert_cmpuint (gtk_drop_down_get_selected (g_ptr_array_index (dropdowns, 1)), ==, 1 + EFFLUX_REVIEW_QUESTIONED);
    {
      g_autofree char *st = g_key_file_get_value (efflux_document_get_dossier (doc)->keyfile,
                                                  "Review R-far", "status", NULL);

      g_assert_cmpstr (st, ==, "questioned");
    }
    g_assert_cmpuint (efflux_document_get_n_undo (doc), ==, n0 + 4);
    for (int k = 0; k < 4; k++)
      g_assert_true (efflux_document_undo (doc));
    g_assert_false (efflux_document_get_modified (doc));
    g_assert_cmpuint (gtk_drop_down_get_selected (g_ptr_array_index (dropdowns, 0)), ==, 1 + EFFLUX_REVIEW_CHANGED);
    g_assert_cmpstr (gtk_editable_get_text (g_ptr_array_index (entries, 0)), ==, "redrawn on my side");
    g_assert_cmpuint (gtk_drop_down_get_selected (g_ptr_array_index (dropdowns, 1)), ==, 0);
  }

  /* my lobe edited to the colleague's outline: the sheet compares again (after the edits pause)
   * and the two pixel sets are the same, IoU 1 */
  {
    const EffluxDossierLobe *their_blue = efflux_dossier_find_lobe (theirs, "blue-1");
    EffluxDocument *doc = efflux_window_get_document (window);

    g_assert_true (efflux_document_set_lobe_polygon (doc, "blue-1", their_blue->ra_deg, their_blue->dec_deg,
                                                     their_blue->n_vertices, 0, &error));
    g_assert_no_error (error);
    g_assert_true (efflux_review_sheet_is_busy (sheet));
    wait_compared (sheet);
    i = find_row (sheet, "blue-1", "blue-1");
    r = g_ptr_array_index (efflux_review_sheet_get_comparison (sheet)->rows, i);
    g_assert_cmpuint (r->n_both, ==, 100);
    g_assert_cmpfloat (r->iou, ==, 1.0);
    /* the note stays on the row */
    g_assert_true (efflux_review_sheet_get_row_status (sheet, (guint) i, &status));
    g_assert_cmpint (status, ==, EFFLUX_REVIEW_CHANGED);
    g_assert_true (efflux_document_undo (doc));
    wait_compared (sheet);
  }

  /* stop reviewing: the outlines go, the notes stay */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "review.stop", NULL));
  g_assert_null (efflux_review_sheet_get_colleague (sheet));
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 0);
  g_assert_cmpuint (efflux_review_sheet_get_n_rows (sheet), ==, 0);
  g_assert_false (efflux_document_get_modified (efflux_window_get_document (window)));

  gtk_window_destroy (GTK_WINDOW (window));
  efflux_ui_test_spin (0.1);
}

/* No reviewer known: the first note asks for the name (default: the real name, or the user name
 * when the system knows none); the answer signs that note; the next note does not ask. */
static void
test_reviewer_asked_once (Fixture      *f,
                          gconstpointer data)
{
  g_autoptr(GError) error = NULL;
  EffluxWindow *window = open_window (f->mine);
  EffluxReviewSheet *sheet = efflux_window_get_review_sheet (window);
  EffluxDocument *document = efflux_window_get_document (window);
  GtkDialog *dialog;
  GtkEditable *entry;
  const char *real = g_get_real_name ();

  g_assert_true (efflux_review_sheet_open (sheet, f->theirs, &error));
  g_assert_no_error (error);
  wait_compared (sheet);
  g_assert_null (GTK_DIALOG (efflux_ui_test_find_visible_toplevel (GTK_TYPE_DIALOG)));
  /* not written yet: the name is asked */
  g_assert_false (efflux_review_sheet_set_note (sheet, "blue-1", TRUE, EFFLUX_REVIEW_AGREED, "fine", &error));
  g_assert_no_error (error);
  g_assert_false (efflux_document_get_modified (document));
  efflux_ui_test_spin (0.1);
  dialog = GTK_DIALOG (efflux_ui_test_find_visible_toplevel (GTK_TYPE_DIALOG));
  g_assert_nonnull (dialog);
  entry = GTK_EDITABLE (efflux_ui_test_find_widget (GTK_WIDGET (dialog), GTK_TYPE_ENTRY));
  g_assert_nonnull (entry);
  g_assert_cmpstr (gtk_editable_get_text (entry), ==,
                   g_strcmp0 (real, "Unknown") != 0 && *real != '\0' ? real : g_get_user_name ());
  gtk_editable_set_text (entry, "B. Checker");
  gtk_dialog_response (dialog, GTK_RESPONSE_ACCEPT);
  efflux_ui_test_spin (0.1);
  g_assert_null (GTK_DIALOG (efflux_ui_test_find_visible_toplevel (GTK_TYPE_DIALOG)));
  {
    g_autoptr(EffluxReview) review = efflux_review_read (efflux_document_get_dossier (document), &error);

    g_assert_no_error (error);
    g_assert_cmpstr (review->reviewer, ==, "B. Checker");
    g_assert_cmpint (efflux_review_find (review, "blue-1")->status, ==, EFFLUX_REVIEW_AGREED);
    g_assert_cmpstr (efflux_review_find (review, "blue-1")->note, ==, "fine");
  }
  /* the second note: no question */
  g_assert_true (efflux_review_sheet_set_note (sheet, "R-far", TRUE, EFFLUX_REVIEW_QUESTIONED,
                                               "no emission there", &error));
  g_assert_no_error (error);
  efflux_ui_test_spin (0.05);
  g_assert_null (GTK_DIALOG (efflux_ui_test_find_visible_toplevel (GTK_TYPE_DIALOG)));
  {
    g_autoptr(EffluxReview) review = efflux_review_read (efflux_document_get_dossier (document), &error);

    g_assert_no_error (error);
    g_assert_cmpuint (review->notes->len, ==, 2);
    g_assert_cmpstr (efflux_review_find (review, "R-far")->note, ==, "no emission there");
    /* R-far was matched with none of mine */
    g_assert_null (efflux_review_find (review, "R-far")->mine);
  }
  /* closing with unsaved notes asks; leave without saving */
  efflux_document_undo (document);
  efflux_document_undo (document);
  g_assert_false (efflux_document_get_modified (document));
  gtk_window_destroy (GTK_WINDOW (window));
  efflux_ui_test_spin (0.1);
}

int
main (int   argc,
      char *argv[])
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add ("/review/compare-and-notes", Fixture, NULL, fixture_set_up, test_compare_and_notes,
              fixture_tear_down);
  g_test_add ("/review/reviewer-asked-once", Fixture, NULL, fixture_set_up, test_reviewer_asked_once,
              fixture_tear_down);
  return g_test_run ();
}
