/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"
#include "efflux-pv.h"
#include "efflux-dossier.h"

G_BEGIN_DECLS

/* Kinematics shown in the Cut view: the Hubble-law age of a position-velocity slope, slope units,
 * and where the source falls on a cut.
 *
 * Hubble-law flow (REFERENCES.md 1.10, item 1): every parcel moves at v = r / t0 from the source,
 * so gas on the axis shows v_LOS = x tan(alpha) / t0, with x the projected offset along the axis
 * and alpha the angle of the axis to the plane of the sky. With i measured from the line of sight
 * (CONTRACT.md's convention: 0 = pole-on, 90 = in the plane of the sky), tan(alpha) = 1 / tan(i)
 * and
 *     t0 = 1 / (tan(i) x |dv/dx|),
 * dv/dx being the slope of the line in the PV diagram (observed velocity per projected length).
 *
 * Angular to linear slopes: at a distance of d pc, 1 arcsec spans d au (the definition of the
 * parsec, IAU 2015 Resolution B2: 1 pc = 648000 / pi au), i.e. d x pi / 648000 pc. */

/* km/s per arcsec at d pc -> km/s per pc. NaN unless d is finite and > 0. */
double efflux_kinematics_slope_per_pc     (double slope_kms_per_arcsec,
                                           double distance_pc);
/* km/s per pc -> km/s per arcsec at d pc (the inverse). NaN unless d is finite and > 0. */
double efflux_kinematics_slope_per_arcsec (double slope_kms_per_pc,
                                           double distance_pc);

/* The Hubble-law age t0 in years (Julian, EFFLUX_YR) of a PV slope dv/dx in km/s per pc, with i
 * in degrees from the line of sight. The sign of the slope does not matter (one lobe on each
 * side). +infinity for a zero slope; NaN when i is not strictly between 0 and 90 degrees (pole-on
 * there is no projected length, in the sky plane no line-of-sight velocity) or an argument is NaN. */
double efflux_hubble_age_yr               (double slope_kms_per_pc,
                                           double inclination_deg);

/* The inverse: the (positive) slope in km/s per pc that gives an age t0 (yr) at inclination i.
 * NaN under the same conditions, and for an age that is not finite and > 0. */
double efflux_hubble_slope_for_age        (double age_yr,
                                           double inclination_deg);

/* The position of a sky point (0-based pixel coordinates of the cut's grid cube) along a cut:
 * the point of the cut's sample polyline nearest to it, projected onto the segment between
 * neighbouring samples. *offset_arcsec is that point's offset along the cut (the same scale as the
 * PV's offset axis: sample i at i x offset_step_arcsec), *distance_arcsec how far the point lies
 * from the cut (in pixels x offset_step_arcsec). FALSE when the cut has no samples. */
gboolean efflux_kinematics_offset_on_cut  (const EffluxPv *pv,
                                           double          px,
                                           double          py,
                                           double         *offset_arcsec,
                                           double         *distance_arcsec);

/* The noise of one PV voxel of a cube for contour levels: the median over channels of the cube's
 * per-channel rms (K). It is that of a single voxel, so it overstates the noise of a cut averaged
 * across a width (the across-samples are correlated by the beam, so no simple sqrt(n) applies):
 * contours in its multiples are conservative. NaN when the cube has no finite rms > 0. */
double   efflux_kinematics_pv_sigma       (const EffluxCube *cube);

/* A dossier's [Cut NAME] made through one of its cubes (the cut's own cube when cube_id is NULL),
 * with the source placed on it: the first steps of every cut analysis. Errors name the dossier,
 * the group and the key. Clear with efflux_dossier_cut_pv_clear. */
typedef struct
{
  const EffluxDossierCube *dc;                 /* the cube's dossier entry (borrowed) */
  EffluxCube              *cube;
  EffluxPv                *pv;
  double                   source_offset_arcsec; /* the source's offset along the cut */
} EffluxDossierCutPv;

/* The dossier's [Cut NAME] (the last one of that name), or NULL with the error
 * "DOSSIER: [Cut NAME]: no such cut in the dossier". */
const EffluxDossierCut *efflux_kinematics_find_cut (const EffluxDossier  *dossier,
                                                    const char           *cut_name,
                                                    GError              **error);

gboolean efflux_dossier_cut_pv       (const EffluxDossier *dossier,
                                      const char          *cut_name,
                                      const char          *cube_id,
                                      EffluxDossierCutPv  *out,
                                      GError             **error);
void     efflux_dossier_cut_pv_clear (EffluxDossierCutPv  *cut_pv);

G_END_DECLS
