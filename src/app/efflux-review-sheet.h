/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-compare.h"
#include "efflux-document.h"
#include "efflux-review.h"
#include "efflux-sky-view.h"

G_BEGIN_DECLS

/* The Review side sheet (beside Assumptions): a colleague's dossier of the same source against
 * the open one, lobe by lobe, with the reviewer's notes.
 *
 * efflux_review_sheet_open loads the colleague's dossier (refused when it is another source:
 * another [Source] name and more than 10" away), draws its outlines dashed on the Sky view with
 * the colleague's name (efflux_sky_view_set_overlay) and compares the two in a GTask
 * (efflux_compare_dossiers measures both). One row per lobe pair: the names and how they were
 * matched (name or overlap), the IoU, the differences of the velocity range ends and the ratios
 * theirs / mine of mass, momentum, energy and tdyn, all from the core; and, for each lobe of the
 * colleague, a status (agreed, questioned, changed, or none) and a one-line note.
 *
 * A status or note is written into the open (the reviewer's) dossier through the document, as
 * one undoable command (efflux-review.h: [Review LOBE] status, note, mine, date; [Review]
 * reviewer and reviewed; [Status] reviewed-by and reviewed). The reviewer's name is asked once
 * (the dossier's own [Review] reviewer, else the "reviewer-name" setting, else the real name);
 * efflux_review_sheet_set_reviewer sets it without asking. A note without a status is recorded
 * as questioned. Choosing no status removes the note.
 *
 * A dossier whose [Review] reviewed names an existing file opens it again when the document is
 * set. The comparison is made again (debounced) when the open dossier's lobes, source,
 * assumptions or cubes change.
 *
 * Actions (group "review", efflux_review_sheet_get_actions): "open" (a file chooser), "stop",
 * "show" (the "revealed" property, for a toggle button). Signal "compared" (): new rows, or an
 * error shown. */

#define EFFLUX_TYPE_REVIEW_SHEET (efflux_review_sheet_get_type ())
G_DECLARE_FINAL_TYPE (EffluxReviewSheet, efflux_review_sheet, EFFLUX, REVIEW_SHEET, GtkWidget)

GtkWidget    *efflux_review_sheet_new           (void);
void          efflux_review_sheet_set_document  (EffluxReviewSheet *self,
                                                 EffluxDocument    *document);
void          efflux_review_sheet_set_sky_view  (EffluxReviewSheet *self,
                                                 EffluxSkyView     *sky_view);
GActionGroup *efflux_review_sheet_get_actions   (EffluxReviewSheet *self);

/* Load the colleague's dossier and start the comparison (the sheet is revealed). Errors (also
 * shown in the sheet): unreadable dossier, no document open, another source (naming both files). */
gboolean      efflux_review_sheet_open          (EffluxReviewSheet *self,
                                                 const char        *path,
                                                 GError           **error);
/* Remove the colleague's dossier and outlines (the notes stay in the dossier). */
void          efflux_review_sheet_stop          (EffluxReviewSheet *self);
/* TRUE while a comparison is scheduled or running. */
gboolean      efflux_review_sheet_is_busy       (EffluxReviewSheet *self);
/* The last comparison, or NULL. */
const EffluxComparison *efflux_review_sheet_get_comparison (EffluxReviewSheet *self);
/* The message shown (an error), or NULL. */
const char   *efflux_review_sheet_get_message   (EffluxReviewSheet *self);
/* The colleague's file and name as drawn on the Sky view, or NULL. */
const char   *efflux_review_sheet_get_colleague (EffluxReviewSheet *self);
const char   *efflux_review_sheet_get_author    (EffluxReviewSheet *self);

/* The reviewer's name for notes in a dossier that names none (no question is asked). */
void          efflux_review_sheet_set_reviewer  (EffluxReviewSheet *self,
                                                 const char        *reviewer);
/* Set what a row's dropdown and entry set: the status (has_status FALSE: remove the note) and
 * the note on the colleague's lobe. Asks for the reviewer's name first when it is not known:
 * then FALSE without error, and the note follows the answer. */
gboolean      efflux_review_sheet_set_note      (EffluxReviewSheet  *self,
                                                 const char         *their_lobe,
                                                 gboolean            has_status,
                                                 EffluxReviewStatus  status,
                                                 const char         *note,
                                                 GError            **error);

/* Rows: one per lobe pair of the comparison. */
guint         efflux_review_sheet_get_n_rows    (EffluxReviewSheet *self);
/* The row's figures as shown, one line: "blue-1 ↔ blue-1 (name) IoU 0.333 ...". */
const char   *efflux_review_sheet_get_row_text  (EffluxReviewSheet *self,
                                                 guint              index);
/* The status shown in the row's dropdown (FALSE: none) and its note entry's text. */
gboolean      efflux_review_sheet_get_row_status (EffluxReviewSheet  *self,
                                                  guint               index,
                                                  EffluxReviewStatus *status);
const char   *efflux_review_sheet_get_row_note  (EffluxReviewSheet *self,
                                                 guint              index);

G_END_DECLS
