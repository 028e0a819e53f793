/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"

G_BEGIN_DECLS

/* One read of each cube file for the whole program: the window's map and the document's
 * measurement share the cube of one file. Cubes are counted references, keyed by the file
 * (device, inode, size and modification time, so that a file written again is read again) and
 * by the load options that change the data (HDU, channel subset); the noise option is not part
 * of the key (efflux-measure estimates the noise of a cube read without it when it needs it).
 * A cube leaves the store with its last reference. Thread-safe: workers load, the main thread
 * releases. */

/* As efflux_cube_load; the cube is shared: give it back with efflux_cube_store_release. A thread
 * asking for a file another thread is reading waits for that read (or for its own cancellable)
 * and shares the cube; if that read fails it reads the file itself. */
EffluxCube *efflux_cube_store_load    (const char                  *path,
                                       const EffluxCubeLoadOptions *options,
                                       GCancellable                *cancellable,
                                       EffluxProgressFunc           progress,
                                       gpointer                     progress_data,
                                       GError                     **error);
/* Another reference to a cube of the store; returns cube. */
EffluxCube *efflux_cube_store_ref     (EffluxCube *cube);
/* NULL is allowed. */
void        efflux_cube_store_release (EffluxCube *cube);
/* Cubes in the store now, and how many files were read since the start (for tests). */
guint       efflux_cube_store_count   (void);
guint       efflux_cube_store_reads   (void);

G_END_DECLS
