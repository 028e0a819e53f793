/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-dossier.h"
#include "efflux-pv.h"

G_BEGIN_DECLS

/* Inclination from a cut along the outflow axis: a wind-driven shell (Lee et al. 2000, ApJ 542,
 * 925: the parabola z = C R^2 in a Hubble flow v = r / t0) fitted to the PV emission of each lobe.
 *
 * Model (REFERENCES.md 1.10 item 2). With a = 90 deg - i the angle of the axis to the sky plane, a
 * point at signed radius rho in the plane of the axis and the line of sight is seen at
 *     X(rho) = C rho^2 cos a - rho sin a            (arcsec from the source along the lobe)
 *     U(rho) = k (C rho^2 sin a + rho cos a)        (km/s from vsys, away from the observer for a
 *                                                    red lobe, towards it for a blue one)
 * with k = 1 / t0 in km/s per arcsec (t0 = d x 1 au / k at the distance d in pc), C per arcsec.
 *
 * Data. The PV pixels above a threshold (default: 5 x the PV noise, and at least 5% of the peak;
 * it chooses the lobes' pixels, their colours and the spurs) with |v - vsys| >= vmin (default:
 * the smallest |v - vsys| the dossier's lobe ranges admit; this leaves out the ambient line). Offsets are measured from the source's position projected on the
 * cut; the pixels on each side of it form one lobe, whose colour is the sign of its
 * emission-weighted mean velocity.
 *
 * Objective: a forward model of the PV image, least squares over pixels. For trial parameters
 * (a, k, C and the shell's length z_max along the axis) the shell is sampled uniformly in z (0 to
 * z_max) and in azimuth (the mass per unit length along the axis assumed constant, as in
 * efflux-synth's shells), each sample at (X, U) above, weighted by a Gaussian across the cut
 * (sigma^2 = beam sigma^2 + width^2 / 12), spread along the cut by the beam's Gaussian and between
 * the two nearest channels. The model image M is scaled by the least-squares amplitude A and
 * sum (D - A M)^2 is minimised over the pixels of the lobe's side with |v - vsys| >= vmin (all of
 * them, not only those above the threshold; the image fit assumes optically thin emission).
 * Start: the best point of a grid (i every 5 deg, k over two decades around the data's velocity
 * over offset extent, five shell widths at the tip); then Nelder-Mead, restarted once.
 * Only the curve in the plane of the axis and the line of sight is REFERENCES.md's formula; the
 * rest of the shell falls inside it in the PV, which is why fitting the emission's distance to
 * the curve alone was found to bias the inclination towards 90 deg on beam-smeared cuts.
 *
 * Uncertainties: from the Jacobian of the image residuals, (J^T J)^-1 x chi^2 / (N_eff - 4), with
 * N_eff the number of pixels divided by the pixels per beam along the offset (neighbouring pixels
 * are not independent: a common practice, not a rigorous count). They are statistical only: on
 * the synthetic shells of tests/test-shellfit.c the inclination comes back within 2 deg with a
 * quoted error of 0.1 to 0.8 deg, so the systematic part (other lobe's emission near the source,
 * departure from a constant mass per length) dominates.
 *
 * Bow-shock spurs (REFERENCES.md 1.10 item 3). After the fit, each offset column of a lobe where
 * more than 50% of the flux above the threshold lies in pixels the scaled model fills to less than
 * a quarter, and whose velocity extent is at least 30% of the lobe's, is off the shell;
 * neighbouring such columns form a spur, reported with its offsets and velocities, and the lobe is
 * fitted again without them. A spur is where the wind-driven shell fails: the sign of a jet-driven
 * bow shock.
 *
 * The emission-weighted rms distance of the pixels above the threshold to the fitted curve (in
 * resolution units: the beam along the offset, one channel along the velocity) is reported as a
 * measure of how well the ridge follows a parabola. */

typedef struct
{
  double threshold_k;       /* NaN: default above */
  double vmin_kms;          /* NaN: default above */
  double noise_k;           /* PV noise; NaN: estimated by the caller (dossier path) or none */
} EffluxShellfitOptions;

typedef struct
{
  double x_min_arcsec, x_max_arcsec;   /* offsets from the source along the cut (signed) */
  double v_min_kms, v_max_kms;         /* LSR */
  double flux_fraction;                /* of the lobe's emission above the threshold */
} EffluxShellSpur;

typedef struct
{
  gboolean        ok;
  char           *message;             /* why the fit failed (ok FALSE), else NULL */
  int             side;                /* +1: offsets above the source's, -1: below */
  EffluxLobeKind  kind;                /* blue (approaching) or red */
  guint           n_pixels;
  double          inclination_deg, inclination_err_deg;   /* from the line of sight */
  double          age_yr, age_err_yr;                     /* t0 */
  double          c_per_arcsec, c_err_per_arcsec;
  double          kms_per_arcsec;                         /* k = 1 / t0 in PV units */
  double          rms_distance;        /* emission-weighted rms of d_j (resolution units) */
  double          z_max_arcsec;        /* the shell's length along the axis (forward model) */
  double          rho_min, rho_max;    /* the model's range of rho: +- sqrt (z_max / C) (arcsec) */
  GArray         *spurs;               /* EffluxShellSpur */
  double          z_min_arcsec;        /* where the shell starts along the axis (forward model) */
} EffluxShellLobeFit;

typedef struct
{
  guint              n_lobes;          /* lobes with emission: 0, 1 or 2 */
  EffluxShellLobeFit lobes[2];
  /* both lobes together: inverse-variance means of the lobes that were fitted (NaN if none) */
  double             inclination_deg, inclination_err_deg;
  double             age_yr, age_err_yr;
  double             c_per_arcsec, c_err_per_arcsec;
  /* the frame */
  double             source_offset_arcsec;   /* the source on the PV's offset axis */
  double             vsys_kms, distance_pc;
  double             threshold_k, vmin_kms;
  double             res_x_arcsec, res_v_kms;
} EffluxShellFit;

/* Fit a PV diagram. source_offset_arcsec is the source's position on the offset axis;
 * res_x_arcsec the resolution along it (the beam). Errors: EFFLUX_ERROR_INPUT with a message
 * naming what is missing (no pixel above the threshold ...). */
EffluxShellFit *efflux_shellfit_pv      (const EffluxPv               *pv,
                                         double                        source_offset_arcsec,
                                         double                        vsys_kms,
                                         double                        distance_pc,
                                         double                        res_x_arcsec,
                                         const EffluxShellfitOptions  *options,
                                         GError                      **error);

/* The dossier's [Cut NAME] through its cube (loaded here). options may be NULL. */
EffluxShellFit *efflux_shellfit_dossier (const EffluxDossier          *dossier,
                                         const char                   *cut_name,
                                         const EffluxShellfitOptions  *options,
                                         GError                      **error);

/* The same through a cube already in memory: the one of the cut's [Cube] entry (its noise and
 * the lobes' ranges give the defaults, as above); the numbers are those of
 * efflux_shellfit_dossier. For the desktop program, which keeps its cubes. */
EffluxShellFit *efflux_shellfit_dossier_cube (const EffluxDossier          *dossier,
                                              const char                   *cut_name,
                                              const EffluxCube             *cube,
                                              const EffluxShellfitOptions  *options,
                                              GError                      **error);

void            efflux_shellfit_free    (EffluxShellFit *fit);

/* Points of lobe `lobe`'s fitted curve for drawing over the PV view: n points evenly in rho over
 * the range the emission covers, as offsets on the PV's offset axis (arcsec, the same axis as
 * EffluxPv: sample i at i x step) and LSR velocities (km/s). Returns the number written (0 when
 * that lobe was not fitted). */
gsize           efflux_shellfit_curve   (const EffluxShellFit *fit,
                                         guint                 lobe,
                                         gsize                 n,
                                         double               *offset_arcsec,
                                         double               *velocity_kms);

/* The model itself (REFERENCES.md 1.10 item 2), for any caller: x and v of signed radius rho. */
void            efflux_shell_model      (double  rho,
                                         double  inclination_deg,
                                         double  c_per_arcsec,
                                         double  kms_per_arcsec,
                                         double *x_arcsec,
                                         double *u_kms);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxShellFit, efflux_shellfit_free)

G_END_DECLS
