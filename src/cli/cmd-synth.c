/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli synth RECIPE [-o DIR]: synthetic outflow cubes, their truth and a dossier. */
#include "config.h"

#include <glib/gi18n.h>

#include <gio/gio.h>
#include <stdio.h>

#include "efflux-cli.h"
#include "efflux-error.h"
#include "efflux-synth.h"

int
efflux_cmd_synth (int    argc,
                  char **argv)
{
  g_autofree char *out_dir = NULL;
  GOptionEntry entries[] = {
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &out_dir,
      N_("Write into DIR (created when missing; default: the current directory)"), "DIR" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("RECIPE"));
  g_autoptr (EffluxSynthRecipe) recipe = NULL;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Write synthetic outflow cubes of an invented protostar, the true values "
                                   "behind them (NAME.truth) and a matching dossier (NAME.efflux) from a "
                                   "recipe file (key-file syntax, see sample-data/README.md)."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (argc != 2)
    return efflux_cli_usage ("synth", "give exactly one RECIPE file");

  recipe = efflux_synth_recipe_load (argv[1], &error);
  if (recipe == NULL)
    return efflux_cli_fail (error);
  if (!efflux_synth_run (recipe, out_dir != NULL ? out_dir : ".", &error))
    return efflux_cli_fail (error);
  return EFFLUX_EXIT_OK;
}
