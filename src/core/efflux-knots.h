/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-dossier.h"
#include "efflux-pv.h"

G_BEGIN_DECLS

/* Ejection history: the knots along a jet cut (SiO, or high-velocity CO).
 *
 * Method. The cut's PV diagram is integrated over velocity (channels with |v - vsys| >= vmin,
 * default 0) into a profile along the cut, I(offset) in K km/s. Knots are its local maxima above a
 * threshold (default: 5 x the profile's noise, and at least 5% of its peak), stronger ones first,
 * each one suppressing weaker maxima closer than one beam. A knot's offset is refined by a parabola
 * through the profile's three samples around the maximum; its velocity is the brightness-weighted
 * mean over the channels of that column (interpolated between the two nearest columns) where the
 * brightness exceeds half the column's peak (and |v - vsys| >= vmin).
 *
 * Dynamical age with the inclination i from the line of sight (REFERENCES.md 1.10, Hubble-law
 * and ballistic knots): the true distance is |offset| / sin i, the true speed |v - vsys| / cos i,
 *     age = (|offset| d / sin i) / (|v - vsys| / cos i)
 * with |offset| d in au (d the distance in pc, 1 arcsec at 1 pc = 1 au). Intervals between
 * successive ejections are the differences of ages of neighbouring knots on the same side. */

typedef struct
{
  int             side;               /* +1: offsets above the source's, -1: below */
  EffluxLobeKind  kind;               /* blue (v < vsys) or red */
  double          offset_arcsec;      /* signed, from the source along the cut */
  double          velocity_kms;       /* LSR */
  double          v_obs_kms;          /* |v - vsys| */
  double          intensity_k_kms;    /* the profile at the knot */
  double          age_yr;
  double          interval_yr;        /* since the next younger knot on the same side; NaN for the youngest */
} EffluxKnot;

typedef struct
{
  GArray *knots;                      /* EffluxKnot, by side (+1 first), then by age */
  double  source_offset_arcsec;       /* the source on the PV's offset axis */
  double  vsys_kms, distance_pc, inclination_deg;
  double  vmin_kms, threshold_k_kms;
} EffluxKnotList;

typedef struct
{
  double vmin_kms;                    /* NaN: 0 */
  double threshold_k_kms;             /* NaN: default above */
  double noise_k;                     /* per-channel noise of the PV (K); NaN: none known */
  double inclination_deg;             /* NaN: the dossier's fixed inclination (dossier path) */
} EffluxKnotOptions;

EffluxKnotList *efflux_knots_pv      (const EffluxPv           *pv,
                                      double                    source_offset_arcsec,
                                      double                    vsys_kms,
                                      double                    distance_pc,
                                      double                    inclination_deg,
                                      double                    res_x_arcsec,
                                      const EffluxKnotOptions  *options,
                                      GError                  **error);

/* The dossier's [Cut NAME] through cube cube_id (NULL: the cut's own cube). */
EffluxKnotList *efflux_knots_dossier (const EffluxDossier      *dossier,
                                      const char               *cut_name,
                                      const char               *cube_id,
                                      const EffluxKnotOptions  *options,
                                      GError                  **error);

void            efflux_knot_list_free (EffluxKnotList *list);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxKnotList, efflux_knot_list_free)

G_END_DECLS
