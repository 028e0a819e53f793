/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"

G_BEGIN_DECLS

/* Lobes for other tools: FITS masks and IVOA STC-S polygons.
 *
 * FITS masks (efflux_export_masks): one file, one mask per lobe so that lobes that overlap on the
 * sky (a blue and a red lobe seen along the axis) keep their own pixels; a labelled image could
 * not hold both. Layout:
 *   primary HDU   no data (NAXIS = 0); ORIGIN = 'Efflux', OBJECT = the source name, NLOBES
 *   extension i   the i-th lobe of the dossier (file order), an IMAGE of BITPIX = 8:
 *                 1 inside the lobe, 0 outside. EXTNAME = the lobe's name; LOBEKIND = 'blue' or
 *                 'red'; LOBECUBE = the cube id; LOBEV1, LOBEV2 = the velocity range (km/s).
 *     2-D: NAXIS1, NAXIS2 = the map of the lobe's cube, with that cube's sky WCS (as wcslib writes
 *          it). A pixel is 1 when its centre lies inside the outline (efflux-lobe.h rule).
 *     3-D: the same plus axis 3 = the cube's channels: CTYPE3 'VRAD', CUNIT3 'm/s', CRPIX3 1,
 *          CRVAL3 = the first channel's centre, CDELT3 = the channel step (Greisen et al. 2006,
 *          A&A 446, 747), SPECSYS 'LSRK', RESTFRQ. A voxel is 1 when its pixel is inside and its
 *          channel-centre velocity lies in [LOBEV1, LOBEV2] (CONTRACT.md 4, without clipping).
 *   Each lobe uses the grid of its own cube, so lobes drawn on different cubes may differ in size.
 *
 * STC-S (efflux_export_stcs): a text file, per lobe (file order) one comment line
 *   "# LOBE-NAME kind=blue cube=co velocity-kms=V1;V2"
 * then one line "Polygon ICRS TOPOCENTER ra1 dec1 ra2 dec2 ..." (IVOA note "STC-S: Space-Time
 * Coordinate (STC) Metadata Linear String Implementation", Rots & Demleitner), degrees with 10
 * decimals. The vertices are the dossier's, in its order or reversed so that the outline runs
 * counter-clockwise as seen from inside the sphere with RA increasing to the left, as the STC
 * data model asks of polygons (IVOA STC 1.30 schema documentation). '#' lines are not STC-S:
 * a reader takes the lines that do not start with '#'. */

typedef enum
{
  EFFLUX_EXPORT_MASKS_2D,
  EFFLUX_EXPORT_MASKS_3D,
  EFFLUX_EXPORT_STCS,
} EffluxExportKind;

/* Parse "2d", "3d" or "stcs"; FALSE when it is none of them. */
gboolean  efflux_export_kind_from_string (const char       *text,
                                          EffluxExportKind *kind);

/* Write the masks of every lobe. cubes: id -> EffluxCube * holding at least each lobe's cube
 * (efflux_measure_load_cubes gives them). Refuses a dossier without lobes. */
gboolean  efflux_export_masks (const EffluxDossier *dossier,
                               GHashTable          *cubes,
                               gboolean             three_d,
                               const char          *path,
                               GError             **error);

/* One STC-S polygon line (no newline) of an outline in ICRS degrees, oriented as above. */
char     *efflux_stcs_polygon (const double *ra_deg,
                               const double *dec_deg,
                               gsize         n_vertices);

/* The STC-S text of every lobe, and the same written atomically to a file. */
char     *efflux_export_stcs_text (const EffluxDossier *dossier);
gboolean  efflux_export_stcs (const EffluxDossier *dossier,
                              const char          *path,
                              GError             **error);

G_END_DECLS
