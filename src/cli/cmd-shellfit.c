/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli shellfit DOSSIER --cut NAME [--json]: the wind-driven shell fitted to the cut's PV
 * emission (efflux-shellfit.h): inclination, its error, age t0 and C, per lobe and together, and
 * the bow-shock spurs where the shell does not fit. */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>

#include "efflux-cli.h"
#include "efflux-dossier.h"
#include "efflux-shellfit.h"

static void
json_num (GString    *s,
          const char *key,
          double      v,
          const char *tail)
{
  g_string_append_printf (s, "\"%s\": ", key);
  efflux_json_number (s, v);
  g_string_append (s, tail);
}

int
efflux_cmd_shellfit (int    argc,
                     char **argv)
{
  g_autofree char *cut = NULL;
  gboolean json = FALSE;
  double threshold = NAN, vmin = NAN;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "cut", 0, 0, G_OPTION_ARG_STRING, &cut, N_("The dossier's [Cut NAME] along the outflow axis"), "NAME" },
    { "threshold-k", 0, 0, G_OPTION_ARG_DOUBLE, &threshold,
      /* xgettext:no-c-format */ N_("Fit the PV pixels above this brightness (default 5 x the noise, at least 5% of the peak)"), "K" },
    { "vmin-kms", 0, 0, G_OPTION_ARG_DOUBLE, &vmin,
      N_("Leave out |v - vsys| below this (default: from the lobes' velocity ranges)"), "KMS" },
    { "json", 0, 0, G_OPTION_ARG_NONE, &json, N_("Print JSON instead of text"), NULL },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("DOSSIER - fit a wind-driven shell to a cut"));
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxShellFit) fit = NULL;
  EffluxShellfitOptions opt = { NAN, NAN, NAN };
  g_auto (GStrv) args = g_strdupv (argv);   /* before parsing: which numbers were given */
  const char * const numbers[] = { "--threshold-k", "--vmin-kms", NULL };
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Fit a wind-driven shell (z = C R^2 in a Hubble flow v = r/t0, Lee et al. "
                                   "2000) to the PV emission of a cut along the outflow axis, each lobe on "
                                   "its side of the source: inclination from the line of sight, age t0 at "
                                   "the dossier's distance, C per arcsec, with errors from the fit's "
                                   "covariance. Columns where the emission leaves the shell with a broad "
                                   "velocity range are reported as bow-shock spurs."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (!efflux_cli_check_finite ("shellfit", args, numbers, &status))
    return status;
  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("shellfit", "expected exactly one DOSSIER");
  if (cut == NULL)
    return efflux_cli_usage ("shellfit", "--cut NAME is required");
  if (!isnan (threshold) && !(threshold > 0.0))
    return efflux_cli_usage ("shellfit", "--threshold-k %g: expected a positive brightness", threshold);
  if (!isnan (vmin) && !(vmin >= 0.0))
    return efflux_cli_usage ("shellfit", "--vmin-kms %g: expected a speed >= 0", vmin);
  opt.threshold_k = threshold;
  opt.vmin_kms = vmin;

  dossier = efflux_dossier_load (rest[0], &error);
  if (dossier == NULL)
    return efflux_cli_fail (error);
  fit = efflux_shellfit_dossier (dossier, cut, &opt, &error);
  if (fit == NULL)
    return efflux_cli_fail (error);

  if (json)
    {
      g_autoptr (GString) s = g_string_new ("{\n  ");
      g_string_append (s, "\"cut\": ");
      efflux_json_string (s, cut);
      g_string_append (s, ",\n  ");
      json_num (s, "inclination_deg", fit->inclination_deg, ",\n  ");
      json_num (s, "inclination_err_deg", fit->inclination_err_deg, ",\n  ");
      json_num (s, "age_yr", fit->age_yr, ",\n  ");
      json_num (s, "age_err_yr", fit->age_err_yr, ",\n  ");
      json_num (s, "c_per_arcsec", fit->c_per_arcsec, ",\n  ");
      json_num (s, "c_err_per_arcsec", fit->c_err_per_arcsec, ",\n  ");
      json_num (s, "source_offset_arcsec", fit->source_offset_arcsec, ",\n  ");
      json_num (s, "threshold_k", fit->threshold_k, ",\n  ");
      json_num (s, "vmin_kms", fit->vmin_kms, ",\n  \"lobes\": [");
      for (guint l = 0; l < fit->n_lobes; l++)
        {
          const EffluxShellLobeFit *lf = &fit->lobes[l];
          g_string_append (s, l ? ",\n    {" : "\n    {");
          g_string_append_printf (s, "\"kind\": \"%s\", \"side\": %d, \"fitted\": %s, ",
                                  lf->kind == EFFLUX_LOBE_RED ? "red" : "blue", lf->side,
                                  lf->ok ? "true" : "false");
          if (!lf->ok)
            {
              g_string_append (s, "\"message\": ");
              efflux_json_string (s, lf->message);
              g_string_append (s, ", ");
            }
          g_string_append_printf (s, "\"n_pixels\": %u, ", lf->n_pixels);
          json_num (s, "inclination_deg", lf->inclination_deg, ", ");
          json_num (s, "inclination_err_deg", lf->inclination_err_deg, ", ");
          json_num (s, "age_yr", lf->age_yr, ", ");
          json_num (s, "age_err_yr", lf->age_err_yr, ", ");
          json_num (s, "c_per_arcsec", lf->c_per_arcsec, ", ");
          json_num (s, "c_err_per_arcsec", lf->c_err_per_arcsec, ", ");
          json_num (s, "rms_distance", lf->rms_distance, ", \"spurs\": [");
          for (guint q = 0; q < lf->spurs->len; q++)
            {
              const EffluxShellSpur *sp = &g_array_index (lf->spurs, EffluxShellSpur, q);
              g_string_append (s, q ? ", {" : "{");
              json_num (s, "offset_min_arcsec", sp->x_min_arcsec, ", ");
              json_num (s, "offset_max_arcsec", sp->x_max_arcsec, ", ");
              json_num (s, "v_min_kms", sp->v_min_kms, ", ");
              json_num (s, "v_max_kms", sp->v_max_kms, ", ");
              json_num (s, "flux_fraction", sp->flux_fraction, "}");
            }
          g_string_append (s, "]}");
        }
      g_string_append (s, "\n  ]\n}\n");
      fputs (s->str, stdout);
    }
  else
    {
      printf ("inclination_deg %.4g\ninclination_err_deg %.2g\nage_yr %.5g\nc_per_arcsec %.4g\n",
              fit->inclination_deg, fit->inclination_err_deg, fit->age_yr, fit->c_per_arcsec);
      for (guint l = 0; l < fit->n_lobes; l++)
        {
          const EffluxShellLobeFit *lf = &fit->lobes[l];
          const char *kind = lf->kind == EFFLUX_LOBE_RED ? "red" : "blue";
          if (!lf->ok)
            {
              printf ("%s lobe (%s side): not fitted: %s\n", kind, lf->side > 0 ? "+" : "-", lf->message);
              continue;
            }
          printf ("%s lobe (%s side, %u pixels): i = %.4g +- %.2g deg, t0 = %.5g +- %.2g yr, "
                  "C = %.4g +- %.2g /arcsec, rms distance %.3g\n", kind, lf->side > 0 ? "+" : "-",
                  lf->n_pixels, lf->inclination_deg, lf->inclination_err_deg, lf->age_yr, lf->age_err_yr,
                  lf->c_per_arcsec, lf->c_err_per_arcsec, lf->rms_distance);
          for (guint q = 0; q < lf->spurs->len; q++)
            {
              const EffluxShellSpur *sp = &g_array_index (lf->spurs, EffluxShellSpur, q);
              printf ("  bow-shock spur: offsets %.3g to %.3g arcsec, %.4g to %.4g km/s, %.0f%% of the "
                      "lobe's emission (the shell does not fit there)\n", sp->x_min_arcsec,
                      sp->x_max_arcsec, sp->v_min_kms, sp->v_max_kms, 100.0 * sp->flux_fraction);
            }
        }
    }
  if (fflush (stdout) != 0)
    {
      g_set_error (&error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "standard output: cannot write");
      return efflux_cli_fail (error);
    }
  return EFFLUX_EXIT_OK;
}
