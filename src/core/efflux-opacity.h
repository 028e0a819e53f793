/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Opacity correction of a 12CO lobe from the 12CO/13CO brightness ratio per channel
 * (REFERENCES.md 1.5; the procedure of Arce & Goodman 2001, ApJ 554, 132 and Dunham et al. 2014,
 * ApJ 783, 29):
 *
 *  1. R_k = S12_k / S13_k in the channels where S13_k >= threshold x sigma13_k and S12_k > 0
 *     ("detected"), with sigma_R = R sqrt((sigma12/S12)^2 + (sigma13/S13)^2).
 *  2. A polynomial R(u) = c0 + c1 u + c2 u^2, u = v - vsys (km/s), fitted to the detected ratios by
 *     weighted least squares, weights 1/sigma_R^2. Order 2 needs 3 detected channels; with 2 the
 *     fit is a straight line, with 1 a constant (the measured ratio), with 0 there is no fit and no
 *     correction anywhere. The message says when the order was lowered.
 *  3. The fit is evaluated in every channel, extrapolating where 13CO is faint. Where the fitted
 *     R <= 1 (unphysical: the 12CO line cannot be fainter than 13CO in LTE) it is clamped to the
 *     smallest detected ratio above 1, and the message says so.
 *  4. Where the fitted R >= X: tau = 0 and C_tau = 1. Else tau = efflux_tau_from_ratio (R_fit, X)
 *     and C_tau = tau / (1 - exp(-tau)).
 *
 * The caller calls this once per lobe (the blue and red lobes get their own curves), with the
 * channels of that lobe's velocity range. The caller multiplies each channel's 12CO mass by
 * ctau[k].
 *
 * Caveat: the weights come from the measured S12 and S13, so channels where 13CO is only just
 * above the threshold (signal-to-noise 3-5) carry a first-order error that is too optimistic
 * when 13CO fluctuates up. In seeded trials of the set-up of tests/test-opacity.c (parabola,
 * 3-sigma threshold) all three coefficients fell within 3 sigma of the truth in 99.0% of 2000
 * fits at a 13CO peak signal-to-noise of 800, and in 96.4% of 1000 fits at 200 (>= 99.2%
 * expected for Gaussian errors). The coefficient covariance is the propagated (unscaled) one; multiply by
 * chi2/dof for an empirical error. */

typedef enum
{
  EFFLUX_RATIO_DETECTED      = 1 << 0, /* 13CO detected: ratio[k] measured and used in the fit */
  EFFLUX_RATIO_EXTRAPOLATED  = 1 << 1, /* 13CO below threshold: the fit was evaluated here */
  EFFLUX_RATIO_NO_CORRECTION = 1 << 2, /* C_tau = 1: fitted R >= X, or no fit at all */
  EFFLUX_RATIO_CLAMPED       = 1 << 3, /* the fitted R was <= 1 and was clamped (see r_floor) */
} EffluxRatioFlags;

typedef struct
{
  double isotope_ratio;    /* X = [12C/13C] (e.g. 62); > 1 */
  double vsys_kms;         /* the fit variable is u = v - vsys */
  double threshold_sigma;  /* 13CO detection threshold in sigma13 units (e.g. 3) */
  int    max_order;        /* polynomial order wanted, 0..2 (2: the usual parabola) */
} EffluxRatioParams;

typedef struct
{
  guint     n_channels;
  /* The fitted curve R(u) = coef[0] + coef[1] u + coef[2] u^2, u = v - vsys in km/s, before the
   * clamp. order = -1 when there was no fit (no detected channel); unused coefficients are 0. */
  int       order;
  double    coef[3];
  double    cov[3][3];       /* unscaled covariance of coef (errors as propagated) */
  double    chi2;            /* of the fit; dof = n_detected - (order + 1) */
  int       dof;
  guint     n_detected;
  double    vsys_kms;
  double    isotope_ratio;
  double    r_floor;         /* the clamp: smallest detected ratio > 1 (NaN when none) */
  double    v_detected_min;  /* velocity range of the detected channels (NaN when none): the */
  double    v_detected_max;  /* fit is an interpolation inside it, an extrapolation outside */

  /* Per channel, n_channels each. */
  double   *v_kms;           /* copy of the input velocities */
  double   *ratio;           /* measured S12/S13; NaN where not detected */
  double   *ratio_err;       /* its 1-sigma error; NaN where not detected */
  double   *ratio_fit;       /* fitted ratio after the clamp; NaN without a fit */
  double   *tau;             /* 12CO optical depth; 0 where no correction */
  double   *ctau;            /* C_tau = tau / (1 - exp(-tau)); 1 where no correction */
  guint    *flags;           /* EffluxRatioFlags */

  char     *message;         /* notes for the user (order lowered, clamps, ...), or NULL */
} EffluxRatioFit;

/* v_kms, s12, s13, sigma12, sigma13: n channels each (sums over the lobe's pixels and their noise).
 * Non-finite values mark a channel as not detected. Returns NULL with an EFFLUX_ERROR_INPUT error
 * only for invalid parameters (X <= 1, threshold < 0, max_order outside 0..2, n = 0); a lobe
 * without any detected 13CO channel is not an error (order = -1, no correction, a message). */
EffluxRatioFit *efflux_ratio_fit_new  (const double             *v_kms,
                                       const double             *s12,
                                       const double             *s13,
                                       const double             *sigma12,
                                       const double             *sigma13,
                                       guint                     n,
                                       const EffluxRatioParams  *params,
                                       GError                  **error);
void            efflux_ratio_fit_free (EffluxRatioFit           *fit);

/* The fitted ratio curve at any velocity v (km/s), for plotting: the polynomial with the same
 * clamp as the channels (NaN without a fit). */
double          efflux_ratio_fit_eval (const EffluxRatioFit     *fit,
                                       double                    v_kms);
/* 1-sigma error of the unclamped polynomial at v, from the coefficient covariance. */
double          efflux_ratio_fit_eval_err (const EffluxRatioFit *fit,
                                           double                v_kms);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxRatioFit, efflux_ratio_fit_free)

G_END_DECLS
