/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include "efflux-cli.h"
#include "efflux-error.h"
#include "efflux-io.h"
#include "efflux-measure.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

/* efflux-cli measure DOSSIER... [--format csv|json] [-o FILE] [--spectrum FILE.csv] */

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

static char *
table_csv (GArray *all)
{
  const char * const *cols = efflux_measure_columns ();
  GString *s = g_string_new (NULL);

  for (guint c = 0; cols[c] != NULL; c++)
    {
      if (c)
        g_string_append_c (s, ',');
      g_string_append (s, cols[c]);
    }
  g_string_append_c (s, '\n');
  for (guint i = 0; i < all->len; i++)
    {
      Measured *m = &g_array_index (all, Measured, i);

      for (guint r = 0; r < m->result->rows->len; r++)
        {
          EffluxMeasureRow *row = g_ptr_array_index (m->result->rows, r);

          for (guint c = 0; cols[c] != NULL; c++)
            {
              g_autofree char *cell = efflux_measure_cell (row, c);

              if (c)
                g_string_append_c (s, ',');
              csv_field (s, cell);
            }
          g_string_append_c (s, '\n');
        }
    }
  return g_string_free (s, FALSE);
}

static void
json_pair (GString    *s,
           const char *key,
           double      value,
           gboolean    comma)
{
  efflux_json_string (s, key);
  g_string_append (s, ": ");
  efflux_json_number (s, value);
  if (comma)
    g_string_append (s, ", ");
}

static void
json_assumptions (GString             *s,
                  const EffluxDossier *d)
{
  g_string_append (s, "{");
  json_pair (s, "distance_pc", d->distance_pc, TRUE);
  json_pair (s, "distance_err_pc", d->distance_err_pc, TRUE);
  json_pair (s, "vsys_kms", d->vsys_kms, TRUE);
  g_string_append (s, "\"inclination_mode\": ");
  efflux_json_string (s, efflux_inclination_mode_name (d->inclination_mode));
  g_string_append (s, ", ");
  json_pair (s, "inclination_deg", d->inclination_deg, TRUE);
  json_pair (s, "inclination_range_lo_deg", d->inclination_range_deg[0], TRUE);
  json_pair (s, "inclination_range_hi_deg", d->inclination_range_deg[1], TRUE);
  json_pair (s, "tex_k", d->tex_k, TRUE);
  json_pair (s, "tbg_k", d->tbg_k, TRUE);
  json_pair (s, "co_abundance", d->co_abundance, TRUE);
  json_pair (s, "isotope_ratio", d->isotope_ratio, TRUE);
  json_pair (s, "mass_per_h2", d->mass_per_h2, TRUE);
  g_string_append (s, "\"opacity\": ");
  efflux_json_string (s, efflux_opacity_method_name (d->opacity));
  g_string_append (s, ", ");
  json_pair (s, "tau", d->tau, TRUE);
  json_pair (s, "clip_sigma", d->clip_sigma, TRUE);
  json_pair (s, "tex_range_lo_k", d->tex_range_k[0], TRUE);
  json_pair (s, "tex_range_hi_k", d->tex_range_k[1], TRUE);
  json_pair (s, "co_abundance_range_lo", d->co_abundance_range[0], TRUE);
  json_pair (s, "co_abundance_range_hi", d->co_abundance_range[1], TRUE);
  json_pair (s, "isotope_ratio_range_lo", d->isotope_ratio_range[0], TRUE);
  json_pair (s, "isotope_ratio_range_hi", d->isotope_ratio_range[1], TRUE);
  json_pair (s, "o18_ratio", d->o18_ratio, TRUE);
  json_pair (s, "sio_abundance", d->sio_abundance, TRUE);
  json_pair (s, "mc_samples", d->mc_samples, TRUE);
  json_pair (s, "mc_seed", (double) d->mc_seed, FALSE);
  g_string_append (s, "}");
}

static char *
table_json (GArray *all)
{
  const char * const *cols = efflux_measure_columns ();
  GString *s = g_string_new ("{\n  \"columns\": [");
  gboolean first = TRUE;

  for (guint c = 0; cols[c] != NULL; c++)
    {
      if (c)
        g_string_append (s, ", ");
      efflux_json_string (s, cols[c]);
    }
  g_string_append (s, "],\n  \"rows\": [");
  for (guint i = 0; i < all->len; i++)
    {
      Measured *m = &g_array_index (all, Measured, i);

      for (guint r = 0; r < m->result->rows->len; r++)
        {
          EffluxMeasureRow *row = g_ptr_array_index (m->result->rows, r);

          g_string_append (s, first ? "\n    [" : ",\n    [");
          first = FALSE;
          for (guint c = 0; cols[c] != NULL; c++)
            {
              gboolean is_text;
              double v = efflux_measure_value (row, c, &is_text);

              if (c)
                g_string_append (s, ", ");
              if (is_text)
                {
                  g_autofree char *cell = efflux_measure_cell (row, c);
                  if (c == 2 && row->is_total)
                    g_string_append (s, "null");
                  else
                    efflux_json_string (s, cell);
                }
              else
                efflux_json_number (s, v);
            }
          g_string_append (s, "]");
        }
    }
  g_string_append (s, "\n  ],\n  \"metadata\": {\n    \"efflux_version\": ");
  efflux_json_string (s, PACKAGE_VERSION);
  g_string_append (s, ",\n    \"sources\": [");
  for (guint i = 0; i < all->len; i++)
    {
      Measured *m = &g_array_index (all, Measured, i);

      g_string_append (s, i ? ",\n      {" : "\n      {");
      g_string_append (s, "\"source\": ");
      efflux_json_string (s, m->dossier->name);
      g_string_append (s, ", \"dossier\": ");
      efflux_json_string (s, m->dossier->path);
      g_string_append (s, ", \"assumptions\": ");
      json_assumptions (s, m->dossier);
      g_string_append (s, ", \"notes\": [");
      for (guint n = 0; n < m->result->notes->len; n++)
        {
          if (n)
            g_string_append (s, ", ");
          efflux_json_string (s, g_ptr_array_index (m->result->notes, n));
        }
      g_string_append (s, "]}");
    }
  g_string_append (s, "\n    ]\n  }\n}\n");
  return g_string_free (s, FALSE);
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

static int
write_stdout (const char *text)
{
  size_t n = strlen (text);

  if (fwrite (text, 1, n, stdout) != n || fflush (stdout) != 0)
    {
      int saved = errno;

      return efflux_cli_fail (g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_IO, "standard output: %s",
                                           g_strerror (saved)));
    }
  return EFFLUX_EXIT_OK;
}

int
efflux_cmd_measure (int    argc,
                    char **argv)
{
  g_autofree char *format = NULL;
  g_autofree char *output = NULL;
  g_autofree char *spectrum = NULL;
  GOptionEntry entries[] = {
    { "format", 'f', 0, G_OPTION_ARG_STRING, &format, "csv or json (default: a table on a terminal, csv otherwise)", "FORMAT" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, "write the table to FILE (atomically) instead of standard output", "FILE" },
    { "spectrum", 0, 0, G_OPTION_ARG_FILENAME, &spectrum, "also write the mass-velocity spectrum of every lobe to FILE.csv", "FILE.csv" },
    { NULL }
  };
  g_autoptr (GOptionContext) ctx = g_option_context_new ("DOSSIER... - measure every lobe of one or more dossiers");
  g_autoptr (GArray) all = g_array_new (FALSE, TRUE, sizeof (Measured));
  g_autofree char *text = NULL;
  GError *error = NULL;
  int status;

  g_array_set_clear_func (all, measured_clear);
  g_set_prgname ("efflux-cli measure");
  g_option_context_add_main_entries (ctx, entries, NULL);
  g_option_context_set_summary (ctx,
                                "One row per lobe and a total row per source (CONTRACT.md columns first, then\n"
                                "noise errors, P/M and its age, Monte Carlo percentiles, mass-velocity fits,\n"
                                "the hidden low-velocity mass and the opacity method). Notes go to stderr.");
  if (!efflux_cli_parse (ctx, &argc, &argv, &status))
    return status;
  if (argc < 2)
    return efflux_cli_usage ("measure", "no dossier given");
  if (format != NULL && strcmp (format, "csv") != 0 && strcmp (format, "json") != 0)
    return efflux_cli_usage ("measure", "unknown format '%s' (expected csv or json)", format);

  for (int i = 1; i < argc; i++)
    {
      Measured m = { NULL, NULL };

      m.dossier = efflux_dossier_load (argv[i], &error);
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
      g_array_append_val (all, m);
    }

  if (format == NULL && output == NULL && isatty (STDOUT_FILENO))
    text = table_text (all);
  else if (format != NULL && strcmp (format, "json") == 0)
    text = table_json (all);
  else
    text = table_csv (all);

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
      return EFFLUX_EXIT_OK;
    }
  return write_stdout (text);
}
