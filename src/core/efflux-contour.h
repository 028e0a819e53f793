/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-error.h"

G_BEGIN_DECLS

/* Contours of a 2-D float image (a map or a PV diagram): marching squares.
 *
 * The image is nx * ny floats, x fastest: image[y * nx + x]; the grid point (x, y) is the pixel
 * centre, and contour vertices are given in the same 0-based pixel coordinates.
 *
 * Each cell between four neighbouring grid points is classified by which corners are at or above
 * the level (value >= level); the crossing on an edge is placed by linear interpolation between
 * its two corners. Saddle cells (two opposite corners above) are resolved by the centre average
 * (the mean of the four corners): at or above the level, the two high corners are joined through
 * the cell. A cell with a NaN corner has no contour, so NaNs break lines.
 * The segments are joined across cells into polylines: closed when they close on themselves
 * (the first vertex is not repeated at the end), open when they end at the image's border or at
 * a NaN cell. */
typedef struct
{
  double   level;
  gboolean closed;
  gsize    n;         /* vertices */
  double  *xy;        /* x0, y0, x1, y1, ... */
} EffluxPolyline;

void       efflux_polyline_free (EffluxPolyline *line);

/* The polylines of one level (a GPtrArray of EffluxPolyline *, owning them; empty when the level
 * is not crossed). */
GPtrArray *efflux_contour_trace (const float *image,
                                 gsize        nx,
                                 gsize        ny,
                                 double       level);

/* The polylines of several levels, in the order of the levels. */
GPtrArray *efflux_contour_trace_levels (const float  *image,
                                        gsize         nx,
                                        gsize         ny,
                                        const double *levels,
                                        gsize         n_levels);

/* Levels as multiples of a noise: levels[i] = multiples[i] x sigma. Returns n doubles, or NULL
 * with an error when sigma is not a finite number > 0 or a multiple is not finite. */
double    *efflux_contour_levels_sigma (double         sigma,
                                        const double  *multiples,
                                        gsize          n,
                                        GError       **error);

/* n levels spaced evenly in log between lo and hi inclusive (n >= 2; n = 1 gives lo). NULL with
 * an error unless 0 < lo < hi, both finite (lo == hi allowed only with n = 1). */
double    *efflux_contour_levels_log (double    lo,
                                      double    hi,
                                      gsize     n,
                                      GError  **error);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxPolyline, efflux_polyline_free)

G_END_DECLS
