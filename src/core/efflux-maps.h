/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"
#include "efflux-lobe.h"

G_BEGIN_DECLS

/* Maps and spectra of a cube.
 *
 * Images are nx * ny floats, x fastest: image[y * nx + x], on the cube's own sky grid.
 *
 * A velocity range [v1, v2] selects the channels whose centre velocity lies inside it, inclusive,
 * either order of v1 and v2 and either channel order (efflux_cube_channel_range).
 *
 * Definitions, per pixel, over the selected channels (NaN voxels are left out everywhere, and so
 * are voxels below clip_sigma x the channel rms when clip_sigma > 0: a voxel is kept when
 * T >= clip_sigma x rms[k]):
 *   moment 0 = sum(T) x |dv|                          K km/s
 *   moment 1 = sum(T v) / sum(T)                      km/s (intensity-weighted velocity)
 *   moment 2 = sqrt(sum(T (v - m1)^2) / sum(T))       km/s (velocity dispersion)
 *   peak     = max(T)                                 K
 * A pixel with no kept voxel is NaN in every map; moments 1 and 2 are NaN where sum(T) <= 0,
 * and moment 2 is NaN where the weighted variance is negative (possible with negative T),
 * beyond rounding. */
typedef enum
{
  EFFLUX_MOMENT_0,
  EFFLUX_MOMENT_1,
  EFFLUX_MOMENT_2,
  EFFLUX_MOMENT_PEAK,
} EffluxMomentOrder;

/* "0", "1", "2", "peak" -> order. FALSE for anything else. */
gboolean     efflux_moment_order_parse (const char        *text,
                                        EffluxMomentOrder *order);
const char  *efflux_moment_order_name  (EffluxMomentOrder  order);
/* BUNIT of a map: "K km/s", "km/s", "km/s", "K". */
const char  *efflux_moment_order_bunit (EffluxMomentOrder  order);

/* One moment map computed directly from the voxels of the range: O(pixels x channels in range),
 * rows shared among the processors. Used by the CLI (one range, no cache worth building), for the
 * peak map and for clipped maps (a clip cannot use prefix sums). clip_sigma > 0 needs cube->rms.
 * Moment 2 here takes two passes (sum about the pixel's own moment 1), so it is accurate even where
 * sum(T) is small against the noise. out: nx * ny floats. Errors name the cube's file. */
gboolean     efflux_moment_map (const EffluxCube  *cube,
                                EffluxMomentOrder  order,
                                double             v1,
                                double             v2,
                                double             clip_sigma,
                                float             *out,
                                GError           **error);

/* Cumulative sums along the spectral axis, so that a moment 0, 1 or 2 map over a new range costs
 * O(pixels), not O(voxels).
 *
 * Design (memory vs speed): per pixel, double-precision prefix sums of T, T u and T u^2
 * (u = v - v_ref, v_ref = the middle channel's velocity, which keeps T u^2 free of cancellation)
 * and a 32-bit count of finite voxels, stored only at block boundaries, every
 * EFFLUX_MOMENT_CACHE_BLOCK channels, as planes [boundary][pixel] so that one range reads each
 * plane it needs sequentially. The part of a range between a boundary and the range's end is
 * summed directly from the cube, from the NEAREST boundary (adding or subtracting), so at most
 * BLOCK / 2 channels per end and pixel. NaN voxels count as 0 and are not counted.
 * Memory: 28 bytes per pixel per boundary = 28 / BLOCK bytes per voxel, i.e. 0.22x the float
 * cube for BLOCK = 32 (0.23 GiB for a 512 x 512 x 1024 cube), so the cube and its sums stay
 * within DESIGN.md's 1.3x. Cost of a new range: 4 sequential plane reads (2 for moment 0's sum,
 * 2 for its count) plus at most BLOCK / 2 contiguous floats per end and pixel read from the cube
 * (prefetched ahead), in threads over rows. The planes are allocated in transparent huge pages
 * where the system allows (fewer page faults when building, fewer TLB misses when reading); the
 * random line per range end and pixel is the dominant cost, and it is cheaper again when the
 * cube's own buffer lies in huge pages (tests/bench/bench-maps.c measures both).
 * Moment 2 from prefix sums is one-pass, (sum T u^2 - (sum T u)^2 / sum T) / sum T: where sum T
 * is small against the noise (no line in the range) it loses digits; where the line is detected it
 * agrees with the two-pass value to float precision (tests/test-maps.c checks 1e-5).
 * The peak map and clipped maps cannot use prefix sums: efflux_moment_cache_map computes the
 * peak directly (efflux_moment_map), and clipped maps go through efflux_moment_map.
 * The cache keeps a pointer to the cube: the cube must outlive it and not change. */
#define EFFLUX_MOMENT_CACHE_BLOCK 32

typedef struct _EffluxMomentCache EffluxMomentCache;

/* EFFLUX_MOMENT_CACHE_FAST adds a channel-major copy of the cube (planes[k][pixel]): the
 * remainders of a new range are then whole planes read in order (at most BLOCK / 2 per end, 1 MiB
 * each on 512 x 512) instead of one random cache line per range end and pixel, and the cube is not
 * touched. The sums are the same (double, NaN-aware), so are the maps. It costs 1x the cube more
 * (1.22x with the compact sums), above DESIGN.md's memory budget: for callers that have the memory
 * (efflux_memory_available) and want the latency. The default is compact. */
typedef enum
{
  EFFLUX_MOMENT_CACHE_COMPACT = 0,
  EFFLUX_MOMENT_CACHE_FAST = 1 << 0,
} EffluxMomentCacheFlags;

/* The compact cache (flags EFFLUX_MOMENT_CACHE_COMPACT). */
EffluxMomentCache *efflux_moment_cache_new   (const EffluxCube   *cube,
                                              GError            **error);
EffluxMomentCache *efflux_moment_cache_new_full (const EffluxCube        *cube,
                                                 EffluxMomentCacheFlags   flags,
                                                 GError                 **error);
gboolean           efflux_moment_cache_is_fast  (const EffluxMomentCache *cache);
void               efflux_moment_cache_free  (EffluxMomentCache  *cache);
/* Bytes held by the cache (its planes). */
guint64            efflux_moment_cache_bytes (const EffluxMomentCache *cache);
const EffluxCube  *efflux_moment_cache_cube  (const EffluxMomentCache *cache);

gboolean           efflux_moment_cache_map   (const EffluxMomentCache  *cache,
                                              EffluxMomentOrder         order,
                                              double                    v1,
                                              double                    v2,
                                              float                    *out,
                                              GError                  **error);

/* A wing map for a lobe: moment 0 over [v1, v2] (K km/s), NaN outside the lobe's pixels
 * (NULL = the whole map). Blue and red wings are two calls with the lobes' ranges and masks. */
gboolean           efflux_moment_cache_wing_map (const EffluxMomentCache  *cache,
                                                 double                    v1,
                                                 double                    v2,
                                                 const EffluxLobeMask     *lobe,
                                                 float                    *out,
                                                 GError                  **error);

/* Spectra. out: nchan doubles in the cube's channel order (velocities cube->velocity). */

/* The spectrum at a 0-based pixel (NaN stays NaN). FALSE with an error outside the map. */
gboolean     efflux_spectrum_at_pixel (const EffluxCube  *cube,
                                       gssize             x,
                                       gssize             y,
                                       double            *out,
                                       GError           **error);

typedef enum
{
  EFFLUX_SPECTRUM_MEAN,  /* per channel: mean of the finite values of the pixels inside */
  EFFLUX_SPECTRUM_SUM,   /* per channel: sum of the finite values (K x pixels) */
} EffluxSpectrumKind;

/* Spectrum over a lobe outline's pixels (efflux_lobe_mask_new: pixel centres inside the outline).
 * A channel with no finite value inside is NaN. Returns the number of pixels inside (0: every
 * channel NaN). */
gsize        efflux_spectrum_over_lobe (const EffluxCube     *cube,
                                        const EffluxLobeMask *lobe,
                                        EffluxSpectrumKind    kind,
                                        double               *out);

/* The same for an outline given as n_vertices ICRS (ra, dec) pairs in degrees; errors as
 * efflux_lobe_mask_new's (fewer than 3 vertices, crossing edges, no projection). */
gboolean     efflux_spectrum_over_outline (const EffluxCube    *cube,
                                           const double        *ra_dec,
                                           gsize                n_vertices,
                                           EffluxSpectrumKind   kind,
                                           double              *out,
                                           gsize               *n_inside,
                                           GError             **error);

/* Run func (begin, end, data) over [0, n) split into contiguous chunks, one per processor (at
 * most 8, at least min_chunk items each), in threads; returns when all are done. */
typedef void (*EffluxRangeFunc) (gsize    begin,
                                 gsize    end,
                                 gpointer data);
void         efflux_parallel_for (gsize           n,
                                  gsize           min_chunk,
                                  EffluxRangeFunc func,
                                  gpointer        data);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxMomentCache, efflux_moment_cache_free)

G_END_DECLS
