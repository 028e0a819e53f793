/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Weighted linear least squares for a polynomial y = c[0] + c[1] x + ... + c[order] x^order.
 * sigma may be NULL (unit weights); otherwise every sigma[i] must be finite and > 0, and point i
 * gets weight 1/sigma[i]^2. Points with a non-finite x or y are skipped. coef has order + 1 slots;
 * cov (may be NULL) has (order + 1)^2 slots, row-major: the UNSCALED covariance (A^T W A)^-1, as
 * numpy.polyfit(..., w=1/sigma, cov='unscaled') gives. chi2 (may be NULL) = sum w (y - fit)^2;
 * n_used (may be NULL) counts the points used. Returns FALSE when there are fewer points than
 * order + 1, order is outside [0, 4], or the normal matrix is singular. */
gboolean efflux_polyfit_weighted (const double *x,
                                  const double *y,
                                  const double *sigma,
                                  guint         n,
                                  int           order,
                                  double       *coef,
                                  double       *cov,
                                  double       *chi2,
                                  guint        *n_used);

/* Single power law of the mass spectrum dM/dv = A |v|^-gamma (Msun per km/s, |v - vsys| in km/s),
 * fitted as log10(dM/dv) = log10 A - gamma log10 |v| by weighted linear least squares; the error
 * of log10(dM/dv) is err / (dM/dv ln 10). Channels with dM/dv <= 0, |v| <= 0, or a non-finite
 * value are skipped. */
typedef struct
{
  double   gamma;              /* slope: dM/dv ~ |v|^-gamma */
  double   gamma_err;          /* 1 sigma */
  double   log10_a;            /* log10 of A, A in Msun/(km/s) at |v| = 1 km/s */
  double   log10_a_err;        /* 1 sigma */
  double   cov_log10a_gamma;   /* covariance of log10 A and gamma */
  double   chi2;
  int      dof;                /* n_used - 2 */
  guint    n_used;
  gboolean errors_scaled;      /* TRUE when no per-channel errors were given: the covariance is
                                * then scaled by chi2/dof (unit weights), as numpy.polyfit does */
} EffluxPowerLawFit;

/* err may be NULL (unit weights in log space, errors from the scatter). Needs 2 usable channels
 * with errors, 3 without. Returns FALSE when no fit is possible; all fields are then NaN/0 except
 * n_used. */
gboolean efflux_mvfit_single (const double      *v_kms,
                              const double      *dmdv,
                              const double      *dmdv_err,
                              guint              n,
                              EffluxPowerLawFit *fit);

/* dM/dv of a single power-law fit at |v| (km/s). */
double   efflux_mvfit_single_eval (const EffluxPowerLawFit *fit,
                                   double                   v_kms);

/* Broken power law, continuous at the break v_b:
 *   log10(dM/dv) = log10 A_b - gamma1 log10(|v| / v_b)  for |v| <  v_b
 *                  log10 A_b - gamma2 log10(|v| / v_b)  for |v| >= v_b
 * For a fixed v_b the model is linear in (log10 A_b, gamma1, gamma2); v_b is found by a grid
 * search (EFFLUX_MVFIT_BREAK_GRID points, uniform in log |v|, between the 2nd and the
 * (n-1)th used channel so that at least two channels lie on each side), then refined by a golden-
 * section search on the profile chi2(v_b) around the best grid point.
 *
 * Uncertainties: gamma1_err, gamma2_err and log10_ab_err come from the curvature of chi2 in all
 * four parameters at the minimum (the linearised Gauss-Newton covariance, so they include the
 * uncertainty of v_b). v_b's interval is the profile-likelihood interval
 * chi2(v_b) <= chi2_min + 1 (x chi2/dof when errors_scaled); vb_err is half its width, and
 * vb_lo/vb_hi are its ends (clipped to the searched range; then vb_bounded is FALSE). In 1000
 * seeded trials (40 channels, 10% errors) the 1-sigma intervals held the truth in 69.7% (v_b),
 * 68.9% (gamma1) and 69.2% (gamma2) of the fits; tests/test-mvfit.c checks this coverage. */
#define EFFLUX_MVFIT_BREAK_GRID 400

typedef struct
{
  double   gamma1, gamma1_err;     /* slope below the break */
  double   gamma2, gamma2_err;     /* slope above the break */
  double   vb_kms, vb_err;         /* break velocity and half-width of its 1-sigma interval */
  double   vb_lo, vb_hi;           /* the 1-sigma interval of v_b */
  gboolean vb_bounded;             /* FALSE when the interval reached the searched range's edge */
  double   log10_ab, log10_ab_err; /* log10 dM/dv at the break */
  double   chi2;
  int      dof;                    /* n_used - 4 */
  guint    n_used;
  gboolean errors_scaled;
} EffluxBrokenPowerLawFit;

/* Needs at least 5 usable channels. Returns FALSE (fields NaN/0) when no fit is possible. */
gboolean efflux_mvfit_broken (const double            *v_kms,
                              const double            *dmdv,
                              const double            *dmdv_err,
                              guint                    n,
                              EffluxBrokenPowerLawFit *fit);

double   efflux_mvfit_broken_eval (const EffluxBrokenPowerLawFit *fit,
                                   double                         v_kms);

/* The mass hidden in an excluded velocity range [v_lo, v_hi] (|v - vsys| in km/s, 0 < v_lo <
 * v_hi): the integral of the fitted single power law, A (v_hi^(1-gamma) - v_lo^(1-gamma)) /
 * (1 - gamma) (A ln(v_hi/v_lo) at gamma = 1), with its 1-sigma error propagated from the
 * covariance of (log10 A, gamma). This is an estimate to report in its own column (Dunham et al.
 * 2014, ApJ 783, 29 discuss this correction); this module never adds it to any mass.
 * A natural choice: v_lo = half a channel width (or a floor the user gives), v_hi = the lobe's
 * inner velocity limit. */
typedef struct
{
  double v_lo_kms;
  double v_hi_kms;
  double mass_msun;
  double mass_err_msun;
} EffluxHiddenMass;

gboolean efflux_mvfit_hidden_mass (const EffluxPowerLawFit *fit,
                                   double                   v_lo_kms,
                                   double                   v_hi_kms,
                                   EffluxHiddenMass        *out);

G_END_DECLS
