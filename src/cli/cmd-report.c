/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include <string.h>

#include "efflux-cli.h"
#include "efflux-dossier.h"
#include "efflux-figure.h"

int
efflux_cmd_report (int    argc,
                   char **argv)
{
  g_autofree char *output = NULL;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("The PDF to write"), "FILE.pdf" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- write the per-source report (PDF)"));
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxFigure) figure = NULL;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;
  const char *dot;
  gboolean ok;

  g_option_context_set_summary (context,
                                N_("Write the report of one source as an A4 PDF, one page per section: the "
                                   "maps with the lobes, the position-velocity cut, the mass-velocity "
                                   "spectrum, the results with their assumptions, and the review notes with "
                                   "the lobes' authors and a line for the reviewer's signature."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("report", "expected exactly one DOSSIER");
  if (output == NULL)
    return efflux_cli_usage ("report", "-o FILE.pdf is required");
  dot = strrchr (output, '.');
  if (dot == NULL || g_ascii_strcasecmp (dot, ".pdf") != 0)
    return efflux_cli_usage ("report", "-o %s: the report is a PDF (name ending in .pdf)", output);
  if (!efflux_cli_check_output ("-o", output, &status))
    return status;

  dossier = efflux_dossier_load (rest[0], &error);
  if (dossier == NULL)
    return efflux_cli_fail (error);
  figure = efflux_figure_new (dossier, &error);
  if (figure == NULL)
    return efflux_cli_fail (error);
  ok = efflux_figure_write_report (figure, output, &error);
  g_clear_pointer (&figure, efflux_figure_free);
  efflux_figure_release_fonts ();
  if (!ok)
    return efflux_cli_fail (error);
  return EFFLUX_EXIT_OK;
}
