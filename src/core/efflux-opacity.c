/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Opacity correction per channel from the 12CO/13CO ratio (REFERENCES.md 1.5). */

#include "efflux-opacity.h"

#include "efflux-error.h"
#include "efflux-lte.h"
#include "efflux-mvfit.h"

#include <math.h>

void
efflux_ratio_fit_free (EffluxRatioFit *fit)
{
  if (fit == NULL)
    return;
  g_free (fit->v_kms);
  g_free (fit->ratio);
  g_free (fit->ratio_err);
  g_free (fit->ratio_fit);
  g_free (fit->tau);
  g_free (fit->ctau);
  g_free (fit->flags);
  g_free (fit->message);
  g_free (fit);
}

static double
poly_eval (const EffluxRatioFit *fit,
           double                u)
{
  return fit->coef[0] + u * (fit->coef[1] + u * fit->coef[2]);
}

double
efflux_ratio_fit_eval (const EffluxRatioFit *fit,
                       double                v_kms)
{
  double r;

  g_return_val_if_fail (fit != NULL, NAN);

  if (fit->order < 0 || !isfinite (v_kms))
    return NAN;
  r = poly_eval (fit, v_kms - fit->vsys_kms);
  if (r <= 1.0)
    r = fit->r_floor;
  return r;
}

double
efflux_ratio_fit_eval_err (const EffluxRatioFit *fit,
                           double                v_kms)
{
  double u, basis[3], var = 0.0;
  int i, j;

  g_return_val_if_fail (fit != NULL, NAN);

  if (fit->order < 0 || !isfinite (v_kms))
    return NAN;
  u = v_kms - fit->vsys_kms;
  basis[0] = 1.0;
  basis[1] = u;
  basis[2] = u * u;
  for (i = 0; i <= fit->order; i++)
    for (j = 0; j <= fit->order; j++)
      var += basis[i] * fit->cov[i][j] * basis[j];
  return sqrt (MAX (var, 0.0));
}

static void
note (GString    *msg,
      const char *format,
      ...) G_GNUC_PRINTF (2, 3);

static void
note (GString    *msg,
      const char *format,
      ...)
{
  va_list args;

  if (msg->len > 0)
    g_string_append (msg, "; ");
  va_start (args, format);
  g_string_append_vprintf (msg, format, args);
  va_end (args);
}

EffluxRatioFit *
efflux_ratio_fit_new (const double             *v_kms,
                      const double             *s12,
                      const double             *s13,
                      const double             *sigma12,
                      const double             *sigma13,
                      guint                     n,
                      const EffluxRatioParams  *params,
                      GError                  **error)
{
  g_autoptr(EffluxRatioFit) fit = NULL;
  g_autoptr(GString) msg = g_string_new (NULL);
  g_autofree double *u = NULL;
  g_autofree double *r = NULL;
  g_autofree double *sr = NULL;
  gboolean weighted = TRUE;
  guint k, m = 0, n_clamped = 0, n_floorless = 0;
  int order;

  g_return_val_if_fail (params != NULL, NULL);
  g_return_val_if_fail (error == NULL || *error == NULL, NULL);

  if (!(params->isotope_ratio > 1.0) || !isfinite (params->isotope_ratio))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "Assumptions: isotope-ratio = %g: the 12C/13C ratio must be above 1",
                   params->isotope_ratio);
      return NULL;
    }
  if (!(params->threshold_sigma >= 0.0) || !isfinite (params->threshold_sigma))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "opacity: 13CO detection threshold = %g sigma: must be 0 or more",
                   params->threshold_sigma);
      return NULL;
    }
  if (params->max_order < 0 || params->max_order > 2)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "opacity: ratio fit order = %d: must be 0, 1 or 2", params->max_order);
      return NULL;
    }
  if (!isfinite (params->vsys_kms))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "Source: vsys-kms is not a finite number: the ratio fit needs it");
      return NULL;
    }
  if (n == 0 || v_kms == NULL || s12 == NULL || s13 == NULL || sigma12 == NULL
      || sigma13 == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "opacity: the lobe has no channels to compare 12CO and 13CO in");
      return NULL;
    }

  fit = g_new0 (EffluxRatioFit, 1);
  fit->n_channels = n;
  fit->vsys_kms = params->vsys_kms;
  fit->isotope_ratio = params->isotope_ratio;
  fit->r_floor = NAN;
  fit->v_detected_min = NAN;
  fit->v_detected_max = NAN;
  fit->chi2 = NAN;
  fit->v_kms = g_memdup2 (v_kms, sizeof (double) * n);
  fit->ratio = g_new (double, n);
  fit->ratio_err = g_new (double, n);
  fit->ratio_fit = g_new (double, n);
  fit->tau = g_new (double, n);
  fit->ctau = g_new (double, n);
  fit->flags = g_new0 (guint, n);

  u = g_new (double, n);
  r = g_new (double, n);
  sr = g_new (double, n);

  /* 1. Measured ratios where 13CO is detected. */
  for (k = 0; k < n; k++)
    {
      gboolean detected = isfinite (v_kms[k]) && isfinite (s12[k]) && isfinite (s13[k])
                          && isfinite (sigma13[k]) && s12[k] > 0.0 && s13[k] > 0.0
                          && s13[k] >= params->threshold_sigma * sigma13[k];

      fit->ratio[k] = NAN;
      fit->ratio_err[k] = NAN;
      if (!detected)
        continue;

      fit->ratio[k] = s12[k] / s13[k];
      fit->ratio_err[k] = fit->ratio[k] * hypot (sigma12[k] / s12[k], sigma13[k] / s13[k]);
      fit->flags[k] |= EFFLUX_RATIO_DETECTED;
      if (!(isfinite (fit->ratio_err[k]) && fit->ratio_err[k] > 0.0))
        weighted = FALSE;

      u[m] = v_kms[k] - params->vsys_kms;
      r[m] = fit->ratio[k];
      sr[m] = fit->ratio_err[k];
      m++;

      if (fit->ratio[k] > 1.0 && !(fit->ratio[k] >= fit->r_floor))
        fit->r_floor = fit->ratio[k];
      if (!(v_kms[k] >= fit->v_detected_min))
        fit->v_detected_min = v_kms[k];
      if (!(v_kms[k] <= fit->v_detected_max))
        fit->v_detected_max = v_kms[k];
    }
  fit->n_detected = m;

  /* 2. The polynomial fit, lowering the order when there are too few channels (or the velocities
   * coincide so that the higher order is singular). */
  order = MIN (params->max_order, (int) m - 1);
  if (m > 0 && !weighted)
    note (msg, "some 13CO channels have zero or unknown noise: ratio fit unweighted");
  fit->order = -1;
  for (; order >= 0; order--)
    {
      double coef[3] = { 0.0, 0.0, 0.0 }, cov[9], chi2;
      guint used;
      int i, j;

      if (!efflux_polyfit_weighted (u, r, weighted ? sr : NULL, m, order, coef, cov, &chi2,
                                    &used))
        continue;
      fit->order = order;
      for (i = 0; i < 3; i++)
        {
          fit->coef[i] = i <= order ? coef[i] : 0.0;
          for (j = 0; j < 3; j++)
            fit->cov[i][j] = (i <= order && j <= order) ? cov[i * (order + 1) + j] : 0.0;
        }
      fit->chi2 = chi2;
      fit->dof = (int) used - (order + 1);
      break;
    }

  if (fit->order < 0)
    note (msg, "13CO is not detected above %g sigma in any channel: no opacity correction",
          params->threshold_sigma);
  else if (fit->order < params->max_order && m <= (guint) params->max_order)
    note (msg, "only %u channel%s with 13CO above %g sigma: ratio fit of order %d instead of %d",
          m, m == 1 ? "" : "s", params->threshold_sigma, fit->order, params->max_order);
  else if (fit->order < params->max_order)
    note (msg, "the %u channels with 13CO above %g sigma do not determine a polynomial of order "
          "%d (repeated velocities?): ratio fit of order %d", m, params->threshold_sigma,
          params->max_order, fit->order);

  /* 3.-4. Evaluate, clamp, invert. */
  for (k = 0; k < n; k++)
    {
      double rf;

      if (!(fit->flags[k] & EFFLUX_RATIO_DETECTED))
        fit->flags[k] |= EFFLUX_RATIO_EXTRAPOLATED;

      fit->tau[k] = 0.0;
      fit->ctau[k] = 1.0;
      if (fit->order < 0 || !isfinite (v_kms[k]))
        {
          fit->ratio_fit[k] = NAN;
          fit->flags[k] |= EFFLUX_RATIO_NO_CORRECTION;
          fit->flags[k] &= ~(guint) EFFLUX_RATIO_EXTRAPOLATED;
          continue;
        }

      rf = poly_eval (fit, v_kms[k] - params->vsys_kms);
      if (rf <= 1.0)
        {
          fit->flags[k] |= EFFLUX_RATIO_CLAMPED;
          n_clamped++;
          rf = fit->r_floor;
          if (!isfinite (rf))
            {
              n_floorless++;
              fit->ratio_fit[k] = NAN;
              fit->flags[k] |= EFFLUX_RATIO_NO_CORRECTION;
              continue;
            }
        }
      fit->ratio_fit[k] = rf;

      if (rf >= params->isotope_ratio)
        {
          fit->flags[k] |= EFFLUX_RATIO_NO_CORRECTION;
          continue;
        }
      fit->tau[k] = efflux_tau_from_ratio (rf, params->isotope_ratio);
      if (!(fit->tau[k] >= 0.0))
        {
          /* rf within rounding of 1: cannot be inverted */
          fit->tau[k] = 0.0;
          fit->flags[k] |= EFFLUX_RATIO_NO_CORRECTION;
          continue;
        }
      fit->ctau[k] = efflux_opacity_correction (fit->tau[k]);
    }

  if (n_clamped > 0 && n_floorless < n_clamped)
    note (msg, "fitted 12CO/13CO ratio <= 1 in %u channel%s: clamped to the smallest detected "
          "ratio %.4g", n_clamped, n_clamped == 1 ? "" : "s", fit->r_floor);
  if (n_floorless > 0)
    note (msg, "fitted 12CO/13CO ratio <= 1 in %u channel%s and no detected ratio above 1: no "
          "correction there", n_floorless, n_floorless == 1 ? "" : "s");

  if (msg->len > 0)
    fit->message = g_strdup (msg->str);
  return g_steal_pointer (&fit);
}
