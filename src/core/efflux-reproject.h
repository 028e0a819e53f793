/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"

G_BEGIN_DECLS

/* Context images: a 2-D image from another FITS file, with its own sky WCS, resampled onto a
 * cube's sky grid (to show under the lobes, e.g. a continuum or an infrared image).
 *
 * Reading: the image is returned as an EffluxCube with nchan = 1 (velocity[0] = 0, dv = 0), its
 * values as the file gives them after BSCALE/BZERO (no unit conversion; bunit as found; BLANK and
 * NaN are NaN), its sky WCS in cube->sky with the frame (ICRS, FK5, FK4 or galactic) read as
 * efflux_cube_load reads it, so efflux_cube_pixel_to_icrs / _icrs_to_pixel work on it. Any
 * celestial projection wcslib knows is accepted. Axes other than the two celestial ones are read
 * at their first pixel: degenerate axes (length 1), or the first plane of a cube (noted in
 * cube->notes). hdu 0: the primary HDU, or the first image extension with two axes or more.
 * Errors name the file and the card: no image, no celestial axes, a WCS wcslib refuses, an
 * unsupported frame. */
EffluxCube *efflux_image_load      (const char        *path,
                                    int                hdu,
                                    GError           **error);

/* Reprojection onto target's sky grid: for each target pixel centre (x, y), its ICRS position
 * (efflux_cube_pixel_to_icrs), then the source's 0-based pixel position (u, v) through the
 * source's own WCS (efflux_cube_icrs_to_pixel), then bilinear interpolation between the four
 * source pixels around (u, v) in src's first plane (channel 0). A point outside the source's
 * pixel-centre extent [0, nx - 1] x [0, ny - 1], with no valid projection, or with a NaN among the
 * source pixels it takes a share from, is NaN. This is the rule of
 * scipy.ndimage.map_coordinates (order=1, mode='constant', cval=nan).
 *
 * out: target->nx * target->ny floats, x fastest. Rows are shared among the processors;
 * cancellable (may be NULL) is checked between rows. Errors: no sky WCS in either, or no target
 * pixel that falls on the source image ("ctx.fits: CRVAL1/CRVAL2 = ...: the image does not
 * overlap the map of cube.fits"); *n_inside (may be NULL) receives the number of target pixels
 * that fall on the source image. */
gboolean    efflux_reproject_image (const EffluxCube  *src,
                                    const EffluxCube  *target,
                                    float             *out,
                                    gsize             *n_inside,
                                    GCancellable      *cancellable,
                                    GError           **error);

G_END_DECLS
