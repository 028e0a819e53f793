/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-contour.h"
#include "efflux-cube.h"
#include "efflux-dossier.h"

G_BEGIN_DECLS

/* Wing contours: for each lobe of a dossier, the wing map of a tracer cube over the lobe's velocity
 * range (moment 0 over the whole map, efflux_moment_map, K km/s) and its contours at multiples of
 * that map's noise.
 *
 * The noise of a moment-0 map summed over N channels of independent noise rms_k each is
 *   sigma = |dv| x sqrt(sum_k rms_k^2)
 * (propagation of independent errors through a sum; Taylor 1997, An Introduction to Error Analysis,
 * ch. 3, from memory). rms_k is the dossier's [Cube ID] rms-k when given, else the cube's own
 * per-channel estimate (cube->rms, efflux_cube_estimate_noise), as efflux-measure does; both in
 * the cube's scale. Lobes with the same kind and range share one set. */
typedef struct
{
  EffluxLobeKind  kind;
  char           *lobes;       /* the lobes with this range, "blue-1, blue-2" */
  double          v1_kms, v2_kms;
  gsize           n_channels;  /* channels in the range */
  double          sigma;       /* noise of the wing map, K km/s */
  gsize           n_levels;
  double         *multiples;   /* n_levels multiples of sigma */
  double         *levels;      /* n_levels levels, K km/s */
  GPtrArray      *lines;       /* EffluxPolyline *, in pixel coordinates of the grid asked for */
} EffluxWingSet;

void       efflux_wing_set_free (EffluxWingSet *set);

/* The noise of a moment-0 map of cube over [v1, v2] (the formula above). dc (may be NULL) gives
 * rms-k. NaN when no channel lies in the range or no channel noise is known (> 0).
 * *n_channels (may be NULL) receives the channel count. */
double     efflux_wing_noise    (const EffluxCube        *cube,
                                 const EffluxDossierCube *dc,
                                 double                   v1_kms,
                                 double                   v2_kms,
                                 gsize                   *n_channels);

/* The wing sets of every lobe of dossier (of at least 3 vertices) on the tracer cube `cube`
 * (dossier cube cube_id, for rms-k; may be NULL), at levels multiples[i] x sigma. The contour
 * vertices are given in 0-based pixel coordinates of grid (another cube's sky grid, e.g. the map
 * shown: each vertex goes through ICRS; a vertex with no projection there is NaN, NaN: lift the
 * pen), or of cube
 * when grid is NULL or cube itself. A lobe whose range holds no channel of the cube or whose
 * noise is unknown is left out with a note in *skipped (may be NULL; a newly allocated text, one
 * line per lobe, NULL when none is). Returns a GPtrArray of EffluxWingSet * (blue sets first),
 * NULL with an error when cancelled or a map cannot be made. */
GPtrArray *efflux_wing_contours (const EffluxDossier  *dossier,
                                 const char           *cube_id,
                                 const EffluxCube     *cube,
                                 const EffluxCube     *grid,
                                 const double         *multiples,
                                 gsize                 n_multiples,
                                 char                **skipped,
                                 GCancellable         *cancellable,
                                 GError              **error);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxWingSet, efflux_wing_set_free)

G_END_DECLS
