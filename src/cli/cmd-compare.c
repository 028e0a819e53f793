/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli compare MINE THEIRS: lobe-by-lobe overlap, velocity ranges and result ratios. */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-compare.h"
#include "efflux-io.h"
#include "efflux-review.h"

static const char * const columns[] = {
  "lobe", "theirs", "kind", "match", "iou", "dv1_kms", "dv2_kms",
  "mass_ratio", "momentum_ratio", "energy_ratio", "tdyn_ratio", "review", NULL
};
#define N_COLUMNS 12
#define COLUMN_REVIEW 11

/* Cell text; precise: %.17g (csv), else %.4g (text). Empty for missing values. The review
 * column: the status of my review note on their lobe (efflux-review.h), empty when none. */
static char *
cell (const EffluxCompareRow *r,
      guint                   c,
      gboolean                precise,
      const EffluxReview     *review)
{
  double v;
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  switch (c)
    {
    case 0:
      return g_strdup (r->mine != NULL ? r->mine : "");
    case 1:
      return g_strdup (r->theirs != NULL ? r->theirs : "");
    case 2:
      return g_strdup (efflux_lobe_kind_name (r->kind));
    case 3:
      return g_strdup (efflux_match_kind_name (r->match));
    case 4:
      v = r->iou;
      break;
    case 5:
      v = r->dv1_kms;
      break;
    case 6:
      v = r->dv2_kms;
      break;
    case COLUMN_REVIEW:
      {
        const EffluxReviewNote *n = r->theirs != NULL ? efflux_review_find (review, r->theirs) : NULL;

        return g_strdup (n != NULL ? efflux_review_status_name (n->status) : "");
      }
    default:
      v = r->ratio[c - 7];
      break;
    }
  if (!isfinite (v))
    return g_strdup ("");
  return g_strdup (g_ascii_formatd (buf, sizeof buf, precise ? "%.17g" : "%.4g", v));
}

static void
csv_field (GString    *s,
           const char *text)
{
  if (strpbrk (text, ",\"\n") == NULL)
    {
      g_string_append (s, text);
      return;
    }
  g_string_append_c (s, '"');
  for (const char *p = text; *p != '\0'; p++)
    {
      if (*p == '"')
        g_string_append_c (s, '"');
      g_string_append_c (s, *p);
    }
  g_string_append_c (s, '"');
}

static void
format_text (GString          *s,
             EffluxComparison *c,
             EffluxReview     *review,
             const char       *mine,
             const char       *theirs)
{
  gsize width[N_COLUMNS];
  guint n = c->rows->len;
  g_autoptr (GPtrArray) cells = g_ptr_array_new_with_free_func (g_free);

  for (guint k = 0; k < N_COLUMNS; k++)
    width[k] = strlen (columns[k]);
  for (guint i = 0; i < n; i++)
    for (guint k = 0; k < N_COLUMNS; k++)
      {
        char *t = cell (g_ptr_array_index (c->rows, i), k, FALSE, review);

        if (*t == '\0')
          {
            g_free (t);
            t = g_strdup ("-");
          }
        width[k] = MAX (width[k], (gsize) g_utf8_strlen (t, -1));
        g_ptr_array_add (cells, t);
      }
  g_string_append_printf (s, "# mine:   %s (%s)\n", mine, c->mine_author != NULL ? c->mine_author : "no author");
  g_string_append_printf (s, "# theirs: %s (%s)\n", theirs, c->theirs_author != NULL ? c->theirs_author : "no author");
  g_string_append (s, "# iou: intersection over union on my lobe's pixel grid; dv: theirs - mine (km/s); ratios: theirs / mine; "
                     "review: my note on their lobe\n");
  for (guint k = 0; k < N_COLUMNS; k++)
    g_string_append_printf (s, "%s%-*s", k ? "  " : "", (int) width[k], columns[k]);
  g_strchomp (s->str);
  g_string_set_size (s, strlen (s->str));
  g_string_append_c (s, '\n');
  for (guint i = 0; i < n; i++)
    {
      for (guint k = 0; k < N_COLUMNS; k++)
        {
          const char *t = g_ptr_array_index (cells, i * N_COLUMNS + k);
          gsize pad = width[k] - (gsize) g_utf8_strlen (t, -1);

          if (k)
            g_string_append (s, "  ");
          if (k >= 4 && k != COLUMN_REVIEW)   /* numbers right-aligned */
            g_string_append_printf (s, "%*s%s", (int) pad, "", t);
          else
            g_string_append_printf (s, "%s%*s", t, (int) pad, "");
        }
      g_strchomp (s->str);
      g_string_set_size (s, strlen (s->str));
      g_string_append_c (s, '\n');
    }
}

static void
format_csv (GString          *s,
            EffluxComparison *c,
            EffluxReview     *review)
{
  for (guint k = 0; k < N_COLUMNS; k++)
    g_string_append_printf (s, "%s%s", k ? "," : "", columns[k]);
  g_string_append_c (s, '\n');
  for (guint i = 0; i < c->rows->len; i++)
    {
      for (guint k = 0; k < N_COLUMNS; k++)
        {
          g_autofree char *t = cell (g_ptr_array_index (c->rows, i), k, TRUE, review);

          if (k)
            g_string_append_c (s, ',');
          csv_field (s, t);
        }
      g_string_append_c (s, '\n');
    }
}

static void
json_side (GString    *s,
           const char *path,
           const char *author)
{
  g_string_append (s, "{\"path\": ");
  efflux_json_string (s, path);
  g_string_append (s, ", \"author\": ");
  if (author != NULL)
    efflux_json_string (s, author);
  else
    g_string_append (s, "null");
  g_string_append (s, "}");
}

static void
format_json (GString          *s,
             EffluxComparison *c,
             EffluxReview     *review,
             const char       *mine,
             const char       *theirs)
{
  g_string_append (s, "{\n  \"mine\": ");
  json_side (s, mine, c->mine_author);
  g_string_append (s, ",\n  \"theirs\": ");
  json_side (s, theirs, c->theirs_author);
  g_string_append (s, ",\n  \"notes\": [");
  for (guint i = 0; i < c->notes->len; i++)
    {
      g_string_append (s, i ? ", " : "");
      efflux_json_string (s, g_ptr_array_index (c->notes, i));
    }
  g_string_append (s, "],\n  \"lobes\": [");
  for (guint i = 0; i < c->rows->len; i++)
    {
      const EffluxCompareRow *r = g_ptr_array_index (c->rows, i);

      g_string_append (s, i ? ",\n    {" : "\n    {");
      for (guint k = 0; k < N_COLUMNS; k++)
        {
          g_string_append_printf (s, "%s\"%s\": ", k ? ", " : "", columns[k]);
          if (k == 0 || k == 1)
            {
              const char *name = k == 0 ? r->mine : r->theirs;

              if (name != NULL)
                efflux_json_string (s, name);
              else
                g_string_append (s, "null");
            }
          else if (k == 2 || k == 3)
            {
              g_autofree char *t = cell (r, k, TRUE, review);

              efflux_json_string (s, t);
            }
          else if (k == COLUMN_REVIEW)
            {
              g_autofree char *t = cell (r, k, TRUE, review);

              if (*t != '\0')
                efflux_json_string (s, t);
              else
                g_string_append (s, "null");
            }
          else
            {
              double v = k == 4 ? r->iou : k == 5 ? r->dv1_kms : k == 6 ? r->dv2_kms : r->ratio[k - 7];

              efflux_json_number (s, v);
            }
        }
      g_string_append_printf (s, ", \"pixels_mine\": %" G_GUINT64_FORMAT ", \"pixels_theirs\": %"
                              G_GUINT64_FORMAT ", \"pixels_both\": %" G_GUINT64_FORMAT "}",
                              r->n_mine, r->n_theirs, r->n_both);
    }
  g_string_append (s, "\n  ]\n}\n");
}

int
efflux_cmd_compare (int    argc,
                    char **argv)
{
  g_autofree char *format = NULL;
  g_autofree char *output = NULL;
  g_auto (GStrv) rest = NULL;
  GOptionEntry entries[] = {
    { "format", 0, 0, G_OPTION_ARG_STRING, &format, N_("text (default, aligned), csv or json"), "FORMAT" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("Write to this file instead of standard output"), "FILE" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "MINE THEIRS" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- compare two dossiers of one source"));
  g_autoptr (EffluxDossier) mine = NULL;
  g_autoptr (EffluxDossier) theirs = NULL;
  g_autoptr (EffluxComparison) c = NULL;
  g_autoptr (EffluxReview) review = NULL;
  g_autoptr (GString) s = g_string_new (NULL);
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Compare a colleague's dossier (THEIRS) with yours (MINE), one line per "
                                   "lobe: lobes matched by name, else by the largest overlap; the overlap "
                                   "(intersection over union on the pixel grid of your lobe's cube), the "
                                   "differences of the velocity ranges (theirs - mine) and the ratios "
                                   "theirs / mine of mass, momentum, energy and tdyn; last, the status of your "
                                   "review note on their lobe ([Review LOBE] in MINE, see efflux-review.h)."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (rest == NULL || g_strv_length (rest) != 2)
    return efflux_cli_usage ("compare", "expected two dossiers, MINE THEIRS");
  if (format == NULL)
    format = g_strdup ("text");
  if (strcmp (format, "text") != 0 && strcmp (format, "csv") != 0 && strcmp (format, "json") != 0)
    return efflux_cli_usage ("compare", "--format %s: expected text, csv or json", format);
  if (output != NULL && !efflux_cli_check_output ("-o", output, &status))
    return status;

  mine = efflux_dossier_load (rest[0], &error);
  if (mine == NULL)
    return efflux_cli_fail (error);
  theirs = efflux_dossier_load (rest[1], &error);
  if (theirs == NULL)
    return efflux_cli_fail (error);
  c = efflux_compare_dossiers (mine, theirs, NULL, &error);
  if (c == NULL)
    return efflux_cli_fail (error);

  for (guint i = 0; i < c->notes->len; i++)
    fprintf (stderr, "efflux-cli: note: %s\n", (const char *) g_ptr_array_index (c->notes, i));
  review = efflux_review_read (mine, &error);
  if (review == NULL)
    return efflux_cli_fail (error);
  if (strcmp (format, "csv") == 0)
    format_csv (s, c, review);
  else if (strcmp (format, "json") == 0)
    format_json (s, c, review, rest[0], rest[1]);
  else
    format_text (s, c, review, rest[0], rest[1]);

  if (output != NULL)
    {
      if (!efflux_write_file_atomic (output, s->str, (gssize) s->len, &error))
        return efflux_cli_fail (error);
      return EFFLUX_EXIT_OK;
    }
  return efflux_cli_write_stdout (s->str, (gssize) s->len);
}
