/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli budget DOSSIER... --cloud-mass MSUN --cloud-radius-pc R --cloud-fwhm-kms DV [--json]
 * The total outflow M, P, E, L of a sample (each dossier measured as `measure` does) against the
 * cloud's turbulence and binding (efflux-budget.h). */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>

#include "efflux-budget.h"
#include "efflux-cli.h"
#include "efflux-constants.h"
#include "efflux-dossier.h"
#include "efflux-measure.h"

static void
json_pair (GString    *s,
           const char *key,
           double      value,
           gboolean    last)
{
  g_string_append_printf (s, "  \"%s\": ", key);
  efflux_json_number (s, value);
  g_string_append (s, last ? "\n" : ",\n");
}

int
efflux_cmd_budget (int    argc,
                   char **argv)
{
  double mass = NAN, radius = NAN, fwhm = NAN, eta = NAN, lambda = NAN;
  gboolean json = FALSE;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "cloud-mass", 0, 0, G_OPTION_ARG_DOUBLE, &mass, N_("The cloud's mass (Msun)"), "MSUN" },
    { "cloud-radius-pc", 0, 0, G_OPTION_ARG_DOUBLE, &radius, N_("The cloud's radius (pc)"), "R" },
    { "cloud-fwhm-kms", 0, 0, G_OPTION_ARG_DOUBLE, &fwhm, N_("The cloud's line width, FWHM (km/s)"), "DV" },
    { "maclow-eta", 0, 0, G_OPTION_ARG_DOUBLE, &eta,
      N_("Coefficient eta_v of Mac Low 1999's dissipation rate (default 0.21/pi)"), "ETA" },
    { "driving-scale-pc", 0, 0, G_OPTION_ARG_DOUBLE, &lambda,
      N_("Driving wavelength lambda_d of the Mac Low form (default twice the radius)"), "PC" },
    { "json", 0, 0, G_OPTION_ARG_NONE, &json, N_("Print JSON instead of text"), NULL },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER..." },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("DOSSIER... - outflow feedback on the cloud"));
  g_autoptr (GString) s = g_string_new (NULL);
  g_auto (GStrv) args = g_strdupv (argv);   /* before parsing: which numbers were given */
  const char * const numbers[] = { "--cloud-mass", "--cloud-radius-pc", "--cloud-fwhm-kms", "--maclow-eta",
                                   "--driving-scale-pc", NULL };
  EffluxCloud cloud;
  EffluxBudget b;
  double m_tot = 0.0, p_tot = 0.0, e_tot = 0.0, l_tot = 0.0;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;
  guint n;

  g_option_context_set_summary (context,
                                N_("Sum the outflows of the dossiers (mass, momentum, energy, mechanical "
                                   "luminosity of each total row, as `measure` gives them) and compare "
                                   "them with the cloud's turbulent energy and its dissipation rate "
                                   "(crossing time and Mac Low 1999 forms), its turbulent momentum, its "
                                   "gravitational binding energy, and the mass the outflows can unbind."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (!efflux_cli_check_finite ("budget", args, numbers, &status))
    return status;
  if (rest == NULL || rest[0] == NULL)
    return efflux_cli_usage ("budget", "expected at least one DOSSIER");
  if (isnan (mass) || isnan (radius) || isnan (fwhm))
    return efflux_cli_usage ("budget", "--cloud-mass, --cloud-radius-pc and --cloud-fwhm-kms are required");
  if (!isnan (eta) && !(eta > 0.0))
    return efflux_cli_usage ("budget", "--maclow-eta %g: expected a positive coefficient", eta);
  if (!isnan (lambda) && !(lambda > 0.0))
    return efflux_cli_usage ("budget", "--driving-scale-pc %g: expected a positive length", lambda);

  cloud.mass_msun = mass;
  cloud.radius_pc = radius;
  cloud.fwhm_kms = fwhm;
  cloud.eta_v = eta;
  cloud.driving_scale_pc = lambda;
  {
    EffluxTurbulence t;
    if (!efflux_cloud_turbulence (&cloud, &t, &error))
      return efflux_cli_fail (error);
  }

  n = g_strv_length (rest);
  for (guint i = 0; i < n; i++)
    {
      g_autoptr (EffluxDossier) dossier = efflux_dossier_load (rest[i], &error);
      g_autoptr (EffluxMeasureResult) result = NULL;
      EffluxMeasureRow *total = NULL;

      if (dossier == NULL)
        return efflux_cli_fail (error);
      result = efflux_measure_dossier (dossier, NULL, &error);
      if (result == NULL)
        return efflux_cli_fail (error);
      for (guint r = 0; r < result->rows->len; r++)
        {
          EffluxMeasureRow *row = g_ptr_array_index (result->rows, r);
          if (row->is_total)
            total = row;
        }
      if (total == NULL)
        {
          g_set_error (&error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no lobe to measure", rest[i]);
          return efflux_cli_fail (error);
        }
      m_tot += total->mass_msun;
      p_tot += total->momentum_msun_kms;
      e_tot += total->energy_erg;
      if (isfinite (total->lmech_lsun))
        l_tot += total->lmech_lsun * EFFLUX_LSUN;
    }

  if (!efflux_budget_compute (&cloud, n, m_tot, p_tot, e_tot, l_tot, &b, &error))
    return efflux_cli_fail (error);

  if (json)
    {
      g_string_append (s, "{\n");
      g_string_append_printf (s, "  \"n_sources\": %u,\n", b.n_sources);
      json_pair (s, "outflow_mass_msun", b.mass_msun, FALSE);
      json_pair (s, "outflow_momentum_msun_kms", b.momentum_msun_kms, FALSE);
      json_pair (s, "outflow_energy_erg", b.energy_erg, FALSE);
      json_pair (s, "outflow_lmech_erg_s", b.lmech_erg_s, FALSE);
      json_pair (s, "cloud_mass_msun", mass, FALSE);
      json_pair (s, "cloud_radius_pc", radius, FALSE);
      json_pair (s, "cloud_fwhm_kms", fwhm, FALSE);
      json_pair (s, "sigma_1d_kms", b.cloud.sigma_1d_kms, FALSE);
      json_pair (s, "sigma_3d_kms", b.cloud.sigma_3d_kms, FALSE);
      json_pair (s, "e_turb_erg", b.cloud.e_turb_erg, FALSE);
      json_pair (s, "t_cross_yr", b.cloud.t_cross_yr, FALSE);
      json_pair (s, "l_turb_erg_s", b.cloud.l_turb_erg_s, FALSE);
      json_pair (s, "maclow_eta_v", b.cloud.eta_v, FALSE);
      json_pair (s, "driving_scale_pc", b.cloud.driving_scale_pc, FALSE);
      json_pair (s, "t_maclow_yr", b.cloud.t_maclow_yr, FALSE);
      json_pair (s, "l_turb_maclow_erg_s", b.cloud.l_turb_maclow_erg_s, FALSE);
      json_pair (s, "p_turb_msun_kms", b.cloud.p_turb_msun_kms, FALSE);
      json_pair (s, "e_grav_erg", b.cloud.e_grav_erg, FALSE);
      json_pair (s, "v_esc_kms", b.cloud.v_esc_kms, FALSE);
      json_pair (s, "e_out_over_e_turb", b.e_ratio, FALSE);
      json_pair (s, "l_out_over_l_turb", b.l_ratio, FALSE);
      json_pair (s, "l_out_over_l_turb_maclow", b.l_ratio_maclow, FALSE);
      json_pair (s, "p_out_over_p_turb", b.p_ratio, FALSE);
      json_pair (s, "e_out_over_e_grav", b.grav_ratio, FALSE);
      json_pair (s, "unbound_mass_msun", b.m_unbound_msun, FALSE);
      json_pair (s, "unbound_fraction", b.unbound_fraction, TRUE);
      g_string_append (s, "}\n");
    }
  else
    {
      g_string_append_printf (s, "outflows (%u dossier%s): M = %.4g Msun, P = %.4g Msun km/s, E = %.4g erg, L = %.4g erg/s\n",
                              b.n_sources, b.n_sources == 1 ? "" : "s", b.mass_msun, b.momentum_msun_kms, b.energy_erg,
                              b.lmech_erg_s);
      g_string_append_printf (s, "cloud: M = %.4g Msun, R = %.4g pc, FWHM = %.4g km/s (sigma_1D %.4g, sigma_3D %.4g km/s)\n",
                              mass, radius, fwhm, b.cloud.sigma_1d_kms, b.cloud.sigma_3d_kms);
      g_string_append_printf (s, "turbulent energy       E_turb = %.5g erg           E_out/E_turb = %.3g\n",
                              b.cloud.e_turb_erg, b.e_ratio);
      g_string_append_printf (s, "dissipation (R/sigma)  t = %.5g yr, L_turb = %.5g erg/s   L_out/L_turb = %.3g\n",
                              b.cloud.t_cross_yr, b.cloud.l_turb_erg_s, b.l_ratio);
      g_string_append_printf (s, "dissipation (Mac Low)  eta_v = %.4g, lambda_d = %.4g pc: t = %.5g yr, L_turb = %.5g erg/s"
                              "   L_out/L_turb = %.3g\n", b.cloud.eta_v, b.cloud.driving_scale_pc, b.cloud.t_maclow_yr,
                              b.cloud.l_turb_maclow_erg_s, b.l_ratio_maclow);
      g_string_append_printf (s, "turbulent momentum     P_turb = %.5g Msun km/s   P_out/P_turb = %.3g\n",
                              b.cloud.p_turb_msun_kms, b.p_ratio);
      g_string_append_printf (s, "binding energy         E_grav = %.5g erg           E_out/E_grav = %.3g\n",
                              b.cloud.e_grav_erg, b.grav_ratio);
      g_string_append_printf (s, "unbound mass           P_out/v_esc = %.4g Msun (v_esc %.4g km/s, %.3g of the cloud)\n",
                              b.m_unbound_msun, b.cloud.v_esc_kms, b.unbound_fraction);
    }
  return efflux_cli_write_stdout (s->str, (gssize) s->len);
}
