/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli export DOSSIER --masks 2d|3d|stcs -o FILE: lobes for other tools (efflux-export.h). */
#include "config.h"

#include <glib/gi18n.h>

#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-export.h"
#include "efflux-measure.h"

int
efflux_cmd_export (int    argc,
                   char **argv)
{
  g_autofree char *masks = NULL;
  g_autofree char *output = NULL;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "masks", 0, 0, G_OPTION_ARG_STRING, &masks,
      N_("2d: FITS sky masks; 3d: FITS masks over the lobe's velocity range too; stcs: IVOA STC-S polygons (text)"),
      "2d|3d|stcs" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("The file to write"), "FILE" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- export the lobes for other tools"));
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (GHashTable) cubes = NULL;
  EffluxExportKind kind;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Export every lobe of a dossier: as FITS masks (one image extension per "
                                   "lobe, named after it, 1 inside and 0 outside, with the WCS of the lobe's "
                                   "cube; 3d adds the cube's velocity axis and keeps the lobe's range) or as "
                                   "IVOA STC-S polygons, one 'Polygon ICRS TOPOCENTER ...' line per lobe "
                                   "after a '#' line naming it."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("export", "expected exactly one DOSSIER");
  if (masks == NULL)
    return efflux_cli_usage ("export", "--masks 2d|3d|stcs is required");
  if (!efflux_export_kind_from_string (masks, &kind))
    return efflux_cli_usage ("export", "--masks %s: expected 2d, 3d or stcs", masks);
  if (output == NULL)
    return efflux_cli_usage ("export", "-o FILE is required");
  if (!efflux_cli_check_output ("-o", output, &status))
    return status;

  dossier = efflux_dossier_load (rest[0], &error);
  if (dossier == NULL)
    return efflux_cli_fail (error);
  if (kind == EFFLUX_EXPORT_STCS)
    {
      if (!efflux_export_stcs (dossier, output, &error))
        return efflux_cli_fail (error);
      return EFFLUX_EXIT_OK;
    }
  cubes = efflux_measure_load_cubes (dossier, NULL, &error);
  if (cubes == NULL)
    return efflux_cli_fail (error);
  if (!efflux_export_masks (dossier, cubes, kind == EFFLUX_EXPORT_MASKS_3D, output, &error))
    return efflux_cli_fail (error);
  return EFFLUX_EXIT_OK;
}
