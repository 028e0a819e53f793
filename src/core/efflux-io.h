/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Outputs are written to a temporary file beside the final one, then fsync'ed and renamed over
 * it, so a failed or interrupted write never leaves a partial file behind.
 *
 *   g_autofree char *tmp = efflux_output_begin (path, &error);   // creates the empty temp file
 *   ... write tmp ...
 *   efflux_output_commit (tmp, path, &error);   // or efflux_output_abort (tmp) on failure
 */
char     *efflux_output_begin   (const char  *final_path,
                                 GError     **error);
gboolean  efflux_output_commit  (const char  *tmp_path,
                                 const char  *final_path,
                                 GError     **error);
void      efflux_output_abort   (const char  *tmp_path);

/* Write a whole text file atomically. */
gboolean  efflux_write_file_atomic (const char  *path,
                                    const char  *contents,
                                    gssize       length,
                                    GError     **error);

/* Bytes of memory that can be had now (MemAvailable), or 0 when unknown. */
guint64   efflux_memory_available (void);

G_END_DECLS
