/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"

G_BEGIN_DECLS

/* Position-velocity cuts (CONTRACT.md section 1, "PV output FITS").
 *
 * The path is a polyline of vertices given in ICRS degrees, turned into 0-based pixel positions of
 * the cube with efflux_cube_icrs_to_pixel; between vertices the path is STRAIGHT IN PIXEL SPACE
 * (not a great circle: the difference is far below a pixel over any map a cube holds).
 *
 * Samples along the path lie at whole-pixel arc lengths s = 0, 1, 2, ... <= L from the first vertex
 * (L the path's length in pixels), measured in cube pixels and continuing through the vertices; a
 * sample at s uses the direction of the segment that holds s (the later one on a vertex).
 * Across the path, at each sample, the cube is sampled at whole-pixel offsets j = -k..k along the
 * perpendicular, k = floor(width / (2 x pixel size)) (+1e-9 against rounding; width 0: k = 0).
 * Each sample is bilinear in the cube's pixel grid (neighbours with weight 0 are not read, so a NaN
 * voxel there does not spread); a sample outside the map (x < 0, x > nx - 1, likewise y) is left out,
 * and the value is the mean of the samples across that are inside; NaN when none is. A NaN voxel
 * with a non-zero weight makes that channel NaN.
 *
 * The pixel size is the geometric mean of |CDELT1| and |CDELT2| (they are equal on most cubes;
 * when they differ, one "pixel along the path" is a pixel-space unit and the arcsec step written
 * is this mean). Offsets: sample i lies at i x pixel size arcsec from the first vertex.
 *
 * data is nchan rows of n_offsets: data[k * n_offsets + i] (FITS order: axis 1 = offset). */
typedef struct
{
  gsize   n_offsets;           /* samples along the path: FITS axis 1 */
  gsize   nchan;               /* channels: FITS axis 2 */
  float  *data;                /* data[k * n_offsets + i] */
  double  offset_step_arcsec;  /* pixel size of the cube that defines the grid */
  double  width_arcsec;
  int     half_width;          /* k */
  double *velocity;            /* nchan channel centres, km/s (the grid cube's) */
  double  v0_kms, dv_kms;      /* centre of channel 0 and the signed step */
  double *x, *y;               /* n_offsets sample positions: 0-based pixels of the grid cube */
  double *ra, *dec;            /* their ICRS degrees (NaN without a projection) */
  gsize   n_vertices;
  double *vertex_ra, *vertex_dec;  /* the path as given (NaN when given in pixels) */
  char   *source;              /* the sampled cube's file, or NULL */
} EffluxPv;

/* "RA1,DEC1;RA2,DEC2[;...]" (degrees, '.' decimal point) -> 2 x n values ra, dec, ra, dec, ...
 * Errors name the text and the vertex. At least two vertices. */
gboolean  efflux_pv_path_parse (const char  *text,
                                double     **ra_dec,
                                gsize       *n_vertices,
                                GError     **error);

/* A cut through one cube along a path in ICRS degrees (n_vertices (ra, dec) pairs). */
EffluxPv *efflux_pv_cut        (const EffluxCube  *cube,
                                const double      *ra_dec,
                                gsize              n_vertices,
                                double             width_arcsec,
                                GError           **error);

/* The same along a path given in 0-based pixel coordinates of the cube. */
EffluxPv *efflux_pv_cut_pixels (const EffluxCube  *cube,
                                const double      *px,
                                const double      *py,
                                gsize              n_vertices,
                                double             width_arcsec,
                                GError           **error);

void      efflux_pv_free       (EffluxPv *pv);

/* Write axis 1 OFFSET arcsec (0 at the first vertex), axis 2 VRAD km/s, BUNIT bunit ("K" when
 * NULL), with the path and width in the header (PVWIDTH, PVHALFW, PVNVERT, PVRAn/PVDECn). */
gboolean  efflux_pv_write_fits (const EffluxPv  *pv,
                                const char      *bunit,
                                const char      *path,
                                GError         **error);

/* Cuts through several cubes on one grid, so tracers can be overlaid.
 * The first cube defines the offset grid (its pixels along the path) and the channels. Every
 * other cube is sampled at the same ICRS positions (each across-path sample of the first cube,
 * through the first cube's WCS to ICRS and the other cube's WCS to its pixels), bilinear in its
 * own grid, then linearly interpolated in velocity onto the first cube's channel centres (NaN
 * outside its own velocity range). cuts[i] belongs to cubes[i]; all share n_offsets, nchan,
 * offsets and velocities. */
typedef struct
{
  gsize      n_cubes;
  EffluxPv **cuts;
} EffluxPvSet;

EffluxPvSet *efflux_pv_set_new  (const EffluxCube * const *cubes,
                                 gsize                     n_cubes,
                                 const double             *ra_dec,
                                 gsize                     n_vertices,
                                 double                    width_arcsec,
                                 GError                  **error);
void         efflux_pv_set_free (EffluxPvSet *set);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxPv, efflux_pv_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxPvSet, efflux_pv_set_free)

G_END_DECLS
