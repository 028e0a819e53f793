/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-document.h"
#include "efflux-sample.h"

G_BEGIN_DECLS

/* The Sources list at the left of the window.
 *
 * A sample is a folder of dossiers (efflux-sample.h). Once a folder is open, the list shows every
 * dossier of it, in the core's order (efflux_sample_scan), with its source name and its state
 * (not measured, measured, reviewed) as a small text badge and an icon. The folder is watched
 * (GFileMonitor) and scanned again, off the UI thread, when a dossier in it changes, and also
 * after the open document is saved. The folder is remembered in the "sample-folder" setting.
 *
 * Files opened in the window that are not part of the sample are listed after it, as before a
 * sample is opened. Activating a row opens its file: when the window's document has unsaved
 * changes the user is asked first (save, discard or cancel), then "open-source" is emitted with
 * the file's path.
 *
 * Actions (group "sources", efflux_sources_get_actions): "open-folder" (a folder chooser),
 * "mark-measured" (records [Status] measured and measured-with in the open document as one
 * undoable command, efflux_sample_set_measured) and "refresh".
 *
 * Signals:
 *   open-source (const char *path): a row was activated (after any question about unsaved
 *     changes was answered with save or discard).
 *   scanned (): the folder's rows were updated. */

#define EFFLUX_TYPE_SOURCES (efflux_sources_get_type ())
G_DECLARE_FINAL_TYPE (EffluxSources, efflux_sources, EFFLUX, SOURCES, GtkWidget)

GtkWidget    *efflux_sources_new          (void);

/* Open a sample folder: checked (readable) at once, scanned in a worker; "scanned" follows.
 * NULL closes the sample. Errors name the folder. */
gboolean      efflux_sources_set_folder   (EffluxSources  *self,
                                           const char     *folder,
                                           GError        **error);
const char   *efflux_sources_get_folder   (EffluxSources  *self);
/* Scan the folder again (after a save, or on request). */
void          efflux_sources_refresh      (EffluxSources  *self);
/* TRUE while a scan runs or is pending. */
gboolean      efflux_sources_is_scanning  (EffluxSources  *self);

/* The window opened path (a dossier or a cube): its row is selected; a file outside the sample
 * gets a row of its own after the sample's rows, with the detail line given. */
void          efflux_sources_add_opened   (EffluxSources  *self,
                                           const char     *path,
                                           const char     *name,
                                           const char     *detail);
/* The window's document, for the unsaved-changes question and "mark-measured" (may be NULL). */
void          efflux_sources_set_document (EffluxSources  *self,
                                           EffluxDocument *document);

GActionGroup *efflux_sources_get_actions  (EffluxSources  *self);

/* Rows, top to bottom: the sample's dossiers, then the files opened outside it. */
guint         efflux_sources_get_n_rows   (EffluxSources  *self);
const char   *efflux_sources_get_row_path (EffluxSources  *self,
                                           guint           index);
/* The row's source name as shown. */
const char   *efflux_sources_get_row_name (EffluxSources  *self,
                                           guint           index);
/* The state of a sample row; FALSE for a row outside the sample. */
gboolean      efflux_sources_get_row_state (EffluxSources     *self,
                                            guint              index,
                                            EffluxSourceState *state);
/* The badge's text of a sample row ("not measured", ... translated), "" for other rows. */
const char   *efflux_sources_get_row_badge (EffluxSources  *self,
                                            guint           index);
/* Activate a row as a click does (with the unsaved-changes question). */
void          efflux_sources_activate_row (EffluxSources  *self,
                                           guint           index);

/* Make the listed groups of the document's dossier equal to those of edited (a key file that
 * began as a copy of the dossier's and was changed by the core, e.g. efflux_sample_set_measured
 * or efflux-review.h): every key that differs is set or removed, all in one undoable command.
 * Nothing differs: TRUE and no command. Shared by the Sources list and the Review sheet. */
gboolean      efflux_sources_commit_keyfile (EffluxDocument     *document,
                                             GKeyFile           *edited,
                                             const char * const *groups,
                                             guint               merge_id,
                                             GError            **error);
/* A copy of the document's key file, comments kept, for efflux_sources_commit_keyfile. */
GKeyFile     *efflux_sources_copy_keyfile  (EffluxDocument     *document);

G_END_DECLS
