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
 * (a, k, C, the shell's length z_max along the axis and the fraction f = z_min / z_max of it
 * missing at its base, 0 <= f <= 0.8) the shell is sampled uniformly in z (z_min to z_max) and in
 * azimuth (the mass per unit length along the axis assumed constant, as in efflux-synth's shells),
 * each sample at (X, U) above, weighted by a Gaussian across the cut, spread along the cut by a
 * Gaussian and between the two nearest channels. The Gaussians hold the beam (sigma_b = FWHM /
 * 2.3548) and the cut's own sampling: its bilinear interpolation (a triangle one pixel p wide:
 * variance p^2 / 6, along and across) and, across, the mean of the 2 h + 1 samples at whole pixels
 * (variance p^2 h (h + 1) / 3), so sigma_along^2 = sigma_b^2 + p^2 / 6 and sigma_across^2 =
 * sigma_b^2 + p^2 (h (h + 1) / 3 + 1 / 6). The base f matters: a model that starts at the source
 * when the emission does not (a base left out by vmin, confused with the cloud or never swept up)
 * biased C by +13% and t0 by -3% on the synthetic shells; with f fitted the biases left are those
 * listed in tests/test-shellfit.c. The model image M is scaled by the least-squares amplitude A and
 * sum (D - A M)^2 is minimised over the pixels of the lobe's side with |v - vsys| >= vmin (all of
 * them, not only those above the threshold; the image fit assumes optically thin emission).
 * Start: the best point of a grid (i every 5 deg, k over two decades around the data's velocity
 * over offset extent, five shell widths at the tip); then Nelder-Mead, restarted once.
 * Only the curve in the plane of the axis and the line of sight is REFERENCES.md's formula; the
 * rest of the shell falls inside it in the PV, which is why fitting the emission's distance to
 * the curve alone was found to bias the inclination towards 90 deg on beam-smeared cuts.
 *
 * Uncertainties: a sandwich covariance for correlated residuals, (J^T J)^-1 B (J^T J)^-1 x
 * n / (n - 5), J the Jacobian of the image residuals r over the n pixels fitted and
 * B = sum over pixel pairs (a, b) within two beams along the offset and 2 channels along the
 * velocity of w_ab r_a r_b J_a J_b^T, w_ab the product of triangular (Bartlett) weights of the two
 * lags (Newey & West 1987, Econometrica 55, 703, in two dimensions). No noise level is assumed:
 * the residuals give it, with its correlations (the beam's in an interferometer cube, the cut's
 * interpolation, and model mismatch correlated along the ridge, which is thereby counted too).
 * The earlier form, (J^T J)^-1 chi^2 / (n / pixels per beam - 4), overstated the noise part by
 * about 5x on uncorrelated noise and ignored the mismatch. Calibration (tests/test-shellfit-
 * coverage.c, 180 fits of noisy synthetic shells at 30, 50 and 70 deg): 56% of the fits lie
 * within 1 sigma of the mean of their truth's fits (68% expected: the errors are still about
 * 1.3x small) and 39% within 1 sigma of the truth itself, the rest being the model's bias there
 * (i 0.1 to 0.3 deg, t0 about 1%, C up to 2%), which the errors do not include.
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
