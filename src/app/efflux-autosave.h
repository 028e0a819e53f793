/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-banner.h"
#include "efflux-document.h"

G_BEGIN_DECLS

/*
 * EffluxAutosave: unsaved edits of an open dossier kept in its recovery file
 * (efflux-recovery.h), and the offer to recover them after a crash.
 *
 * Writing: the first change after a write (or a save) starts a timer of
 * EFFLUX_AUTOSAVE_DELAY_MS; when it fires the dossier's text is made on the main thread
 * (efflux_dossier_to_data, a key-file serialisation) and written atomically, with its fsync, by a
 * GTask worker. The timer is not restarted by later changes, so every change reaches the file at
 * most the delay plus one write later, also during a long drag. Writes run one at a time, in
 * order; a write older than one already done is skipped. When the document is unmodified again
 * (saved, or undone back to the saved state) the recovery file is removed; so it is when the user
 * closes without saving (efflux_autosave_discard). efflux_autosave_close writes what is pending
 * at once (the program is quitting with unsaved edits: they stay for the next start).
 *
 * Recovering: efflux_autosave_offer_recovery shows a dialog when the dossier has a recovery file
 * (naming the file and the time of the last autosave): Recover applies the kept edits to the
 * dossier read from disk as one unsaved, undoable change; Discard removes the file; Later keeps
 * it and holds the autosave (nothing is written over the kept edits) until the user decides,
 * from the banner's action or the next time the dossier is opened.
 *
 * Messages (write errors, the outcome of a recovery) go to the banner given at creation.
 *
 * EFFLUX_AUTOSAVE=0 in the environment turns all of this off (the UI suite sets it, since its
 * tests edit the shared demo dossier in the build folder; the autosave tests turn it back on).
 */

#define EFFLUX_AUTOSAVE_DELAY_MS 1000

typedef enum
{
  EFFLUX_AUTOSAVE_RECOVER = 1,
  EFFLUX_AUTOSAVE_DISCARD = 2,
  EFFLUX_AUTOSAVE_LATER = 3,
} EffluxAutosaveResponse;

#define EFFLUX_TYPE_AUTOSAVE (efflux_autosave_get_type ())
G_DECLARE_FINAL_TYPE (EffluxAutosave, efflux_autosave, EFFLUX, AUTOSAVE, GObject)

/* banner may be NULL (no messages shown). */
EffluxAutosave *efflux_autosave_new             (EffluxDocument  *document,
                                                 EffluxBanner    *banner);
EffluxDocument *efflux_autosave_get_document    (EffluxAutosave  *self);
/* Stop watching the document; unsaved edits not yet written are written now (synchronously). */
void            efflux_autosave_close           (EffluxAutosave  *self);
/* The user closes without saving: remove the recovery file and write nothing more. */
void            efflux_autosave_discard         (EffluxAutosave  *self);

/* When the document's dossier has a recovery file: hold the autosave and present the dialog,
 * transient for parent. TRUE when the dialog is shown. */
gboolean        efflux_autosave_offer_recovery  (EffluxAutosave  *self,
                                                 GtkWindow       *parent);
/* The dialog while it is shown, else NULL (tests answer it with gtk_dialog_response and an
 * EffluxAutosaveResponse). */
GtkWidget      *efflux_autosave_get_dialog      (EffluxAutosave  *self);
/* Recover without asking: the recovery file's edits applied as one undoable command. Returns
 * the number of keys changed (0 when the file held nothing new: it is removed), -1 on error. */
int             efflux_autosave_recover         (EffluxAutosave  *self,
                                                 GError         **error);
/* TRUE while a kept recovery file waits for the user's decision (nothing is written). */
gboolean        efflux_autosave_get_held        (EffluxAutosave  *self);

/* At start: the recent dossier (GtkRecentManager) whose recovery file is the newest of those
 * newer than their dossier, or NULL (the program opens it, which offers the recovery). */
char           *efflux_autosave_find_kept       (void);

/* For tests and the benchmark: writes completed, TRUE while a write is scheduled or running, and
 * the main-thread time of the last write (the text and the hand-over to the worker), in µs. */
guint           efflux_autosave_get_n_writes    (EffluxAutosave  *self);
gboolean        efflux_autosave_is_pending      (EffluxAutosave  *self);
gint64          efflux_autosave_get_main_us     (EffluxAutosave  *self);

G_END_DECLS
