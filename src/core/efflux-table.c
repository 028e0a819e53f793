/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The measurement table of a sample and its writers (csv, ecsv, votable, latex, markdown, json),
 * the csv reader for merging shards, and rounding to the uncertainty. See efflux-table.h. */
#include "config.h"

#include "efflux-table.h"

#include "efflux-error.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------------------------------------- */
/* column and assumption descriptions                                                              */

typedef struct
{
  const char      *name;
  EffluxTableType  type;
  const char      *unit;
  const char      *unit_cds;
  const char      *ucd;
  const char      *description;
} ColumnInfo;

/* UCD1+ words from the IVOA list (UCD1+ controlled vocabulary, version 1.4; the tests check each
 * combination with astropy.io.votable.ucd.check_ucd). There is no word for momentum or force:
 * momentum is phys.mass;phys.veloc (mass times velocity), force phys.mass.loss;phys.veloc (a
 * mass rate times velocity). */
static const ColumnInfo column_info[] = {
  { "source", EFFLUX_TABLE_TEXT, "", "", "meta.id;meta.main", "Source name ([Source] name of the dossier)" },
  { "lobe", EFFLUX_TABLE_TEXT, "", "", "meta.id.part", "Lobe name; total for the source's total row" },
  { "kind", EFFLUX_TABLE_TEXT, "", "", "meta.code.class", "Lobe kind, blue or red (empty on total rows)" },
  { "voxels", EFFLUX_TABLE_INT, "", "", "meta.number", "Voxels that enter the sums" },
  { "mass_msun", EFFLUX_TABLE_REAL, "solMass", "solMass", "phys.mass", "Mass, sum of the voxel masses (LTE)" },
  { "momentum_msun_kms", EFFLUX_TABLE_REAL, "km solMass / s", "solMass.km.s-1", "phys.mass;phys.veloc",
    "Momentum, sum of m |v - vsys|, corrected for inclination" },
  { "energy_erg", EFFLUX_TABLE_REAL, "erg", "erg", "phys.energy",
    "Kinetic energy, 1/2 sum of m (v - vsys)^2, corrected for inclination" },
  { "vmax_kms", EFFLUX_TABLE_REAL, "km / s", "km.s-1", "phys.veloc;stat.max",
    "Largest |v - vsys| of a detected voxel, corrected for inclination" },
  { "rmax_au", EFFLUX_TABLE_REAL, "AU", "AU", "phys.size;stat.max",
    "Largest distance from the source to a detected lobe pixel, corrected for inclination" },
  { "tdyn_yr", EFFLUX_TABLE_REAL, "yr", "yr", "time.age", "Dynamical age rmax / vmax" },
  { "mdot_msun_yr", EFFLUX_TABLE_REAL, "solMass / yr", "solMass.yr-1", "phys.mass.loss", "Mass-loss rate, mass / tdyn" },
  { "force_msun_kms_yr", EFFLUX_TABLE_REAL, "km solMass / (s yr)", "solMass.km.s-1.yr-1", "phys.mass.loss;phys.veloc",
    "Force (momentum rate), momentum / tdyn" },
  { "lmech_lsun", EFFLUX_TABLE_REAL, "solLum", "solLum", "phys.luminosity", "Mechanical luminosity, energy / tdyn" },
  { "inclination_deg", EFFLUX_TABLE_REAL, "deg", "deg", "src.orbital.inclination",
    "Inclination of the outflow axis to the line of sight (0 pole-on); empty for mode none" },
  { "pm_kms", EFFLUX_TABLE_REAL, "km / s", "km.s-1", "phys.veloc;stat.mean", "Mass-weighted speed P / M" },
  { "age_pm_yr", EFFLUX_TABLE_REAL, "yr", "yr", "time.age", "Age rmax / (P / M), for comparison only (runs long)" },
  { "mv_gamma", EFFLUX_TABLE_REAL, "", "", "stat.fit.param", "Slope gamma of a single power law dM/dv ~ v^gamma" },
  { "mv_break_kms", EFFLUX_TABLE_REAL, "km / s", "km.s-1", "phys.veloc;stat.fit.param",
    "Break velocity of a broken power-law fit of dM/dv" },
  { "mv_gamma_low", EFFLUX_TABLE_REAL, "", "", "stat.fit.param", "Broken power law: slope below the break" },
  { "mv_gamma_high", EFFLUX_TABLE_REAL, "", "", "stat.fit.param", "Broken power law: slope above the break" },
  { "hidden_mass_msun", EFFLUX_TABLE_REAL, "solMass", "solMass", "phys.mass",
    "Mass in the excluded low-velocity range from the power law (reported, not added)" },
  { "opacity", EFFLUX_TABLE_TEXT, "", "", "meta.code", "Opacity correction method" },
};

typedef struct
{
  const char *key;
  gboolean    numeric;
  const char *unit;
  const char *unit_cds;
  const char *ucd;
} ParamInfo;

static const ParamInfo param_info[] = {
  { "distance_pc", TRUE, "pc", "pc", "pos.distance" },
  { "distance_err_pc", TRUE, "pc", "pc", "stat.error;pos.distance" },
  { "vsys_kms", TRUE, "km / s", "km.s-1", "spect.dopplerVeloc" },
  { "inclination_mode", FALSE, "", "", "meta.code" },
  { "inclination_deg", TRUE, "deg", "deg", "src.orbital.inclination" },
  { "inclination_range_lo_deg", TRUE, "deg", "deg", "src.orbital.inclination;stat.min" },
  { "inclination_range_hi_deg", TRUE, "deg", "deg", "src.orbital.inclination;stat.max" },
  { "tex_k", TRUE, "K", "K", "phys.temperature" },
  { "tbg_k", TRUE, "K", "K", "phys.temperature" },
  { "co_abundance", TRUE, "", "", "phys.abund" },
  { "isotope_ratio", TRUE, "", "", "phys.abund" },
  { "mass_per_h2", TRUE, "", "", "phys.atmol.weight" },
  { "opacity", FALSE, "", "", "meta.code" },
  { "tau", TRUE, "", "", "phys.absorption.opticalDepth" },
  { "clip_sigma", TRUE, "", "", "stat.snr" },
  { "tex_range_lo_k", TRUE, "K", "K", "phys.temperature;stat.min" },
  { "tex_range_hi_k", TRUE, "K", "K", "phys.temperature;stat.max" },
  { "co_abundance_range_lo", TRUE, "", "", "phys.abund;stat.min" },
  { "co_abundance_range_hi", TRUE, "", "", "phys.abund;stat.max" },
  { "isotope_ratio_range_lo", TRUE, "", "", "phys.abund;stat.min" },
  { "isotope_ratio_range_hi", TRUE, "", "", "phys.abund;stat.max" },
  { "o18_ratio", TRUE, "", "", "phys.abund" },
  { "sio_abundance", TRUE, "", "", "phys.abund" },
  { "mc_samples", TRUE, "", "", "meta.number" },
  { "mc_seed", TRUE, "", "", "meta.code" },
};

/* the metadata columns of csv, after the table's own */
static const char * const csv_meta[] = { "efflux_version", "sample_index", "sample_size", "dossier", "notes" };
/* the notes of a source in one csv cell */
#define CSV_NOTE_SEPARATOR " | "
/* csv names the assumption columns with this prefix (the table has its own inclination_deg and
 * opacity columns) */
#define CSV_PARAM_PREFIX "assumed_"


static const ColumnInfo *
find_column_info (const char *name)
{
  for (guint i = 0; i < G_N_ELEMENTS (column_info); i++)
    if (strcmp (column_info[i].name, name) == 0)
      return &column_info[i];
  return NULL;
}

static const ParamInfo *
find_param_info (const char *key)
{
  for (guint i = 0; i < G_N_ELEMENTS (param_info); i++)
    if (strcmp (param_info[i].key, key) == 0)
      return &param_info[i];
  return NULL;
}

static EffluxTableColumn *
column_new (const char *name)
{
  static const struct { const char *suffix, *ucd_pre, *ucd_post, *what; } derived[] = {
    { "_err", "stat.error;", "", "Noise error (1 sigma) of: " },
    { "_p16", "", ";stat.min", "16th percentile of the Monte Carlo over the assumptions: " },
    { "_p50", "", ";stat.median", "Median of the Monte Carlo over the assumptions: " },
    { "_p84", "", ";stat.max", "84th percentile of the Monte Carlo over the assumptions: " },
  };
  EffluxTableColumn *col = g_new0 (EffluxTableColumn, 1);
  const ColumnInfo *info = find_column_info (name);

  col->name = g_strdup (name);
  if (info != NULL)
    {
      col->type = info->type;
      col->unit = g_strdup (info->unit);
      col->unit_cds = g_strdup (info->unit_cds);
      col->ucd = g_strdup (info->ucd);
      col->description = g_strdup (info->description);
      return col;
    }
  for (guint i = 0; i < G_N_ELEMENTS (derived); i++)
    if (g_str_has_suffix (name, derived[i].suffix))
      {
        g_autofree char *base = g_strndup (name, strlen (name) - strlen (derived[i].suffix));

        info = find_column_info (base);
        if (info == NULL || info->type != EFFLUX_TABLE_REAL)
          break;
        col->type = EFFLUX_TABLE_REAL;
        col->unit = g_strdup (info->unit);
        col->unit_cds = g_strdup (info->unit_cds);
        col->ucd = g_strconcat (derived[i].ucd_pre, info->ucd, derived[i].ucd_post, NULL);
        col->description = g_strconcat (derived[i].what, info->description, NULL);
        return col;
      }
  /* a column this version does not describe (a part written by another version) */
  col->type = EFFLUX_TABLE_REAL;
  col->unit = g_strdup ("");
  col->unit_cds = g_strdup ("");
  col->ucd = g_strdup ("");
  col->description = g_strdup ("");
  return col;
}

static void
column_free (gpointer p)
{
  EffluxTableColumn *col = p;

  g_free (col->name);
  g_free (col->unit);
  g_free (col->unit_cds);
  g_free (col->ucd);
  g_free (col->description);
  g_free (col);
}

static EffluxTableParam *
param_new (const char *key,
           const char *value)
{
  EffluxTableParam *p = g_new0 (EffluxTableParam, 1);
  const ParamInfo *info = find_param_info (key);

  p->key = g_strdup (key);
  p->value = g_strdup (value);
  p->numeric = info ? info->numeric : FALSE;
  p->unit = info ? info->unit : "";
  p->unit_cds = info ? info->unit_cds : "";
  p->ucd = info ? info->ucd : "meta.note";
  return p;
}

static void
param_free (gpointer data)
{
  EffluxTableParam *p = data;

  g_free (p->key);
  g_free (p->value);
  g_free (p);
}

static EffluxTableSource *
source_new (void)
{
  EffluxTableSource *s = g_new0 (EffluxTableSource, 1);

  s->params = g_ptr_array_new_with_free_func (param_free);
  s->notes = g_ptr_array_new_with_free_func (g_free);
  return s;
}

static void
source_free (gpointer data)
{
  EffluxTableSource *s = data;

  g_free (s->source);
  g_free (s->dossier);
  g_ptr_array_unref (s->params);
  g_ptr_array_unref (s->notes);
  g_free (s);
}

static EffluxTableSource *
source_copy (const EffluxTableSource *from)
{
  EffluxTableSource *s = source_new ();

  s->source = g_strdup (from->source);
  s->dossier = g_strdup (from->dossier);
  s->sample_index = from->sample_index;
  s->sample_size = from->sample_size;
  for (guint i = 0; i < from->params->len; i++)
    {
      const EffluxTableParam *p = g_ptr_array_index (from->params, i);

      g_ptr_array_add (s->params, param_new (p->key, p->value));
    }
  for (guint i = 0; i < from->notes->len; i++)
    g_ptr_array_add (s->notes, g_strdup (g_ptr_array_index (from->notes, i)));
  return s;
}

static EffluxTableRow *
row_new (guint n_columns)
{
  EffluxTableRow *r = g_new0 (EffluxTableRow, 1);

  r->text = g_new0 (char *, n_columns + 1);
  r->value = g_new (double, n_columns);
  for (guint c = 0; c < n_columns; c++)
    r->value[c] = NAN;
  return r;
}

static void
row_free (gpointer data)
{
  EffluxTableRow *r = data;

  g_strfreev (r->text);
  g_free (r->value);
  g_free (r);
}

/* ---------------------------------------------------------------------------------------------- */
/* the model                                                                                        */

char *
efflux_table_number_text (double value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  if (!isfinite (value))
    return g_strdup ("");
  for (int prec = 1; prec <= 17; prec++)
    {
      char fmt[8];

      g_snprintf (fmt, sizeof fmt, "%%.%dg", prec);
      g_ascii_formatd (buf, sizeof buf, fmt, value);
      if (g_ascii_strtod (buf, NULL) == value)
        {
          /* no exponent where plain digits read as well: 350, not 3.5e+02 */
          double mag = fabs (value);

          if (strchr (buf, 'e') != NULL && mag >= 1e-4 && mag < 1e16)
            {
              int digits = MAX (prec, (int) floor (log10 (mag)) + 1);

              g_snprintf (fmt, sizeof fmt, "%%.%dg", digits);
              g_ascii_formatd (buf, sizeof buf, fmt, value);
            }
          break;
        }
    }
  return g_strdup (buf);
}

EffluxTable *
efflux_table_new (void)
{
  EffluxTable *t = g_new0 (EffluxTable, 1);
  const char * const *cols = efflux_measure_columns ();

  t->version = g_strdup (PACKAGE_VERSION);
  t->columns = g_ptr_array_new_with_free_func (column_free);
  t->sources = g_ptr_array_new_with_free_func (source_free);
  t->rows = g_ptr_array_new_with_free_func (row_free);
  for (guint c = 0; cols[c] != NULL; c++)
    g_ptr_array_add (t->columns, column_new (cols[c]));
  return t;
}

void
efflux_table_free (EffluxTable *table)
{
  if (table == NULL)
    return;
  g_free (table->version);
  g_ptr_array_unref (table->columns);
  g_ptr_array_unref (table->sources);
  g_ptr_array_unref (table->rows);
  g_free (table);
}

static void
add_number (EffluxTableSource *s,
            const char        *key,
            double             value)
{
  g_autofree char *text = efflux_table_number_text (value);

  g_ptr_array_add (s->params, param_new (key, text));
}

void
efflux_table_add_source (EffluxTable               *table,
                         const EffluxDossier       *d,
                         const EffluxMeasureResult *result,
                         guint                      sample_index,
                         guint                      sample_size)
{
  EffluxTableSource *s = source_new ();
  guint ncol = table->columns->len;

  s->source = g_strdup (d->name);
  s->dossier = g_path_get_basename (d->path);
  s->sample_index = sample_index;
  s->sample_size = sample_size;
  add_number (s, "distance_pc", d->distance_pc);
  add_number (s, "distance_err_pc", d->distance_err_pc);
  add_number (s, "vsys_kms", d->vsys_kms);
  g_ptr_array_add (s->params, param_new ("inclination_mode", efflux_inclination_mode_name (d->inclination_mode)));
  add_number (s, "inclination_deg", d->inclination_deg);
  add_number (s, "inclination_range_lo_deg", d->inclination_range_deg[0]);
  add_number (s, "inclination_range_hi_deg", d->inclination_range_deg[1]);
  add_number (s, "tex_k", d->tex_k);
  add_number (s, "tbg_k", d->tbg_k);
  add_number (s, "co_abundance", d->co_abundance);
  add_number (s, "isotope_ratio", d->isotope_ratio);
  add_number (s, "mass_per_h2", d->mass_per_h2);
  g_ptr_array_add (s->params, param_new ("opacity", efflux_opacity_method_name (d->opacity)));
  add_number (s, "tau", d->tau);
  add_number (s, "clip_sigma", d->clip_sigma);
  add_number (s, "tex_range_lo_k", d->tex_range_k[0]);
  add_number (s, "tex_range_hi_k", d->tex_range_k[1]);
  add_number (s, "co_abundance_range_lo", d->co_abundance_range[0]);
  add_number (s, "co_abundance_range_hi", d->co_abundance_range[1]);
  add_number (s, "isotope_ratio_range_lo", d->isotope_ratio_range[0]);
  add_number (s, "isotope_ratio_range_hi", d->isotope_ratio_range[1]);
  add_number (s, "o18_ratio", d->o18_ratio);
  add_number (s, "sio_abundance", d->sio_abundance);
  add_number (s, "mc_samples", d->mc_samples);
  add_number (s, "mc_seed", (double) d->mc_seed);
  for (guint n = 0; n < result->notes->len; n++)
    g_ptr_array_add (s->notes, g_strdup (g_ptr_array_index (result->notes, n)));
  g_ptr_array_add (table->sources, s);

  for (guint r = 0; r < result->rows->len; r++)
    {
      const EffluxMeasureRow *mr = g_ptr_array_index (result->rows, r);
      EffluxTableRow *row = row_new (ncol);

      row->source = table->sources->len - 1;
      for (guint c = 0; c < ncol; c++)
        {
          const EffluxTableColumn *col = g_ptr_array_index (table->columns, c);
          gboolean is_text;
          double v = efflux_measure_value (mr, c, &is_text);

          if (is_text)
            row->text[c] = efflux_measure_cell (mr, c);
          else if (col->type == EFFLUX_TABLE_INT)
            {
              row->text[c] = efflux_measure_cell (mr, c);
              row->value[c] = v;
            }
          else
            {
              row->text[c] = efflux_table_number_text (v);
              row->value[c] = isfinite (v) ? v : NAN;
            }
        }
      g_ptr_array_add (table->rows, row);
    }
}

gboolean
efflux_table_format_from_name (const char        *name,
                               EffluxTableFormat *format)
{
  static const struct { const char *name; EffluxTableFormat format; } names[] = {
    { "csv", EFFLUX_TABLE_CSV }, { "ecsv", EFFLUX_TABLE_ECSV }, { "votable", EFFLUX_TABLE_VOTABLE },
    { "vot", EFFLUX_TABLE_VOTABLE }, { "xml", EFFLUX_TABLE_VOTABLE }, { "latex", EFFLUX_TABLE_LATEX },
    { "tex", EFFLUX_TABLE_LATEX }, { "markdown", EFFLUX_TABLE_MARKDOWN }, { "md", EFFLUX_TABLE_MARKDOWN },
    { "json", EFFLUX_TABLE_JSON },
  };

  for (guint i = 0; i < G_N_ELEMENTS (names); i++)
    if (g_ascii_strcasecmp (name, names[i].name) == 0)
      {
        *format = names[i].format;
        return TRUE;
      }
  return FALSE;
}

gboolean
efflux_table_format_from_path (const char        *path,
                               EffluxTableFormat *format)
{
  const char *dot = strrchr (path, '.');
  const char *slash = strrchr (path, '/');

  if (dot == NULL || (slash != NULL && dot < slash))
    return FALSE;
  return efflux_table_format_from_name (dot + 1, format);
}

/* ---------------------------------------------------------------------------------------------- */
/* csv                                                                                              */

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
write_csv (const EffluxTable *t)
{
  GString *s = g_string_new (NULL);
  const EffluxTableSource *first = t->sources->len ? g_ptr_array_index (t->sources, 0) : NULL;

  for (guint c = 0; c < t->columns->len; c++)
    {
      const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

      if (c)
        g_string_append_c (s, ',');
      csv_field (s, col->name);
    }
  for (guint m = 0; m < G_N_ELEMENTS (csv_meta); m++)
    g_string_append_printf (s, ",%s", csv_meta[m]);
  if (first != NULL)
    for (guint p = 0; p < first->params->len; p++)
      {
        const EffluxTableParam *param = g_ptr_array_index (first->params, p);

        g_string_append (s, "," CSV_PARAM_PREFIX);
        csv_field (s, param->key);
      }
  else
    for (guint p = 0; p < G_N_ELEMENTS (param_info); p++)
      g_string_append_printf (s, "," CSV_PARAM_PREFIX "%s", param_info[p].key);
  g_string_append_c (s, '\n');
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);
      const EffluxTableSource *src = g_ptr_array_index (t->sources, row->source);

      for (guint c = 0; c < t->columns->len; c++)
        {
          if (c)
            g_string_append_c (s, ',');
          csv_field (s, row->text[c]);
        }
      g_string_append_c (s, ',');
      csv_field (s, t->version);
      g_string_append_printf (s, ",%u,%u,", src->sample_index, src->sample_size);
      csv_field (s, src->dossier);
      g_string_append_c (s, ',');
      {
        g_autoptr (GString) notes = g_string_new (NULL);

        for (guint n = 0; n < src->notes->len; n++)
          g_string_append_printf (notes, "%s%s", n ? CSV_NOTE_SEPARATOR : "",
                                  (const char *) g_ptr_array_index (src->notes, n));
        csv_field (s, notes->str);
      }
      for (guint p = 0; p < src->params->len; p++)
        {
          const EffluxTableParam *param = g_ptr_array_index (src->params, p);

          g_string_append_c (s, ',');
          csv_field (s, param->value);
        }
      g_string_append_c (s, '\n');
    }
  return g_string_free (s, FALSE);
}

/* Split CSV text into records of fields (RFC 4180 quoting; LF or CRLF line ends). */
static GPtrArray *
csv_parse (const char  *data,
           gsize        length,
           const char  *name,
           GError     **error)
{
  g_autoptr (GPtrArray) records = g_ptr_array_new_with_free_func ((GDestroyNotify) g_ptr_array_unref);
  GPtrArray *record = NULL;
  GString *field = g_string_new (NULL);
  gsize i = 0;
  guint line = 1;

  while (i < length)
    {
      gboolean quoted = FALSE;

      if (record == NULL)
        {
          record = g_ptr_array_new_with_free_func (g_free);
          g_ptr_array_add (records, record);
        }
      g_string_truncate (field, 0);
      if (data[i] == '"')
        {
          quoted = TRUE;
          i++;
          for (;;)
            {
              if (i >= length)
                {
                  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                               "%s: line %u: a quoted field does not end", name, line);
                  g_string_free (field, TRUE);
                  return NULL;
                }
              if (data[i] == '"')
                {
                  if (i + 1 < length && data[i + 1] == '"')
                    {
                      g_string_append_c (field, '"');
                      i += 2;
                      continue;
                    }
                  i++;
                  break;
                }
              if (data[i] == '\n')
                line++;
              g_string_append_c (field, data[i++]);
            }
        }
      while (i < length && data[i] != ',' && data[i] != '\n' && data[i] != '\r')
        {
          if (quoted || data[i] == '"')
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: line %u: stray quote or text after a quoted field", name, line);
              g_string_free (field, TRUE);
              return NULL;
            }
          g_string_append_c (field, data[i++]);
        }
      g_ptr_array_add (record, g_strdup (field->str));
      if (i < length && data[i] == ',')
        {
          i++;
          if (i == length)
            g_ptr_array_add (record, g_strdup (""));
          continue;
        }
      if (i < length && data[i] == '\r')
        i++;
      if (i < length && data[i] == '\n')
        i++;
      line++;
      record = NULL;
    }
  g_string_free (field, TRUE);
  return g_steal_pointer (&records);
}

EffluxTable *
efflux_table_new_from_csv (const char  *data,
                           gsize        length,
                           const char  *name,
                           GError     **error)
{
  g_autoptr (GPtrArray) records = csv_parse (data, length, name, error);
  g_autoptr (EffluxTable) t = NULL;
  GPtrArray *head;
  guint meta = G_MAXUINT, ncol, nfield;

  if (records == NULL)
    return NULL;
  if (records->len == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: empty file, not a table", name);
      return NULL;
    }
  head = g_ptr_array_index (records, 0);
  nfield = head->len;
  for (guint f = 0; f < head->len; f++)
    if (strcmp (g_ptr_array_index (head, f), csv_meta[0]) == 0)
      {
        meta = f;
        break;
      }
  if (meta == G_MAXUINT || meta + G_N_ELEMENTS (csv_meta) > head->len)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: no efflux_version column: not a csv table written by efflux-cli measure", name);
      return NULL;
    }
  for (guint m = 1; m < G_N_ELEMENTS (csv_meta); m++)
    if (strcmp (g_ptr_array_index (head, meta + m), csv_meta[m]) != 0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: column %u is '%s', expected '%s'",
                     name, meta + m + 1, (const char *) g_ptr_array_index (head, meta + m), csv_meta[m]);
        return NULL;
      }

  t = g_new0 (EffluxTable, 1);
  t->columns = g_ptr_array_new_with_free_func (column_free);
  t->sources = g_ptr_array_new_with_free_func (source_free);
  t->rows = g_ptr_array_new_with_free_func (row_free);
  for (guint c = 0; c < meta; c++)
    g_ptr_array_add (t->columns, column_new (g_ptr_array_index (head, c)));
  ncol = meta;

  for (guint r = 1; r < records->len; r++)
    {
      GPtrArray *rec = g_ptr_array_index (records, r);
      EffluxTableSource *src = t->sources->len ? g_ptr_array_index (t->sources, t->sources->len - 1) : NULL;
      EffluxTableRow *row;
      guint64 index, size;
      const char *version;

      if (rec->len == 1 && *(const char *) g_ptr_array_index (rec, 0) == '\0')
        continue;           /* a blank line */
      if (rec->len != nfield)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: row %u has %u fields, the header %u",
                       name, r + 1, rec->len, nfield);
          return NULL;
        }
      version = g_ptr_array_index (rec, meta);
      if (t->version == NULL)
        t->version = g_strdup (version);
      else if (strcmp (t->version, version) != 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: row %u: efflux_version %s, earlier rows %s",
                       name, r + 1, version, t->version);
          return NULL;
        }
      /* at most 2^24 sources: merge keeps one slot per source of the sample */
      if (!g_ascii_string_to_unsigned (g_ptr_array_index (rec, meta + 1), 10, 1, 1u << 24, &index, NULL)
          || !g_ascii_string_to_unsigned (g_ptr_array_index (rec, meta + 2), 10, 1, 1u << 24, &size, NULL)
          || index > size)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: row %u: sample_index '%s' / sample_size '%s' are not 1 <= index <= size <= 16777216",
                       name, r + 1, (const char *) g_ptr_array_index (rec, meta + 1),
                       (const char *) g_ptr_array_index (rec, meta + 2));
          return NULL;
        }
      if (src == NULL || src->sample_index != index)
        {
          for (guint k = 0; k < t->sources->len; k++)
            if (((EffluxTableSource *) g_ptr_array_index (t->sources, k))->sample_index == index)
              {
                g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                             "%s: row %u: the rows of sample_index %u are not together", name, r + 1, (guint) index);
                return NULL;
              }
          src = source_new ();
          src->source = g_strdup (g_ptr_array_index (rec, 0));
          src->dossier = g_strdup (g_ptr_array_index (rec, meta + 3));
          {
            const char *notes = g_ptr_array_index (rec, meta + 4);

            if (*notes != '\0')
              {
                g_auto (GStrv) each = g_strsplit (notes, CSV_NOTE_SEPARATOR, -1);

                for (guint n = 0; each[n] != NULL; n++)
                  g_ptr_array_add (src->notes, g_strdup (each[n]));
              }
          }
          src->sample_index = index;
          src->sample_size = size;
          for (guint f = meta + G_N_ELEMENTS (csv_meta); f < nfield; f++)
            {
              const char *key = g_ptr_array_index (head, f);

              if (g_str_has_prefix (key, CSV_PARAM_PREFIX))
                key += strlen (CSV_PARAM_PREFIX);
              g_ptr_array_add (src->params, param_new (key, g_ptr_array_index (rec, f)));
            }
          g_ptr_array_add (t->sources, src);
        }
      row = row_new (ncol);
      row->source = t->sources->len - 1;
      for (guint c = 0; c < ncol; c++)
        {
          const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);
          const char *text = g_ptr_array_index (rec, c);

          row->text[c] = g_strdup (text);
          if (col->type != EFFLUX_TABLE_TEXT && *text != '\0')
            {
              char *end = NULL;
              double v = g_ascii_strtod (text, &end);

              if (end == text || *end != '\0')
                {
                  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: row %u, column %s: '%s' is not a number",
                               name, r + 1, col->name, text);
                  row_free (row);
                  return NULL;
                }
              row->value[c] = v;
            }
        }
      g_ptr_array_add (t->rows, row);
    }
  /* a header only: a shard that got no source (more shards than sources) */
  return g_steal_pointer (&t);
}

/* ---------------------------------------------------------------------------------------------- */
/* merge                                                                                            */

typedef struct
{
  guint part;
  guint source;
} Where;

EffluxTable *
efflux_table_merge (EffluxTable * const *parts,
                    const char * const  *names,
                    guint                n_parts,
                    GError             **error)
{
  g_autoptr (EffluxTable) t = NULL;
  const EffluxTable *p0;
  const EffluxTableSource *s0;
  g_autofree Where *where = NULL;
  guint size;
  g_autoptr (GString) missing = g_string_new (NULL);
  guint n_missing = 0;

  guint k0 = 0;

  g_return_val_if_fail (n_parts > 0, NULL);
  while (k0 < n_parts && parts[k0]->sources->len == 0)
    k0++;
  if (k0 == n_parts)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no source in any part%s", names[0],
                   n_parts > 1 ? " (every part holds a header only)" : " (a header only)");
      return NULL;
    }
  p0 = parts[k0];
  s0 = g_ptr_array_index (p0->sources, 0);
  size = s0->sample_size;
  where = g_new (Where, size);
  for (guint i = 0; i < size; i++)
    where[i].part = G_MAXUINT;

  for (guint k = 0; k < n_parts; k++)
    {
      const EffluxTable *p = parts[k];

      if (p->version != NULL && strcmp (p->version, p0->version) != 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: written by Efflux %s, %s by Efflux %s: measure all parts with one version",
                       names[k], p->version, names[k0], p0->version);
          return NULL;
        }
      for (guint c = 0; c < MAX (p->columns->len, p0->columns->len); c++)
        {
          const char *a = c < p->columns->len ? ((EffluxTableColumn *) g_ptr_array_index (p->columns, c))->name : "(none)";
          const char *b = c < p0->columns->len ? ((EffluxTableColumn *) g_ptr_array_index (p0->columns, c))->name : "(none)";

          if (strcmp (a, b) != 0)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: column %u is %s, in %s it is %s: not parts of one table",
                           names[k], c + 1, a, names[k0], b);
              return NULL;
            }
        }
      for (guint i = 0; i < p->sources->len; i++)
        {
          const EffluxTableSource *s = g_ptr_array_index (p->sources, i);

          if (s->sample_size != size)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: a sample of %u sources, %s of %u: not parts of one sample",
                           names[k], s->sample_size, names[k0], size);
              return NULL;
            }
          if (s->params->len != s0->params->len)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %u assumption columns, %s has %u",
                           names[k], s->params->len, names[k0], s0->params->len);
              return NULL;
            }
          for (guint q = 0; q < s->params->len; q++)
            {
              const char *a = ((EffluxTableParam *) g_ptr_array_index (s->params, q))->key;
              const char *b = ((EffluxTableParam *) g_ptr_array_index (s0->params, q))->key;

              if (strcmp (a, b) != 0)
                {
                  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: assumption column %s, in %s it is %s",
                               names[k], a, names[k0], b);
                  return NULL;
                }
            }
          if (where[s->sample_index - 1].part != G_MAXUINT)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: source %u of the sample (%s) is also in %s",
                           names[k], s->sample_index, s->dossier, names[where[s->sample_index - 1].part]);
              return NULL;
            }
          where[s->sample_index - 1].part = k;
          where[s->sample_index - 1].source = i;
        }
    }
  for (guint i = 0; i < size; i++)
    if (where[i].part == G_MAXUINT)
      {
        if (n_missing < 10)
          g_string_append_printf (missing, "%s%u", n_missing ? ", " : "", i + 1);
        n_missing++;
      }
  if (n_missing > 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%u of the %u sources of the sample are in no part (%s%s)",
                   n_missing, size, missing->str, n_missing > 10 ? ", ..." : "");
      return NULL;
    }

  t = g_new0 (EffluxTable, 1);
  t->version = g_strdup (p0->version);
  t->columns = g_ptr_array_new_with_free_func (column_free);
  t->sources = g_ptr_array_new_with_free_func (source_free);
  t->rows = g_ptr_array_new_with_free_func (row_free);
  for (guint c = 0; c < p0->columns->len; c++)
    g_ptr_array_add (t->columns, column_new (((EffluxTableColumn *) g_ptr_array_index (p0->columns, c))->name));
  for (guint i = 0; i < size; i++)
    {
      const EffluxTable *p = parts[where[i].part];

      g_ptr_array_add (t->sources, source_copy (g_ptr_array_index (p->sources, where[i].source)));
      for (guint r = 0; r < p->rows->len; r++)
        {
          const EffluxTableRow *from = g_ptr_array_index (p->rows, r);
          EffluxTableRow *row;

          if (from->source != where[i].source)
            continue;
          row = row_new (t->columns->len);
          row->source = i;
          for (guint c = 0; c < t->columns->len; c++)
            {
              row->text[c] = g_strdup (from->text[c]);
              row->value[c] = from->value[c];
            }
          g_ptr_array_add (t->rows, row);
        }
    }
  return g_steal_pointer (&t);
}

/* ---------------------------------------------------------------------------------------------- */
/* rounding to the uncertainty                                                                     */

static int
n_digits (unsigned long long m)
{
  int n = 1;

  while (m >= 10)
    {
      m /= 10;
      n++;
    }
  return n;
}

static double
scale10 (double v,
         int    d)
{
  /* v / 10^d, with the exact power of ten on the side that keeps it exact */
  return d < 0 ? v * pow (10.0, -d) : v / pow (10.0, d);
}

/* |m| x 10^shift as decimal text (no exponent) */
static void
append_scaled (GString            *s,
               unsigned long long  m,
               int                 shift)
{
  g_autofree char *digits = g_strdup_printf ("%llu", m);
  int n = (int) strlen (digits);

  if (shift >= 0)
    {
      g_string_append (s, digits);
      for (int i = 0; i < shift; i++)
        g_string_append_c (s, '0');
      return;
    }
  if (n <= -shift)
    {
      g_string_append (s, "0.");
      for (int i = 0; i < -shift - n; i++)
        g_string_append_c (s, '0');
      g_string_append (s, digits);
      return;
    }
  g_string_append_len (s, digits, n + shift);
  g_string_append_c (s, '.');
  g_string_append (s, digits + n + shift);
}

static void
append_superscript (GString *s,
                    int      p)
{
  static const char * const sup[] = { "⁰", "¹", "²", "³", "⁴", "⁵", "⁶", "⁷", "⁸", "⁹" };
  g_autofree char *digits = g_strdup_printf ("%d", p);

  for (const char *c = digits; *c; c++)
    g_string_append (s, *c == '-' ? "⁻" : sup[*c - '0']);
}

char *
efflux_table_format_rounded (double            value,
                             double            uncertainty,
                             EffluxTableFormat format)
{
  gboolean latex = (format == EFFLUX_TABLE_LATEX);
  gboolean has_u = isfinite (uncertainty) && uncertainty > 0;
  unsigned long long m, mu = 0;
  int d, p = 0;
  double big;
  GString *s;

  if (!isfinite (value))
    return g_strdup ("");
  if (has_u)
    {
      int e = (int) floor (log10 (uncertainty));
      double lead = scale10 (uncertainty, e);

      if (lead >= 10)
        e++, lead /= 10;
      else if (lead < 1)
        e--, lead *= 10;
      d = lead < 2 ? e - 1 : e;
    }
  else
    d = value == 0 ? -2 : (int) floor (log10 (fabs (value))) - 2;
  /* never more than 15 digits in the mantissa */
  if (value != 0 && (int) floor (log10 (fabs (value))) - d > 14)
    d = (int) floor (log10 (fabs (value))) - 14;
  m = (unsigned long long) llround (fabs (scale10 (value, d)));
  if (has_u)
    mu = (unsigned long long) llround (scale10 (uncertainty, d));

  big = scale10 ((double) MAX (m, mu), -d);
  if (MAX (m, mu) > 0 && (big >= 1e5 || big < 1e-3))
    p = n_digits (MAX (m, mu)) - 1 + d;

  s = g_string_new (latex ? "$" : "");
  if (p != 0 && has_u)
    g_string_append_c (s, '(');
  if (value < 0 && m > 0)
    g_string_append_c (s, '-');
  append_scaled (s, m, d - p);
  if (has_u)
    {
      g_string_append (s, latex ? " \\pm " : " ± ");
      append_scaled (s, mu, d - p);
    }
  if (p != 0)
    {
      if (has_u)
        g_string_append_c (s, ')');
      if (latex)
        g_string_append_printf (s, " \\times 10^{%d}", p);
      else
        {
          g_string_append (s, "×10");
          append_superscript (s, p);
        }
    }
  if (latex)
    g_string_append_c (s, '$');
  return g_string_free (s, FALSE);
}

/* ---------------------------------------------------------------------------------------------- */
/* ecsv                                                                                             */

static void
yaml_string (GString    *s,
             const char *text)
{
  g_string_append_c (s, '"');
  for (const char *p = text; *p; p++)
    {
      if (*p == '"' || *p == '\\')
        g_string_append_printf (s, "\\%c", *p);
      else if (*p == '\n')
        g_string_append (s, "\\n");
      else if ((unsigned char) *p < 0x20)
        g_string_append_printf (s, "\\x%02x", (unsigned char) *p);
      else
        g_string_append_c (s, *p);
    }
  g_string_append_c (s, '"');
}

/* A number as YAML 1.1 reads it as a float or an int (PyYAML wants a '.' and a signed exponent). */
static void
yaml_number (GString    *s,
             const char *text)
{
  const char *e;

  if (*text == '\0')
    {
      g_string_append (s, ".nan");
      return;
    }
  e = strpbrk (text, "eE");
  if (e == NULL)
    {
      g_string_append (s, text);
      return;
    }
  g_string_append_len (s, text, e - text);
  if (memchr (text, '.', e - text) == NULL)
    g_string_append (s, ".0");
  g_string_append_c (s, 'e');
  if (e[1] != '-' && e[1] != '+')
    g_string_append_c (s, '+');
  g_string_append (s, e + 1);
}

static void
yaml_param_map (GString                 *s,
                const EffluxTableSource *src,
                gboolean                 units)
{
  g_string_append_c (s, '{');
  for (guint q = 0; q < src->params->len; q++)
    {
      const EffluxTableParam *p = g_ptr_array_index (src->params, q);

      if (q)
        g_string_append (s, ", ");
      g_string_append_printf (s, "%s: ", p->key);
      if (units)
        yaml_string (s, p->unit);
      else if (p->numeric)
        yaml_number (s, p->value);
      else
        yaml_string (s, p->value);
    }
  g_string_append_c (s, '}');
}

static char *
write_ecsv (const EffluxTable *t)
{
  GString *s = g_string_new ("# %ECSV 1.0\n# ---\n# delimiter: ','\n# datatype:\n");

  for (guint c = 0; c < t->columns->len; c++)
    {
      const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

      g_string_append (s, "# - {name: ");
      yaml_string (s, col->name);
      if (*col->unit)
        {
          g_string_append (s, ", unit: ");
          yaml_string (s, col->unit);
        }
      g_string_append_printf (s, ", datatype: %s",
                              col->type == EFFLUX_TABLE_TEXT ? "string" : col->type == EFFLUX_TABLE_INT ? "int64" : "float64");
      if (*col->description)
        {
          g_string_append (s, ", description: ");
          yaml_string (s, col->description);
        }
      if (*col->ucd)
        {
          g_string_append (s, ", meta: {ucd: ");
          yaml_string (s, col->ucd);
          g_string_append_c (s, '}');
        }
      g_string_append (s, "}\n");
    }
  g_string_append (s, "# meta:\n#   efflux_version: ");
  yaml_string (s, t->version);
  g_string_append (s, "\n#   rows: \"one row per lobe, then a total row per source\"\n");
  if (t->sources->len)
    {
      g_string_append (s, "#   assumption_units: ");
      yaml_param_map (s, g_ptr_array_index (t->sources, 0), TRUE);
      g_string_append_c (s, '\n');
    }
  g_string_append (s, "#   sources:\n");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);

      g_string_append (s, "#   - source: ");
      yaml_string (s, src->source);
      g_string_append (s, "\n#     dossier: ");
      yaml_string (s, src->dossier);
      g_string_append_printf (s, "\n#     sample_index: %u\n#     sample_size: %u\n#     assumptions: ",
                              src->sample_index, src->sample_size);
      yaml_param_map (s, src, FALSE);
      g_string_append (s, "\n#     notes: [");
      for (guint n = 0; n < src->notes->len; n++)
        {
          if (n)
            g_string_append (s, ", ");
          yaml_string (s, g_ptr_array_index (src->notes, n));
        }
      g_string_append (s, "]\n");
    }
  g_string_append (s, "# schema: astropy-2.0\n");
  for (guint c = 0; c < t->columns->len; c++)
    {
      if (c)
        g_string_append_c (s, ',');
      csv_field (s, ((EffluxTableColumn *) g_ptr_array_index (t->columns, c))->name);
    }
  g_string_append_c (s, '\n');
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);

      for (guint c = 0; c < t->columns->len; c++)
        {
          const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

          if (c)
            g_string_append_c (s, ',');
          if (col->type == EFFLUX_TABLE_TEXT)
            {
              /* quoted always, so that an empty text is an empty string and not a missing value */
              g_string_append_c (s, '"');
              for (const char *p = row->text[c]; *p; p++)
                {
                  if (*p == '"')
                    g_string_append_c (s, '"');
                  g_string_append_c (s, *p);
                }
              g_string_append_c (s, '"');
            }
          else
            g_string_append (s, row->text[c]);
        }
      g_string_append_c (s, '\n');
    }
  return g_string_free (s, FALSE);
}

/* ---------------------------------------------------------------------------------------------- */
/* votable                                                                                          */

static void
xml_text (GString    *s,
          const char *text)
{
  g_autofree char *esc = g_markup_escape_text (text, -1);

  g_string_append (s, esc);
}

static void
xml_attr (GString    *s,
          const char *name,
          const char *value)
{
  if (value == NULL || *value == '\0')
    return;
  g_string_append_printf (s, " %s=\"", name);
  xml_text (s, value);
  g_string_append_c (s, '"');
}

static char *
write_votable (const EffluxTable *t)
{
  GString *s = g_string_new ("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                             "<VOTABLE version=\"1.4\" xmlns=\"http://www.ivoa.net/xml/VOTable/v1.3\""
                             " xmlns:xsi=\"http://www.w3.org/2001/XMLSchema-instance\""
                             " xsi:schemaLocation=\"http://www.ivoa.net/xml/VOTable/v1.3"
                             " http://www.ivoa.net/xml/VOTable/votable-1.4.xsd\">\n"
                             " <RESOURCE type=\"results\">\n");

  g_string_append (s, "  <INFO name=\"efflux_version\"");
  xml_attr (s, "value", t->version);
  g_string_append (s, " ucd=\"meta.version\"/>\n");
  g_string_append (s, "  <TABLE name=\"outflows\">\n"
                      "   <DESCRIPTION>Outflow measurements: one row per lobe, then a total row per source.</DESCRIPTION>\n");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);

      g_string_append_printf (s, "   <GROUP name=\"assumptions\" ID=\"source_%u\">\n    <DESCRIPTION>", src->sample_index);
      g_string_append (s, "Assumptions of ");
      xml_text (s, src->source);
      g_string_append (s, " (dossier ");
      xml_text (s, src->dossier);
      g_string_append_printf (s, ", source %u of %u in the sample)</DESCRIPTION>\n", src->sample_index, src->sample_size);
      g_string_append (s, "    <PARAM name=\"source\" datatype=\"char\" arraysize=\"*\" ucd=\"meta.id;meta.main\"");
      xml_attr (s, "value", src->source);
      g_string_append (s, "/>\n    <PARAM name=\"dossier\" datatype=\"char\" arraysize=\"*\" ucd=\"meta.id\"");
      xml_attr (s, "value", src->dossier);
      g_string_append_printf (s, "/>\n    <PARAM name=\"sample_index\" datatype=\"int\" ucd=\"meta.number\" value=\"%u\"/>\n"
                                 "    <PARAM name=\"sample_size\" datatype=\"int\" ucd=\"meta.number\" value=\"%u\"/>\n",
                              src->sample_index, src->sample_size);
      for (guint q = 0; q < src->params->len; q++)
        {
          const EffluxTableParam *p = g_ptr_array_index (src->params, q);

          g_string_append_printf (s, "    <PARAM name=\"%s\"", p->key);
          if (p->numeric)
            {
              g_string_append (s, " datatype=\"double\"");
              xml_attr (s, "unit", p->unit_cds);
            }
          else
            g_string_append (s, " datatype=\"char\" arraysize=\"*\"");
          xml_attr (s, "ucd", p->ucd);
          g_string_append (s, " value=\"");
          xml_text (s, p->numeric && *p->value == '\0' ? "NaN" : p->value);
          g_string_append (s, "\"/>\n");
        }
      g_string_append (s, "   </GROUP>\n");
    }
  for (guint c = 0; c < t->columns->len; c++)
    {
      const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

      g_string_append (s, "   <FIELD");
      xml_attr (s, "name", col->name);
      if (col->type == EFFLUX_TABLE_TEXT)
        g_string_append (s, " datatype=\"char\" arraysize=\"*\"");
      else if (col->type == EFFLUX_TABLE_INT)
        g_string_append (s, " datatype=\"long\"");
      else
        g_string_append (s, " datatype=\"double\"");
      xml_attr (s, "unit", col->unit_cds);
      xml_attr (s, "ucd", col->ucd);
      g_string_append (s, ">");
      if (*col->description)
        {
          g_string_append (s, "<DESCRIPTION>");
          xml_text (s, col->description);
          g_string_append (s, "</DESCRIPTION>");
        }
      g_string_append (s, "</FIELD>\n");
    }
  g_string_append (s, "   <DATA>\n    <TABLEDATA>\n");
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);

      g_string_append (s, "     <TR>");
      for (guint c = 0; c < t->columns->len; c++)
        {
          g_string_append (s, "<TD>");
          xml_text (s, row->text[c]);
          g_string_append (s, "</TD>");
        }
      g_string_append (s, "</TR>\n");
    }
  g_string_append (s, "    </TABLEDATA>\n   </DATA>\n");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);

      for (guint n = 0; n < src->notes->len; n++)
        {
          g_autofree char *text = g_strdup_printf ("%s: %s", src->source, (const char *) g_ptr_array_index (src->notes, n));

          g_string_append (s, "   <INFO name=\"note\"");
          xml_attr (s, "value", text);
          g_string_append (s, "/>\n");
        }
    }
  g_string_append (s, "  </TABLE>\n </RESOURCE>\n</VOTABLE>\n");
  return g_string_free (s, FALSE);
}

/* ---------------------------------------------------------------------------------------------- */
/* latex and markdown: the CONTRACT.md columns, rounded                                            */

typedef struct
{
  const char *column;
  const char *latex_head;
  const char *latex_unit;
  const char *md_head;
  gboolean    rounded;      /* to its uncertainty (noise error or Monte Carlo spread) */
} ShowColumn;

static const ShowColumn show_columns[] = {
  { "source", "Source", "", "Source", FALSE },
  { "lobe", "Lobe", "", "Lobe", FALSE },
  { "kind", "Kind", "", "Kind", FALSE },
  { "voxels", "$N_\\mathrm{vox}$", "", "Voxels", FALSE },
  { "mass_msun", "$M$", "($M_\\odot$)", "M (Msun)", TRUE },
  { "momentum_msun_kms", "$P$", "($M_\\odot$ km s$^{-1}$)", "P (Msun km/s)", TRUE },
  { "energy_erg", "$E$", "(erg)", "E (erg)", TRUE },
  { "vmax_kms", "$v_\\mathrm{max}$", "(km s$^{-1}$)", "vmax (km/s)", TRUE },
  { "rmax_au", "$R_\\mathrm{max}$", "(au)", "Rmax (au)", TRUE },
  { "tdyn_yr", "$t_\\mathrm{dyn}$", "(yr)", "tdyn (yr)", TRUE },
  { "mdot_msun_yr", "$\\dot M$", "($M_\\odot$ yr$^{-1}$)", "Mdot (Msun/yr)", TRUE },
  { "force_msun_kms_yr", "$F$", "($M_\\odot$ km s$^{-1}$ yr$^{-1}$)", "F (Msun km/s/yr)", TRUE },
  { "lmech_lsun", "$L_\\mathrm{mech}$", "($L_\\odot$)", "Lmech (Lsun)", TRUE },
  { "inclination_deg", "$i$", "(deg)", "i (deg)", TRUE },
};

static int
column_index (const EffluxTable *t,
              const char        *name)
{
  for (guint c = 0; c < t->columns->len; c++)
    if (strcmp (((EffluxTableColumn *) g_ptr_array_index (t->columns, c))->name, name) == 0)
      return (int) c;
  return -1;
}

/* The uncertainty of a cell: the larger of the noise error (NAME_err) and half the Monte Carlo
 * 16-84 percentile spread (NAME_p16, NAME_p84); NaN when neither exists. */
static double
cell_uncertainty (const EffluxTable    *t,
                  const EffluxTableRow *row,
                  const char           *name)
{
  g_autofree char *err = g_strconcat (name, "_err", NULL);
  g_autofree char *p16 = g_strconcat (name, "_p16", NULL);
  g_autofree char *p84 = g_strconcat (name, "_p84", NULL);
  int ce = column_index (t, err), c16 = column_index (t, p16), c84 = column_index (t, p84);
  double u = NAN;

  if (ce >= 0 && isfinite (row->value[ce]))
    u = row->value[ce];
  if (c16 >= 0 && c84 >= 0 && isfinite (row->value[c16]) && isfinite (row->value[c84]))
    {
      double spread = 0.5 * (row->value[c84] - row->value[c16]);

      if (!isfinite (u) || spread > u)
        u = spread;
    }
  return u;
}

static char *
show_cell (const EffluxTable    *t,
           const EffluxTableRow *row,
           const ShowColumn     *sc,
           EffluxTableFormat     format)
{
  int c = column_index (t, sc->column);

  if (c < 0)
    return g_strdup ("");
  if (!sc->rounded)
    return g_strdup (row->text[c]);
  return efflux_table_format_rounded (row->value[c], cell_uncertainty (t, row, sc->column), format);
}

static void
latex_text (GString    *s,
            const char *text)
{
  for (const char *p = text; *p; p++)
    switch (*p)
      {
      case '&': case '%': case '$': case '#': case '_': case '{': case '}':
        g_string_append_printf (s, "\\%c", *p);
        break;
      case '~':
        g_string_append (s, "\\textasciitilde{}");
        break;
      case '^':
        g_string_append (s, "\\textasciicircum{}");
        break;
      case '\\':
        g_string_append (s, "\\textbackslash{}");
        break;
      case '\n':
        g_string_append_c (s, ' ');
        break;
      default:
        g_string_append_c (s, *p);
      }
}

static void
assumption_line (GString                 *s,
                 const EffluxTableSource *src,
                 gboolean                 latex)
{
  gboolean first = TRUE;

  for (guint q = 0; q < src->params->len; q++)
    {
      const EffluxTableParam *p = g_ptr_array_index (src->params, q);

      if (*p->value == '\0')
        continue;
      g_string_append (s, first ? "" : ", ");
      first = FALSE;
      if (latex)
        {
          latex_text (s, p->key);
          g_string_append (s, " = ");
          latex_text (s, p->value);
        }
      else
        g_string_append_printf (s, "%s = %s", p->key, p->value);
      if (*p->unit)
        g_string_append_printf (s, " %s", p->unit);
    }
}

static const char rounding_rule[] =
  "Values are rounded to their uncertainty, the larger of the noise error (1 sigma) and half the "
  "16-84 percentile spread of the Monte Carlo over the assumptions: the uncertainty keeps one "
  "significant digit (two when it starts with 1) and the value is rounded to the same place; "
  "values without an uncertainty keep three significant digits.";

/* AASTeX deluxetable: \tabletypesize, \tablecaption and \tablehead go inside the environment,
 * before \startdata; \tablecomments after \enddata (AAS journals, AASTeX v6.1 author guide,
 * section on deluxetable). */
static char *
write_latex (const EffluxTable *t)
{
  GString *s = g_string_new (NULL);
  guint n = G_N_ELEMENTS (show_columns);

  g_string_append_printf (s, "%% Outflow table written by Efflux %s (AASTeX deluxetable).\n", t->version);
  g_string_append (s, "% Full-precision values: efflux-cli measure --format ecsv, votable, csv or json.\n");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);
      g_autoptr (GString) line = g_string_new (NULL);

      assumption_line (line, src, FALSE);
      g_string_append_printf (s, "%% Assumptions of %s (%s): %s\n", src->source, src->dossier, line->str);
      for (guint k = 0; k < src->notes->len; k++)
        g_string_append_printf (s, "%% Note on %s: %s\n", src->source, (const char *) g_ptr_array_index (src->notes, k));
    }
  g_string_append (s, "\\begin{deluxetable*}{lll");
  for (guint c = 3; c < n; c++)
    g_string_append_c (s, c == 3 ? 'r' : 'c');
  g_string_append (s, "}\n\\tabletypesize{\\scriptsize}\n"
                      "\\tablecaption{Outflow properties\\label{tab:outflows}}\n\\tablehead{");
  for (guint c = 0; c < n; c++)
    g_string_append_printf (s, "%s\\colhead{%s}", c ? " & " : "", show_columns[c].latex_head);
  g_string_append (s, " \\\\\n  ");
  for (guint c = 0; c < n; c++)
    g_string_append_printf (s, "%s\\colhead{%s}", c ? " & " : "", show_columns[c].latex_unit);
  g_string_append (s, "}\n\\startdata\n");
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);

      for (guint c = 0; c < n; c++)
        {
          g_autofree char *cell = show_cell (t, row, &show_columns[c], EFFLUX_TABLE_LATEX);

          if (c)
            g_string_append (s, " & ");
          if (*cell == '\0')
            g_string_append (s, "\\nodata");
          else if (show_columns[c].rounded)
            g_string_append (s, cell);
          else
            latex_text (s, cell);
        }
      g_string_append (s, r + 1 < t->rows->len ? " \\\\\n" : "\n");
    }
  g_string_append (s, "\\enddata\n\\tablecomments{");
  latex_text (s, rounding_rule);
  g_string_append_printf (s, " Measured with Efflux %s.", t->version);
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);

      g_string_append (s, " Assumptions for ");
      latex_text (s, src->source);
      g_string_append (s, ": ");
      assumption_line (s, src, TRUE);
      g_string_append_c (s, '.');
    }
  g_string_append (s, "}\n\\end{deluxetable*}\n");
  return g_string_free (s, FALSE);
}

static void
md_text (GString    *s,
         const char *text)
{
  for (const char *p = text; *p; p++)
    {
      if (*p == '|' || *p == '\\' || *p == '*' || *p == '[' || *p == ']')
        g_string_append_c (s, '\\');
      g_string_append_c (s, *p == '\n' ? ' ' : *p);
    }
}

static char *
write_markdown (const EffluxTable *t)
{
  GString *s = g_string_new (NULL);
  guint n = G_N_ELEMENTS (show_columns);
  guint last_source = G_MAXUINT;

  g_string_append (s, "Outflows measured with Efflux ");
  md_text (s, t->version);
  g_string_append (s, ".[^rounding]\n\n|");
  for (guint c = 0; c < n; c++)
    g_string_append_printf (s, " %s |", show_columns[c].md_head);
  g_string_append (s, "\n|");
  for (guint c = 0; c < n; c++)
    g_string_append (s, c < 3 ? " --- |" : " ---: |");
  g_string_append_c (s, '\n');
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);

      g_string_append_c (s, '|');
      for (guint c = 0; c < n; c++)
        {
          g_autofree char *cell = show_cell (t, row, &show_columns[c], EFFLUX_TABLE_MARKDOWN);

          g_string_append_c (s, ' ');
          if (*cell == '\0')
            g_string_append (s, c < 3 ? "" : "–");
          else
            md_text (s, cell);
          if (c == 0 && row->source != last_source)
            {
              g_string_append_printf (s, "[^s%u]", row->source + 1);
              last_source = row->source;
            }
          g_string_append (s, " |");
        }
      g_string_append_c (s, '\n');
    }
  g_string_append (s, "\n[^rounding]: ");
  g_string_append (s, rounding_rule);
  g_string_append (s, " Full-precision values: efflux-cli measure --format ecsv, votable, csv or json.\n");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);
      g_autoptr (GString) line = g_string_new (NULL);

      assumption_line (line, src, FALSE);
      g_string_append_printf (s, "[^s%u]: ", i + 1);
      md_text (s, src->source);
      g_string_append (s, " (");
      md_text (s, src->dossier);
      g_string_append (s, "): ");
      md_text (s, line->str);
      for (guint k = 0; k < src->notes->len; k++)
        {
          g_string_append (s, ". Note: ");
          md_text (s, g_ptr_array_index (src->notes, k));
        }
      g_string_append (s, ".\n");
    }
  return g_string_free (s, FALSE);
}

/* ---------------------------------------------------------------------------------------------- */
/* json                                                                                             */

static void
json_string (GString    *s,
             const char *text)
{
  g_string_append_c (s, '"');
  for (const char *p = text; *p; p++)
    {
      unsigned char ch = (unsigned char) *p;

      if (ch == '"' || ch == '\\')
        g_string_append_printf (s, "\\%c", ch);
      else if (ch == '\n')
        g_string_append (s, "\\n");
      else if (ch == '\t')
        g_string_append (s, "\\t");
      else if (ch < 0x20)
        g_string_append_printf (s, "\\u%04x", ch);
      else
        g_string_append_c (s, (char) ch);
    }
  g_string_append_c (s, '"');
}

static void
json_string_list (GString           *s,
                  const EffluxTable *t,
                  guint              what)
{
  g_string_append_c (s, '[');
  for (guint c = 0; c < t->columns->len; c++)
    {
      const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

      if (c)
        g_string_append (s, ", ");
      json_string (s, what == 0 ? col->name : what == 1 ? col->unit : what == 2 ? col->ucd : col->description);
    }
  g_string_append_c (s, ']');
}

static char *
write_json (const EffluxTable *t)
{
  GString *s = g_string_new ("{\n  \"columns\": ");

  json_string_list (s, t, 0);
  g_string_append (s, ",\n  \"units\": ");
  json_string_list (s, t, 1);
  g_string_append (s, ",\n  \"ucds\": ");
  json_string_list (s, t, 2);
  g_string_append (s, ",\n  \"descriptions\": ");
  json_string_list (s, t, 3);
  g_string_append (s, ",\n  \"rows\": [");
  for (guint r = 0; r < t->rows->len; r++)
    {
      const EffluxTableRow *row = g_ptr_array_index (t->rows, r);

      g_string_append (s, r ? ",\n    [" : "\n    [");
      for (guint c = 0; c < t->columns->len; c++)
        {
          const EffluxTableColumn *col = g_ptr_array_index (t->columns, c);

          if (c)
            g_string_append (s, ", ");
          if (*row->text[c] == '\0')
            g_string_append (s, "null");
          else if (col->type == EFFLUX_TABLE_TEXT)
            json_string (s, row->text[c]);
          else
            g_string_append (s, row->text[c]);
        }
      g_string_append_c (s, ']');
    }
  g_string_append (s, "\n  ],\n  \"metadata\": {\n    \"efflux_version\": ");
  json_string (s, t->version);
  g_string_append (s, ",\n    \"sources\": [");
  for (guint i = 0; i < t->sources->len; i++)
    {
      const EffluxTableSource *src = g_ptr_array_index (t->sources, i);

      g_string_append (s, i ? ",\n      {" : "\n      {");
      g_string_append (s, "\"source\": ");
      json_string (s, src->source);
      g_string_append (s, ", \"dossier\": ");
      json_string (s, src->dossier);
      g_string_append_printf (s, ", \"sample_index\": %u, \"sample_size\": %u, \"assumptions\": {",
                              src->sample_index, src->sample_size);
      for (guint q = 0; q < src->params->len; q++)
        {
          const EffluxTableParam *p = g_ptr_array_index (src->params, q);

          if (q)
            g_string_append (s, ", ");
          json_string (s, p->key);
          g_string_append (s, ": ");
          if (*p->value == '\0')
            g_string_append (s, "null");
          else if (p->numeric)
            g_string_append (s, p->value);
          else
            json_string (s, p->value);
        }
      g_string_append (s, "}, \"assumption_units\": {");
      for (guint q = 0; q < src->params->len; q++)
        {
          const EffluxTableParam *p = g_ptr_array_index (src->params, q);

          if (q)
            g_string_append (s, ", ");
          json_string (s, p->key);
          g_string_append (s, ": ");
          json_string (s, p->unit);
        }
      g_string_append (s, "}, \"notes\": [");
      for (guint k = 0; k < src->notes->len; k++)
        {
          if (k)
            g_string_append (s, ", ");
          json_string (s, g_ptr_array_index (src->notes, k));
        }
      g_string_append (s, "]}");
    }
  g_string_append (s, "\n    ]\n  }\n}\n");
  return g_string_free (s, FALSE);
}

char *
efflux_table_to_string (const EffluxTable *table,
                        EffluxTableFormat  format)
{
  switch (format)
    {
    case EFFLUX_TABLE_CSV: return write_csv (table);
    case EFFLUX_TABLE_ECSV: return write_ecsv (table);
    case EFFLUX_TABLE_VOTABLE: return write_votable (table);
    case EFFLUX_TABLE_LATEX: return write_latex (table);
    case EFFLUX_TABLE_MARKDOWN: return write_markdown (table);
    case EFFLUX_TABLE_JSON: return write_json (table);
    default: g_return_val_if_reached (NULL);
    }
}
