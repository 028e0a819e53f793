/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Outflow feedback against the cloud's turbulence and gravity (formulas in efflux-budget.h and
 * REFERENCES.md 1.11). All arithmetic in cgs. */

#include "efflux-budget.h"
#include "efflux-constants.h"

#include <math.h>

gboolean
efflux_cloud_turbulence (const EffluxCloud  *cloud,
                         EffluxTurbulence   *out,
                         GError            **error)
{
  double m, r, s1, s3, lambda, kwave;

  if (!(cloud->mass_msun > 0.0) || !isfinite (cloud->mass_msun))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "--cloud-mass %g: the cloud mass must be a positive number of Msun", cloud->mass_msun);
      return FALSE;
    }
  if (!(cloud->radius_pc > 0.0) || !isfinite (cloud->radius_pc))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "--cloud-radius-pc %g: the cloud radius must be a positive number of pc", cloud->radius_pc);
      return FALSE;
    }
  if (!(cloud->fwhm_kms > 0.0) || !isfinite (cloud->fwhm_kms))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "--cloud-fwhm-kms %g: the line width must be a positive number of km/s", cloud->fwhm_kms);
      return FALSE;
    }

  out->eta_v = cloud->eta_v > 0.0 && isfinite (cloud->eta_v) ? cloud->eta_v : EFFLUX_MACLOW_ETA_V;
  out->driving_scale_pc = cloud->driving_scale_pc > 0.0 && isfinite (cloud->driving_scale_pc)
                            ? cloud->driving_scale_pc : 2.0 * cloud->radius_pc;

  m = cloud->mass_msun * EFFLUX_MSUN;
  r = cloud->radius_pc * EFFLUX_PC;
  out->sigma_1d_kms = cloud->fwhm_kms / sqrt (8.0 * G_LN2);
  out->sigma_3d_kms = sqrt (3.0) * out->sigma_1d_kms;
  s1 = out->sigma_1d_kms * EFFLUX_KM;
  s3 = out->sigma_3d_kms * EFFLUX_KM;

  out->e_turb_erg = 1.5 * m * s1 * s1;
  out->t_cross_yr = r / s3 / EFFLUX_YR;
  out->l_turb_erg_s = out->e_turb_erg / (r / s3);

  lambda = out->driving_scale_pc * EFFLUX_PC;
  kwave = 2.0 * G_PI / lambda;
  out->l_turb_maclow_erg_s = out->eta_v * m * kwave * s3 * s3 * s3;
  out->t_maclow_yr = out->e_turb_erg / out->l_turb_maclow_erg_s / EFFLUX_YR;

  out->p_turb_msun_kms = cloud->mass_msun * out->sigma_3d_kms;
  out->e_grav_erg = 0.6 * EFFLUX_G * m * m / r;
  out->v_esc_kms = sqrt (2.0 * EFFLUX_G * m / r) / EFFLUX_KM;
  return TRUE;
}

gboolean
efflux_budget_compute (const EffluxCloud  *cloud,
                       guint               n_sources,
                       double              mass_msun,
                       double              momentum_msun_kms,
                       double              energy_erg,
                       double              lmech_erg_s,
                       EffluxBudget       *out,
                       GError            **error)
{
  EffluxTurbulence *t = &out->cloud;

  if (!efflux_cloud_turbulence (cloud, t, error))
    return FALSE;
  out->n_sources = n_sources;
  out->mass_msun = mass_msun;
  out->momentum_msun_kms = momentum_msun_kms;
  out->energy_erg = energy_erg;
  out->lmech_erg_s = lmech_erg_s;
  out->e_ratio = energy_erg / t->e_turb_erg;
  out->l_ratio = lmech_erg_s / t->l_turb_erg_s;
  out->l_ratio_maclow = lmech_erg_s / t->l_turb_maclow_erg_s;
  out->p_ratio = momentum_msun_kms / t->p_turb_msun_kms;
  out->grav_ratio = energy_erg / t->e_grav_erg;
  out->m_unbound_msun = momentum_msun_kms / t->v_esc_kms;
  out->unbound_fraction = out->m_unbound_msun / cloud->mass_msun;
  return TRUE;
}
