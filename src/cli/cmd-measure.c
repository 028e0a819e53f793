/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include "efflux-cli.h"
#include "efflux-error.h"
#include "efflux-io.h"
#include "efflux-measure.h"
#include "efflux-sample.h"
#include "efflux-table.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

/* efflux-cli measure DOSSIER|FOLDER... [--format csv|ecsv|votable|latex|markdown|json] [-o FILE]
 *                    [--shard K/N] [--mark] [--spectrum FILE.csv]
 *
 * The sample is the list of arguments in the order given, a folder standing for its dossiers
 * (*.efflux) sorted by file name. --shard K/N measures sources K, K + N, K + 2N, ... (1-based) of
 * that list; the table keeps each source's place in the whole sample, so that `efflux-cli merge`
 * puts the parts back in order. */

typedef struct
{
  EffluxDossier       *dossier;
  EffluxMeasureResult *result;
} Measured;

static void
measured_clear (gpointer p)
{
  Measured *m = p;

  efflux_measure_result_free (m->result);
  efflux_dossier_free (m->dossier);
}

static void
csv_field (GString    *s,
           const char *text)
{
  if (strpbrk (text, ",\"\n\r") == NULL)
    {
      g_string_append (s, text);
      return;
    }
  g_string_append_c (s, '"');
  for (const char *p = text; *p; p++)
    {
      if (*p == '"')
        g_string_append_c (s, '"');
      g_string_append_c (s, *p);
    }
  g_string_append_c (s, '"');
}

/* The readable table for a terminal: the contract's columns with units, aligned. */
static char *
table_text (GArray *all)
{
  static const struct { guint col; const char *head; const char *unit; } show[] = {
    { 0, "source", "" }, { 1, "lobe", "" }, { 2, "kind", "" }, { 3, "voxels", "" },
    { 4, "mass", "Msun" }, { 14, "+-", "Msun" }, { 5, "momentum", "Msun km/s" },
    { 6, "energy", "erg" }, { 7, "vmax", "km/s" }, { 8, "rmax", "au" }, { 9, "tdyn", "yr" },
    { 10, "mdot", "Msun/yr" }, { 11, "force", "Msun km/s/yr" }, { 12, "lmech", "Lsun" },
    { 13, "incl", "deg" },
  };
  guint nshow = G_N_ELEMENTS (show);
  g_autoptr (GPtrArray) cells = g_ptr_array_new_with_free_func (g_free);
  g_autofree int *width = g_new0 (int, nshow);
  guint nrows = 0;
  GString *s = g_string_new (NULL);

  for (guint c = 0; c < nshow; c++)
    width[c] = MAX ((int) strlen (show[c].head), (int) strlen (show[c].unit));
  for (guint i = 0; i < all->len; i++)
    {
      Measured *m = &g_array_index (all, Measured, i);

      for (guint r = 0; r < m->result->rows->len; r++, nrows++)
        {
          EffluxMeasureRow *row = g_ptr_array_index (m->result->rows, r);

          for (guint c = 0; c < nshow; c++)
            {
              gboolean is_text;
              double v = efflux_measure_value (row, show[c].col, &is_text);
              char *cell;

              if (is_text || show[c].col == 3)
                cell = efflux_measure_cell (row, show[c].col);
              else if (!isfinite (v))
                cell = g_strdup ("-");
              else
                cell = g_strdup_printf ("%.4g", v);
              width[c] = MAX (width[c], (int) g_utf8_strlen (cell, -1));
              g_ptr_array_add (cells, cell);
            }
        }
    }
  for (int line = 0; line < 2; line++)
    {
      for (guint c = 0; c < nshow; c++)
        g_string_append_printf (s, "%s%-*s", c ? "  " : "", width[c], line ? show[c].unit : show[c].head);
      g_string_append_c (s, '\n');
    }
  for (guint r = 0; r < nrows; r++)
    {
      for (guint c = 0; c < nshow; c++)
        {
          const char *cell = g_ptr_array_index (cells, r * nshow + c);
          int pad = width[c] - (int) g_utf8_strlen (cell, -1);

          g_string_append (s, c ? "  " : "");
          if (c >= 3)
            g_string_append_printf (s, "%*s%s", pad, "", cell);
          else
            g_string_append_printf (s, "%s%*s", cell, pad, "");
        }
      g_string_append_c (s, '\n');
    }
  return g_string_free (s, FALSE);
}

static char *
spectrum_csv (GArray *all)
{
  GString *s = g_string_new ("source,lobe,v_lsr_kms,v_offset_kms,dmdv_msun_per_kms,dmdv_err_msun_per_kms,ctau\n");
  char a[G_ASCII_DTOSTR_BUF_SIZE];

  for (guint i = 0; i < all->len; i++)
    {
      Measured *m = &g_array_index (all, Measured, i);

      for (guint l = 0; l < m->result->spectra->len; l++)
        {
          EffluxMassSpectrum *sp = g_ptr_array_index (m->result->spectra, l);

          for (guint k = 0; k < sp->n; k++)
            {
              csv_field (s, sp->source);
              g_string_append_c (s, ',');
              csv_field (s, sp->lobe);
              g_string_append_printf (s, ",%s", g_ascii_formatd (a, sizeof a, "%.7g", sp->v_lsr_kms[k]));
              g_string_append_printf (s, ",%s", g_ascii_formatd (a, sizeof a, "%.7g", sp->v_offset_kms[k]));
              g_string_append_printf (s, ",%s", g_ascii_formatd (a, sizeof a, "%.7g", sp->dmdv[k]));
              g_string_append_printf (s, ",%s", g_ascii_formatd (a, sizeof a, "%.7g", sp->dmdv_err[k]));
              g_string_append_printf (s, ",%s\n", g_ascii_formatd (a, sizeof a, "%.7g", sp->ctau[k]));
            }
        }
    }
  return g_string_free (s, FALSE);
}

static gboolean
parse_shard (const char *spec,
             guint      *k,
             guint      *n)
{
  g_auto (GStrv) parts = g_strsplit (spec, "/", -1);
  guint64 a, b;

  if (g_strv_length (parts) != 2
      || !g_ascii_string_to_unsigned (parts[0], 10, 1, G_MAXUINT, &a, NULL)
      || !g_ascii_string_to_unsigned (parts[1], 10, 1, G_MAXUINT, &b, NULL)
      || a > b)
    return FALSE;
  *k = (guint) a;
  *n = (guint) b;
  return TRUE;
}

int
efflux_cmd_measure (int    argc,
                    char **argv)
{
  g_autofree char *format = NULL;
  g_autofree char *output = NULL;
  g_autofree char *spectrum = NULL;
  g_autofree char *shard = NULL;
  gboolean mark = FALSE;
  GOptionEntry entries[] = {
    { "format", 'f', 0, G_OPTION_ARG_STRING, &format,
      N_("csv, ecsv, votable, latex, markdown or json (default: from the -o extension; a table on a terminal; csv otherwise)"), "FORMAT" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("write the table to FILE (atomically) instead of standard output"), "FILE" },
    { "shard", 0, 0, G_OPTION_ARG_STRING, &shard,
      N_("measure only sources K, K+N, K+2N, ... of the sample (1 <= K <= N), for a cluster job array"), "K/N" },
    { "mark", 0, 0, G_OPTION_ARG_NONE, &mark, N_("record in each measured dossier's [Status] group that it was measured"), NULL },
    { "spectrum", 0, 0, G_OPTION_ARG_FILENAME, &spectrum, N_("also write the mass-velocity spectrum of every lobe to FILE.csv"), "FILE.csv" },
    { NULL }
  };
  g_autoptr (GOptionContext) ctx = g_option_context_new (N_("DOSSIER|FOLDER... - measure every lobe of a sample of dossiers"));
  g_autoptr (GArray) all = g_array_new (FALSE, TRUE, sizeof (Measured));
  g_autoptr (GPtrArray) sample = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (EffluxTable) table = efflux_table_new ();
  g_autofree char *text = NULL;
  EffluxTableFormat fmt = EFFLUX_TABLE_CSV;
  gboolean terminal = FALSE;
  guint shard_k = 1, shard_n = 1;
  GError *error = NULL;
  int status;

  g_array_set_clear_func (all, measured_clear);
  g_set_prgname ("efflux-cli measure");
  g_option_context_set_translation_domain (ctx, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (ctx, entries, NULL);
  g_option_context_set_summary (ctx,
                                N_("One row per lobe and a total row per source (CONTRACT.md columns first, then\n"
                                   "noise errors, P/M and its age, Monte Carlo percentiles, mass-velocity fits,\n"
                                   "the hidden low-velocity mass and the opacity method). A FOLDER stands for its\n"
                                   "dossiers (*.efflux) sorted by name. Notes go to stderr."));
  if (!efflux_cli_parse (ctx, &argc, &argv, &status))
    return status;
  if (argc < 2)
    return efflux_cli_usage ("measure", "no dossier or folder given");
  if (format != NULL && !efflux_table_format_from_name (format, &fmt))
    return efflux_cli_usage ("measure", "unknown format '%s' (expected csv, ecsv, votable, latex, markdown or json)", format);
  if (format == NULL && output != NULL && !efflux_table_format_from_path (output, &fmt))
    fmt = EFFLUX_TABLE_CSV;
  if (format == NULL && output == NULL && isatty (STDOUT_FILENO))
    terminal = TRUE;
  if (shard != NULL && !parse_shard (shard, &shard_k, &shard_n))
    return efflux_cli_usage ("measure", "--shard '%s': expected K/N with 1 <= K <= N (e.g. 3/10)", shard);
  /* refuse an output that cannot be written before measuring for hours */
  if (output != NULL && !efflux_cli_check_output ("-o", output, &status))
    return status;
  if (spectrum != NULL && !efflux_cli_check_output ("--spectrum", spectrum, &status))
    return status;

  for (int i = 1; i < argc; i++)
    {
      if (g_file_test (argv[i], G_FILE_TEST_IS_DIR))
        {
          g_autoptr (GPtrArray) found = efflux_sample_list (argv[i], &error);

          if (found == NULL)
            return efflux_cli_fail (error);
          if (found->len == 0)
            return efflux_cli_fail (g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                                                 "%s: no dossier (*.efflux) in this folder", argv[i]));
          for (guint k = 0; k < found->len; k++)
            g_ptr_array_add (sample, g_strdup (g_ptr_array_index (found, k)));
        }
      else
        g_ptr_array_add (sample, g_strdup (argv[i]));
    }

  for (guint i = shard_k - 1; i < sample->len; i += shard_n)
    {
      const char *path = g_ptr_array_index (sample, i);
      Measured m = { NULL, NULL };

      m.dossier = efflux_dossier_load (path, &error);
      if (m.dossier == NULL)
        return efflux_cli_fail (error);
      m.result = efflux_measure_dossier (m.dossier, NULL, &error);
      if (m.result == NULL)
        {
          efflux_dossier_free (m.dossier);
          return efflux_cli_fail (error);
        }
      for (guint n = 0; n < m.result->notes->len; n++)
        fprintf (stderr, "efflux-cli: note: %s\n", (const char *) g_ptr_array_index (m.result->notes, n));
      efflux_table_add_source (table, m.dossier, m.result, i + 1, sample->len);
      g_array_append_val (all, m);
    }
  if (all->len == 0)
    fprintf (stderr, "efflux-cli: note: shard %u/%u holds no source of the %u: the table has a header only\n",
             shard_k, shard_n, sample->len);

  text = terminal ? table_text (all) : efflux_table_to_string (table, fmt);

  if (spectrum != NULL)
    {
      g_autofree char *sp = spectrum_csv (all);

      if (!efflux_write_file_atomic (spectrum, sp, -1, &error))
        return efflux_cli_fail (error);
    }
  if (output != NULL)
    {
      if (!efflux_write_file_atomic (output, text, -1, &error))
        return efflux_cli_fail (error);
    }
  else if ((status = efflux_cli_write_stdout (text, -1)) != EFFLUX_EXIT_OK)
    return status;
  if (mark)
    for (guint i = 0; i < all->len; i++)
      {
        Measured *m = &g_array_index (all, Measured, i);

        if (!efflux_sample_mark_measured (m->dossier->path, NULL, &error))
          return efflux_cli_fail (error);
      }
  return EFFLUX_EXIT_OK;
}
