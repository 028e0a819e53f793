/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include "efflux-cli.h"
#include "efflux-error.h"
#include "efflux-io.h"
#include "efflux-table.h"

#include <stdio.h>
#include <string.h>

/* efflux-cli merge PART.csv... [-o FILE] [--format csv|ecsv|votable|latex|markdown|json]
 *
 * Joins the csv parts written by `efflux-cli measure --shard K/N` into the table of the whole
 * sample: the same Efflux version, the same columns and the same sample in every part, each
 * source in one part, none missing. The merged csv equals, byte for byte, the csv of measuring
 * the whole sample at once. */

int
efflux_cmd_merge (int    argc,
                  char **argv)
{
  g_autofree char *format = NULL;
  g_autofree char *output = NULL;
  GOptionEntry entries[] = {
    { "format", 'f', 0, G_OPTION_ARG_STRING, &format,
      N_("csv, ecsv, votable, latex, markdown or json (default: from the -o extension, else csv)"), "FORMAT" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("write the table to FILE (atomically) instead of standard output"), "FILE" },
    { NULL }
  };
  g_autoptr (GOptionContext) ctx = g_option_context_new (N_("PART.csv... - join the parts of a sharded measurement"));
  g_autoptr (GPtrArray) parts = g_ptr_array_new_with_free_func ((GDestroyNotify) efflux_table_free);
  g_autoptr (EffluxTable) merged = NULL;
  g_autofree char *text = NULL;
  EffluxTableFormat fmt = EFFLUX_TABLE_CSV;
  GError *error = NULL;
  int status;

  g_set_prgname ("efflux-cli merge");
  g_option_context_set_translation_domain (ctx, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (ctx, entries, NULL);
  g_option_context_set_summary (ctx,
                                N_("The parts are csv tables written by `efflux-cli measure --shard K/N`; the result\n"
                                   "is the table of the whole sample, sources in sample order."));
  if (!efflux_cli_parse (ctx, &argc, &argv, &status))
    return status;
  if (argc < 2)
    return efflux_cli_usage ("merge", "no part given");
  if (format != NULL && !efflux_table_format_from_name (format, &fmt))
    return efflux_cli_usage ("merge", "unknown format '%s' (expected csv, ecsv, votable, latex, markdown or json)", format);
  if (format == NULL && output != NULL && !efflux_table_format_from_path (output, &fmt))
    fmt = EFFLUX_TABLE_CSV;
  if (output != NULL && !efflux_cli_check_output ("-o", output, &status))
    return status;

  for (int i = 1; i < argc; i++)
    {
      g_autofree char *data = NULL;
      gsize length = 0;
      g_autoptr (GError) local = NULL;
      EffluxTable *part;

      if (!g_file_get_contents (argv[i], &data, &length, &local))
        return efflux_cli_fail (g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s", local->message));
      part = efflux_table_new_from_csv (data, length, argv[i], &error);
      if (part == NULL)
        return efflux_cli_fail (error);
      g_ptr_array_add (parts, part);
    }
  merged = efflux_table_merge ((EffluxTable * const *) parts->pdata, (const char * const *) argv + 1, parts->len, &error);
  if (merged == NULL)
    return efflux_cli_fail (error);
  text = efflux_table_to_string (merged, fmt);
  if (output != NULL)
    {
      if (!efflux_write_file_atomic (output, text, -1, &error))
        return efflux_cli_fail (error);
      return EFFLUX_EXIT_OK;
    }
  return efflux_cli_write_stdout (text, -1);
}
