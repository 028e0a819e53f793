/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-dossier.h"

G_BEGIN_DECLS

/* Crash safety for unsaved edits.
 *
 * The recovery file of a dossier lies beside it: "NAME.efflux" -> "NAME.efflux.recovery" (same
 * directory, so relative cube paths mean the same). It holds the whole edited dossier (the
 * efflux_dossier_to_data text) after one first comment line "# Efflux recovery file of NAME, ..."
 * and is always written atomically (temporary file, fsync, rename): a crash at any moment leaves
 * either the previous recovery file or the new one, never a partial one. The dossier itself is
 * never touched by any of these calls except efflux_recovery_save_dossier.
 *
 * How the program uses it:
 *   - after an edit, write within 2 s: e.g. a 1 s timer that calls efflux_recovery_write when the
 *     dossier has changed since the last write (so the file is at most 2 s behind);
 *   - on opening NAME.efflux, efflux_recovery_exists tells whether unsaved edits were left by a
 *     crash; offer them: efflux_recovery_load gives the edited dossier (its path is NAME.efflux,
 *     so saving it replaces the dossier), or efflux_recovery_remove discards them;
 *   - saving: efflux_recovery_save_dossier saves the dossier and then removes the recovery file
 *     (or call efflux_dossier_save, then efflux_recovery_remove). Closing without saving, when
 *     the user says so: efflux_recovery_remove. */

/* "NAME.efflux.recovery" beside the dossier (newly allocated). */
char          *efflux_recovery_path   (const char *dossier_path);

/* Write the dossier's current state to its recovery file (atomically). dossier_path is the
 * dossier's own file (normally dossier->path). */
gboolean       efflux_recovery_write  (EffluxDossier  *dossier,
                                       const char     *dossier_path,
                                       GError        **error);

/* The same for a dossier's text already made (efflux_dossier_to_data on the caller's thread), so
 * that the write, with its fsync, can run on another thread. */
gboolean       efflux_recovery_write_data (const char  *dossier_path,
                                           const char  *data,
                                           GError     **error);

/* TRUE when a recovery file exists; *mtime_us (may be NULL) gets its modification time
 * (microseconds since 1970). */
gboolean       efflux_recovery_exists (const char *dossier_path,
                                       gint64     *mtime_us);

/* TRUE when the recovery file exists and the dossier was modified after it (saved by another
 * program or by hand since the crash): the program should still offer the edits, but say that
 * recovering them replaces newer work in the dossier. */
gboolean       efflux_recovery_older_than_dossier (const char *dossier_path);

/* The dossier as the recovery file holds it, with path = dossier_path (messages name the
 * recovery file). The recovery file stays until removed. */
EffluxDossier *efflux_recovery_load   (const char  *dossier_path,
                                       GError     **error);

/* Remove the recovery file; TRUE also when there was none. */
gboolean       efflux_recovery_remove (const char  *dossier_path,
                                       GError     **error);

/* Save the dossier to its own path (efflux_dossier_save), then remove the recovery file. */
gboolean       efflux_recovery_save_dossier (EffluxDossier  *dossier,
                                             GError        **error);

G_END_DECLS
