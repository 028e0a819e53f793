/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli knots DOSSIER --cut NAME [--cube ID] [--format text|csv|json]: the knots along a jet
 * cut with their offsets, velocities, inclination-corrected dynamical ages and the intervals
 * between ejections (efflux-knots.h). */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-dossier.h"
#include "efflux-knots.h"

static void
csv_num (GString *s,
         double   v,
         gboolean last)
{
  if (isfinite (v))
    g_string_append_printf (s, "%.6g", v);
  g_string_append_c (s, last ? '\n' : ',');
}

int
efflux_cmd_knots (int    argc,
                  char **argv)
{
  g_autofree char *cut = NULL;
  g_autofree char *cube = NULL;
  g_autofree char *format = NULL;
  double vmin = NAN, threshold = NAN, incl = NAN;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "cut", 0, 0, G_OPTION_ARG_STRING, &cut, N_("The dossier's [Cut NAME] along the jet"), "NAME" },
    { "cube", 0, 0, G_OPTION_ARG_STRING, &cube, N_("Sample this [Cube ID] along the cut (default: the cut's cube)"), "ID" },
    { "format", 0, 0, G_OPTION_ARG_STRING, &format, N_("text (default), csv or json"), "FORMAT" },
    { "vmin-kms", 0, 0, G_OPTION_ARG_DOUBLE, &vmin,
      N_("Integrate only |v - vsys| >= this (e.g. for high-velocity CO; default 0)"), "KMS" },
    { "threshold-k-kms", 0, 0, G_OPTION_ARG_DOUBLE, &threshold,
      /* xgettext:no-c-format */ N_("Knots are maxima of the integrated profile above this (default 5 x its noise, at least 5% of its peak)"), "KKMS" },
    { "inclination-deg", 0, 0, G_OPTION_ARG_DOUBLE, &incl,
      N_("Inclination from the line of sight (default: the dossier's fixed inclination)"), "DEG" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("DOSSIER - knots along a jet cut"));
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxKnotList) list = NULL;
  g_autoptr (GString) s = g_string_new (NULL);
  g_auto (GStrv) args = g_strdupv (argv);   /* before parsing: which numbers were given */
  const char * const numbers[] = { "--vmin-kms", "--threshold-k-kms", "--inclination-deg", NULL };
  EffluxKnotOptions opt = { NAN, NAN, NAN, NAN };
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Find the knots along a jet cut (maxima of the velocity-integrated PV "
                                   "profile, SiO or high-velocity CO): offset from the source, velocity, "
                                   "dynamical age corrected for the inclination ((offset / sin i) / "
                                   "(|v - vsys| / cos i) at the dossier's distance), and the interval "
                                   "since the previous ejection on the same side."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (!efflux_cli_check_finite ("knots", args, numbers, &status))
    return status;
  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("knots", "expected exactly one DOSSIER");
  if (cut == NULL)
    return efflux_cli_usage ("knots", "--cut NAME is required");
  if (format != NULL && strcmp (format, "text") != 0 && strcmp (format, "csv") != 0
      && strcmp (format, "json") != 0)
    return efflux_cli_usage ("knots", "--format %s: expected text, csv or json", format);
  if (!isnan (vmin) && !(vmin >= 0.0))
    return efflux_cli_usage ("knots", "--vmin-kms %g: expected a speed >= 0", vmin);
  if (!isnan (threshold) && !(threshold > 0.0))
    return efflux_cli_usage ("knots", "--threshold-k-kms %g: expected a positive value", threshold);
  if (!isnan (incl) && !(incl > 0.0 && incl < 90.0))
    return efflux_cli_usage ("knots", "--inclination-deg %g: expected 0 < i < 90", incl);
  opt.vmin_kms = vmin;
  opt.threshold_k_kms = threshold;
  opt.inclination_deg = incl;

  dossier = efflux_dossier_load (rest[0], &error);
  if (dossier == NULL)
    return efflux_cli_fail (error);
  list = efflux_knots_dossier (dossier, cut, cube, &opt, &error);
  if (list == NULL)
    return efflux_cli_fail (error);

  if (format != NULL && strcmp (format, "csv") == 0)
    {
      g_string_append (s, "side,kind,offset_arcsec,velocity_kms,v_obs_kms,intensity_k_kms,age_yr,interval_yr\n");
      for (guint j = 0; j < list->knots->len; j++)
        {
          const EffluxKnot *k = &g_array_index (list->knots, EffluxKnot, j);
          g_string_append_printf (s, "%s,%s,", k->side > 0 ? "+" : "-", k->kind == EFFLUX_LOBE_RED ? "red" : "blue");
          csv_num (s, k->offset_arcsec, FALSE);
          csv_num (s, k->velocity_kms, FALSE);
          csv_num (s, k->v_obs_kms, FALSE);
          csv_num (s, k->intensity_k_kms, FALSE);
          csv_num (s, k->age_yr, FALSE);
          csv_num (s, k->interval_yr, TRUE);
        }
    }
  else if (format != NULL && strcmp (format, "json") == 0)
    {
      g_string_append (s, "{\n  \"cut\": ");
      efflux_json_string (s, cut);
      g_string_append (s, ",\n  \"inclination_deg\": ");
      efflux_json_number (s, list->inclination_deg);
      g_string_append (s, ",\n  \"distance_pc\": ");
      efflux_json_number (s, list->distance_pc);
      g_string_append (s, ",\n  \"threshold_k_kms\": ");
      efflux_json_number (s, list->threshold_k_kms);
      g_string_append (s, ",\n  \"knots\": [");
      for (guint j = 0; j < list->knots->len; j++)
        {
          const EffluxKnot *k = &g_array_index (list->knots, EffluxKnot, j);
          g_string_append_printf (s, "%s\n    {\"side\": %d, \"kind\": \"%s\", \"offset_arcsec\": ", j ? "," : "",
                                  k->side, k->kind == EFFLUX_LOBE_RED ? "red" : "blue");
          efflux_json_number (s, k->offset_arcsec);
          g_string_append (s, ", \"velocity_kms\": ");
          efflux_json_number (s, k->velocity_kms);
          g_string_append (s, ", \"v_obs_kms\": ");
          efflux_json_number (s, k->v_obs_kms);
          g_string_append (s, ", \"intensity_k_kms\": ");
          efflux_json_number (s, k->intensity_k_kms);
          g_string_append (s, ", \"age_yr\": ");
          efflux_json_number (s, k->age_yr);
          g_string_append (s, ", \"interval_yr\": ");
          efflux_json_number (s, k->interval_yr);
          g_string_append_c (s, '}');
        }
      g_string_append (s, "\n  ]\n}\n");
    }
  else
    {
      g_string_append_printf (s, "%u knots along [Cut %s] (i = %g deg, d = %g pc, threshold %.3g K km/s)\n",
                              list->knots->len, cut, list->inclination_deg, list->distance_pc,
                              list->threshold_k_kms);
      g_string_append (s, "side  kind  offset(\")  v(km/s)  |v-vsys|  age(yr)   interval(yr)\n");
      for (guint j = 0; j < list->knots->len; j++)
        {
          const EffluxKnot *k = &g_array_index (list->knots, EffluxKnot, j);
          g_string_append_printf (s, "%-5s %-5s %9.3f %8.3f %9.3f %9.1f", k->side > 0 ? "+" : "-",
                                  k->kind == EFFLUX_LOBE_RED ? "red" : "blue", k->offset_arcsec,
                                  k->velocity_kms, k->v_obs_kms, k->age_yr);
          if (isfinite (k->interval_yr))
            g_string_append_printf (s, " %12.1f\n", k->interval_yr);
          else
            g_string_append (s, "            -\n");
        }
    }
  return efflux_cli_write_stdout (s->str, (gssize) s->len);
}
