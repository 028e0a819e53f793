/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* A sample: a folder of dossiers (*.efflux), one per source.
 *
 * The state of a source comes from a group of our own in its dossier (all keys optional; the
 * group is kept on load and save like any other):
 *
 *   [Status]
 *   # when the source was last measured (UTC, ISO 8601) and with which Efflux version
 *   measured=2026-12-02T00:41:07Z
 *   measured-with=0.1.0
 *   # who reviewed the lobes, and when (UTC, ISO 8601)
 *   reviewed-by=A. Colleague
 *   reviewed=2026-12-03T09:12:00Z
 *
 * State: reviewed when reviewed-by is set (not empty); else measured when measured is set; else
 * not measured. `efflux-cli measure --mark` writes measured and measured-with. */

typedef enum
{
  EFFLUX_SOURCE_NOT_MEASURED,
  EFFLUX_SOURCE_MEASURED,
  EFFLUX_SOURCE_REVIEWED,
} EffluxSourceState;

typedef struct
{
  char              *path;          /* the dossier file */
  char              *file_name;     /* its name in the folder */
  char              *name;          /* [Source] name; the file name when absent or unreadable */
  EffluxSourceState  state;
  char              *measured;      /* [Status] values, NULL when absent */
  char              *measured_with;
  char              *reviewed_by;
  char              *reviewed;
  char              *problem;       /* NULL, or why the file could not be read (one line) */
} EffluxSampleEntry;

/* The dossiers (*.efflux, regular files) of a folder, full paths, sorted by file name (bytewise,
 * so the order is the same on every machine). Errors: the folder cannot be read. */
GPtrArray         *efflux_sample_list        (const char  *folder,
                                              GError     **error);

/* Every dossier of the folder with its state (EffluxSampleEntry *, sorted as above). A dossier
 * that cannot be read is listed with `problem` set, not an error. */
GPtrArray         *efflux_sample_scan        (const char  *folder,
                                              GError     **error);
void               efflux_sample_entry_free  (EffluxSampleEntry *entry);

/* The state a dossier's key file records. */
EffluxSourceState  efflux_sample_state       (GKeyFile    *keyfile);
const char        *efflux_source_state_name  (EffluxSourceState state);   /* "not measured" ... */

/* Record in the key file that the source was measured now (UTC) with this version. */
void               efflux_sample_set_measured (GKeyFile   *keyfile,
                                               GDateTime  *when);
/* Record a review (reviewer must not be empty). */
void               efflux_sample_set_reviewed (GKeyFile   *keyfile,
                                               const char *reviewer,
                                               GDateTime  *when);

/* Load the dossier at path (comments kept), set_measured, save it atomically. */
gboolean           efflux_sample_mark_measured (const char  *path,
                                                GDateTime   *when,
                                                GError     **error);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxSampleEntry, efflux_sample_entry_free)

G_END_DECLS
