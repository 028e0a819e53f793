/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"
#include "efflux-maps.h"

G_BEGIN_DECLS

/* Moment maps streamed straight from a FITS file, without building the cube in memory.
 *
 * For the common case of efflux_cube_load's fast path (uncompressed, unscaled BITPIX = -32, the
 * spectral axis the slowest file axis, the longitude axis the fastest): the channels of the range
 * are read plane by plane with pread (), a block of rows at a time, on two threads (each takes
 * whole blocks of rows through every channel, so each pixel sums its channels in the cube's
 * order), byte-swapped, converted to K as the loader converts them (the same float rounding) and
 * summed per pixel in double exactly as efflux_moment_map sums a loaded cube. Moment 2 reads the
 * block's channels a second time (from the page cache) for the sum about the pixel's own moment 1.
 * The map is bitwise the one of efflux_cube_load (channel_subset over the same range) followed by
 * efflux_moment_map without a clip (tests/test-momentstream.c asserts it). A clip needs the
 * channel noise of the whole range: not streamed (load the cube). */

typedef enum
{
  EFFLUX_MOMENT_STREAM_DONE,         /* the map is made */
  EFFLUX_MOMENT_STREAM_UNSUPPORTED,  /* the file's data are not of the streamed kind, or no channel
                                      * lies in the range: load the cube (efflux_cube_load +
                                      * efflux_moment_map), which also gives the errors */
  EFFLUX_MOMENT_STREAM_FAILED,       /* error set (the loader's header errors, read errors, no
                                      * finite value in the range, cancelled) */
} EffluxMomentStreamResult;

/* Whether the data described by layout (efflux_cube_load's options->layout) can be streamed. */
gboolean                 efflux_moment_stream_applies (const EffluxCube           *header,
                                                       const EffluxCubeFileLayout *layout);

/* The map of order over the channels of [v1, v2] (efflux_cube_channel_range on header) from the
 * file header->path, header being efflux_cube_load's header-only cube of that file and layout its
 * layout (efflux_moment_stream_applies TRUE). out: nx * ny floats, image[y * nx + x]. Errors:
 * one line naming the file. cancellable may be NULL. */
gboolean                 efflux_moment_stream_map     (const EffluxCube           *header,
                                                       const EffluxCubeFileLayout *layout,
                                                       EffluxMomentOrder           order,
                                                       double                      v1,
                                                       double                      v2,
                                                       GCancellable               *cancellable,
                                                       float                      *out,
                                                       GError                    **error);

/* All in one: the header-only load of path (HDU hdu, 0 as efflux_cube_load; the channels of
 * [v1, v2] only), then the map. DONE: *header (data NULL, for the map's FITS header) and *map
 * (nx * ny floats, g_free) set. UNSUPPORTED: nothing set, no error. FAILED: error set. */
EffluxMomentStreamResult efflux_moment_stream_file    (const char                 *path,
                                                       int                         hdu,
                                                       EffluxMomentOrder           order,
                                                       double                      v1,
                                                       double                      v2,
                                                       GCancellable               *cancellable,
                                                       EffluxCube                **header,
                                                       float                     **map,
                                                       GError                    **error);

G_END_DECLS
