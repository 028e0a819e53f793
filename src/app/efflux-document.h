/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gio/gio.h>

#include "efflux-dossier.h"
#include "efflux-measure.h"

G_BEGIN_DECLS

/* An open dossier and everything the desktop program does to it: edits as undoable commands, the
 * modified state, saving, and the live measurement.
 *
 * Every edit is a command: a list of key-file changes (group, key, value before, value after; a
 * NULL value means the key is absent). Applying or reversing a command writes the values into the
 * dossier's key file and reads the whole dossier again from it, so the core validates every edit
 * exactly as it validates a file on disk; an edit the core refuses is not recorded and its
 * message (naming the group and key) comes back in the GError.
 *
 * The undo and redo stacks follow GtkTextHistory: a new command clears the redo stack and merges
 * with the last one when both carry the same non-zero merge id and change the same keys (a drag
 * is one command); while undoing or redoing nothing is recorded. "can-undo", "can-redo" and
 * "modified" are properties; "modified" is FALSE again after a save or after undoing back to it.
 *
 * The measurement: efflux_document_load_cubes_async reads the cubes the lobes need (through the
 * cube store, efflux-cube-store.h: a file the window has read is not read again) and prepares
 * the measurement (efflux-measure.h) off the UI thread. After each edit a job is scheduled once
 * per main-loop turn (so a burst of motion events makes one job) and runs in a GTask worker on a
 * copy of the dossier: outline changes update that lobe's sums by difference (the pixels that
 * entered or left the mask), velocity ranges and assumptions only re-finish, source position,
 * clip or cube changes prepare again. A newer edit cancels a running preparation and replaces
 * it. During a drag (edits with a merge id) the jobs leave out the broken power-law fit of the
 * mass-velocity spectrum, which the ledger does not show and which is most of a finish; once no
 * edit came for 120 ms a complete finish follows (efflux_document_is_measuring stays TRUE until
 * then). "measured" is emitted on the main thread with each new result
 * (efflux_document_get_result).
 *
 * Signals:
 *   changed (const char *group): the dossier changed; group is the key-file group of the last
 *     change ("Lobe blue-1", "Source", ...), or NULL after a load, undo of several groups, etc.
 *   measured (): a new result is available. */

#define EFFLUX_TYPE_DOCUMENT (efflux_document_get_type ())
G_DECLARE_FINAL_TYPE (EffluxDocument, efflux_document, EFFLUX, DOCUMENT, GObject)

/* Merge ids: 0 never merges; any other value merges consecutive commands with the same id. */
guint          efflux_document_new_merge_id      (void);

EffluxDocument *efflux_document_load             (const char      *path,
                                                  GError         **error);
/* Takes the dossier. */
EffluxDocument *efflux_document_new_for_dossier  (EffluxDossier   *dossier);

/* The current dossier. It is replaced by every edit: do not keep the pointer across edits. */
const EffluxDossier *efflux_document_get_dossier (EffluxDocument  *self);
const char     *efflux_document_get_path         (EffluxDocument  *self);
gboolean        efflux_document_get_modified     (EffluxDocument  *self);
gboolean        efflux_document_can_undo         (EffluxDocument  *self);
gboolean        efflux_document_can_redo         (EffluxDocument  *self);
/* Number of commands on the undo stack. */
guint           efflux_document_get_n_undo       (EffluxDocument  *self);

gboolean        efflux_document_undo             (EffluxDocument  *self);
gboolean        efflux_document_redo             (EffluxDocument  *self);

/* Save to path (NULL: the document's own path); on success the document is unmodified and its
 * path is the one written. */
gboolean        efflux_document_save             (EffluxDocument  *self,
                                                  const char      *path,
                                                  GError         **error);
/* Save As: write to path, a new place, with the dossier's file paths ([Cube ID] path, [Review]
 * reviewed) rewritten to name the same files from there (efflux_dossier_save_as); the undo and
 * redo history's paths follow, so undo keeps naming the same files. On success the document is
 * unmodified, its path and folder are the new ones; on error nothing changes. */
gboolean        efflux_document_save_as          (EffluxDocument  *self,
                                                  const char      *path,
                                                  GError         **error);

/* Generic edit: set (value != NULL) or remove (value == NULL) one key. */
gboolean        efflux_document_set_key          (EffluxDocument  *self,
                                                  const char      *group,
                                                  const char      *key,
                                                  const char      *value,
                                                  guint            merge_id,
                                                  GError         **error);
/* Several keys as one command (one undo step): groups[i], keys[i], values[i] for i < n_keys
 * (a NULL value removes the key). Added for the Review sheet and the Sources list. */
gboolean        efflux_document_set_keys         (EffluxDocument     *self,
                                                  guint               n_keys,
                                                  const char * const *groups,
                                                  const char * const *keys,
                                                  const char * const *values,
                                                  guint               merge_id,
                                                  GError            **error);

/* Lobes */
gboolean        efflux_document_set_lobe_polygon (EffluxDocument  *self,
                                                  const char      *lobe,
                                                  const double    *ra_deg,
                                                  const double    *dec_deg,
                                                  gsize            n_vertices,
                                                  guint            merge_id,
                                                  GError         **error);
gboolean        efflux_document_set_lobe_velocity (EffluxDocument *self,
                                                   const char     *lobe,
                                                   double          v1_kms,
                                                   double          v2_kms,
                                                   guint           merge_id,
                                                   GError        **error);
gboolean        efflux_document_set_lobe_kind    (EffluxDocument  *self,
                                                  const char      *lobe,
                                                  EffluxLobeKind   kind,
                                                  GError         **error);
gboolean        efflux_document_set_lobe_cube    (EffluxDocument  *self,
                                                  const char      *lobe,
                                                  const char      *cube_id,
                                                  GError         **error);
/* A new lobe named "blue-N" or "red-N" (the first free N); returns its name, NULL on error. */
char           *efflux_document_add_lobe         (EffluxDocument  *self,
                                                  EffluxLobeKind   kind,
                                                  const char      *cube_id,
                                                  const double    *ra_deg,
                                                  const double    *dec_deg,
                                                  gsize            n_vertices,
                                                  double           v1_kms,
                                                  double           v2_kms,
                                                  GError         **error);
gboolean        efflux_document_remove_lobe      (EffluxDocument  *self,
                                                  const char      *lobe,
                                                  GError         **error);

/* The source marker */
gboolean        efflux_document_set_source_position (EffluxDocument *self,
                                                     double          ra_deg,
                                                     double          dec_deg,
                                                     guint           merge_id,
                                                     GError        **error);

/* Set (n_vertices >= 2) or remove (n_vertices == 0) the cut `name`. */
gboolean        efflux_document_set_cut          (EffluxDocument  *self,
                                                  const char      *name,
                                                  const char      *cube_id,
                                                  const double    *ra_deg,
                                                  const double    *dec_deg,
                                                  gsize            n_vertices,
                                                  double           width_arcsec,
                                                  guint            merge_id,
                                                  GError         **error);

/* Measurement */
void            efflux_document_load_cubes_async (EffluxDocument      *self,
                                                  GCancellable        *cancellable,
                                                  GAsyncReadyCallback  callback,
                                                  gpointer             user_data);
gboolean        efflux_document_load_cubes_finish (EffluxDocument  *self,
                                                   GAsyncResult    *result,
                                                   GError         **error);
/* Use cubes already in memory (id -> EffluxCube *; taken, with its destroy functions) instead of
 * reading them: the measurement is prepared in a worker as after a load. FALSE when cubes are
 * loaded or loading already. */
gboolean        efflux_document_set_cubes        (EffluxDocument  *self,
                                                  GHashTable      *cubes);
/* The cube `id` once loaded (owned by the document), or NULL. */
const EffluxCube *efflux_document_get_cube       (EffluxDocument  *self,
                                                  const char      *id);
/* The latest measurement, or NULL. */
const EffluxMeasureResult *efflux_document_get_result (EffluxDocument *self);
/* The last measurement error message, or NULL. */
const char     *efflux_document_get_measure_error (EffluxDocument *self);
/* TRUE while a measurement job is scheduled or running. */
gboolean        efflux_document_is_measuring     (EffluxDocument  *self);

G_END_DECLS
