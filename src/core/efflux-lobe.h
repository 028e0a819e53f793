/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"

G_BEGIN_DECLS

/* A lobe outline turned into the set of cube pixels whose centre lies inside it.
 *
 * The outline (ICRS degrees) goes through efflux_cube_icrs_to_pixel to a polygon in 0-based pixel
 * coordinates, where pixel (x, y) has its centre at (x, y). It is filled by scanlines with the
 * even-odd rule. Rule on the edge: along each pixel row y, an edge counts when
 * ymin <= y < ymax (half-open), and a crossing span [xa, xb) holds the pixel centres
 * xa <= x < xb. So a centre exactly on a left or lower edge is inside, on a right or upper edge
 * outside (in pixel coordinates), and two outlines that share an edge never both hold a pixel.
 * Outlines whose edges cross each other are refused. */
typedef struct
{
  gsize    nx, ny;        /* the cube's map size */
  gsize    n_pixels;      /* pixels inside */
  guint32 *index;         /* n_pixels pixel indices y * nx + x, increasing */
  double  *px, *py;       /* the outline in 0-based pixel coordinates */
  gsize    n_vertices;
} EffluxLobeMask;

/* what names the outline in messages, e.g. "demo.efflux: [Lobe blue-1] polygon". */
EffluxLobeMask *efflux_lobe_mask_new  (const EffluxCube *cube,
                                       const double     *ra_deg,
                                       const double     *dec_deg,
                                       gsize             n_vertices,
                                       const char       *what,
                                       GError          **error);
/* The same from a polygon already in 0-based pixel coordinates. */
EffluxLobeMask *efflux_lobe_mask_new_pixels (gsize         nx,
                                             gsize         ny,
                                             const double *px,
                                             const double *py,
                                             gsize         n_vertices,
                                             const char   *what,
                                             GError      **error);
void            efflux_lobe_mask_free (EffluxLobeMask *mask);

/* TRUE when the closed polygon has two edges that cross or touch (other than neighbours at their
 * shared vertex). */
gboolean        efflux_polygon_self_crossing (const double *px,
                                              const double *py,
                                              gsize         n_vertices);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxLobeMask, efflux_lobe_mask_free)

G_END_DECLS
