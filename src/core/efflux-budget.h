/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-error.h"

G_BEGIN_DECLS

/* Feedback of outflows on their cloud (REFERENCES.md 1.11): the cloud's turbulence and binding
 * against the total outflow mass, momentum, energy and power of a sample.
 *
 *   sigma_1D = FWHM / sqrt(8 ln 2),  sigma_3D = sqrt(3) sigma_1D
 *   E_turb   = 3/2 M sigma_1D^2                       (= 1/2 M sigma_3D^2)
 *   t_cross  = R / sigma_3D,         L_turb = E_turb / t_cross        (crossing-time form)
 *   Mac Low 1999, ApJ 524, 169:  L = eta_v M k v_rms^3 with k = 2 pi / lambda_d,
 *            v_rms = sigma_3D, eta_v = 0.21 / pi by default (exposed), lambda_d = 2 R by default;
 *            its decay time is t = E_turb / L
 *   P_turb   = M sigma_3D
 *   E_grav   = 3/5 G M^2 / R (uniform sphere),  v_esc = sqrt (2 G M / R)
 *   M_unb    = P_out / v_esc (the mass the outflows' momentum can lift out of the cloud)
 * The ratios compare the outflow totals with these: E_out / E_turb, L_out / L_turb (both forms),
 * P_out / P_turb, E_out / E_grav. */

#define EFFLUX_MACLOW_ETA_V (0.21 / G_PI)   /* Mac Low 1999 abstract, REFERENCES.md 1.11 (b) */

typedef struct
{
  double mass_msun;
  double radius_pc;
  double fwhm_kms;
  double eta_v;              /* Mac Low coefficient; NaN or <= 0: EFFLUX_MACLOW_ETA_V */
  double driving_scale_pc;   /* lambda_d; NaN or <= 0: 2 R */
} EffluxCloud;

typedef struct
{
  double sigma_1d_kms, sigma_3d_kms;
  double e_turb_erg;
  double t_cross_yr, l_turb_erg_s;                  /* crossing-time form */
  double eta_v, driving_scale_pc;                   /* as used */
  double t_maclow_yr, l_turb_maclow_erg_s;          /* Mac Low 1999 form */
  double p_turb_msun_kms;
  double e_grav_erg;
  double v_esc_kms;
} EffluxTurbulence;

typedef struct
{
  guint  n_sources;
  double mass_msun, momentum_msun_kms, energy_erg, lmech_erg_s;   /* outflow totals */
  EffluxTurbulence cloud;
  double e_ratio;            /* E_out / E_turb */
  double l_ratio;            /* L_out / L_turb (crossing time) */
  double l_ratio_maclow;     /* L_out / L_turb (Mac Low) */
  double p_ratio;            /* P_out / P_turb */
  double grav_ratio;         /* E_out / E_grav */
  double m_unbound_msun;     /* P_out / v_esc */
  double unbound_fraction;   /* M_unb / M_cloud */
} EffluxBudget;

/* The cloud's numbers. Errors (EFFLUX_ERROR_USAGE) name the option: "--cloud-mass 0: ...". */
gboolean efflux_cloud_turbulence (const EffluxCloud  *cloud,
                                  EffluxTurbulence   *out,
                                  GError            **error);

/* The comparison for outflow totals already summed (mass Msun, momentum Msun km/s, energy erg,
 * mechanical luminosity erg/s). */
gboolean efflux_budget_compute   (const EffluxCloud  *cloud,
                                  guint               n_sources,
                                  double              mass_msun,
                                  double              momentum_msun_kms,
                                  double              energy_erg,
                                  double              lmech_erg_s,
                                  EffluxBudget       *out,
                                  GError            **error);

G_END_DECLS
