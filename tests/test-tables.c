/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Tables for papers: `efflux-cli measure` over a sample (folder) in every format, read back by
 * astropy (tests/ref/tables_check.py), rounding to the uncertainty against hand-worked cases,
 * LaTeX and markdown structure, shards merged equal to the whole (byte for byte in csv), and the
 * one-line errors of measure and merge. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-sample.h"
#include "efflux-table.h"
#include "efflux-test-util.h"

/* ---------------------------------------------------------------------------------------------- */
/* rounding, by hand                                                                                */

/* The rule (efflux-table.h): the uncertainty keeps one significant digit, two when it starts with
 * 1, and the value is rounded to the same decimal place; the common practice taught e.g. by
 * J. R. Taylor, An Introduction to Error Analysis (2nd ed. 1997), rules 2.5 and 2.9 (from memory).
 * Each expected string below is worked out by hand in its comment. */
static void
test_rounding (void)
{
  static const struct { double v, u; const char *md, *tex; } cases[] = {
    /* u = 0.0234: first digit 2 -> one digit, 0.02; v to 0.01: 0.12 */
    { 0.123456, 0.0234, "0.12 ± 0.02", "$0.12 \\pm 0.02$" },
    /* u = 0.0156: first digit 1 -> two digits, 0.016; v to 0.001: 0.123 */
    { 0.123456, 0.0156, "0.123 ± 0.016", "$0.123 \\pm 0.016$" },
    /* u = 3.3e42 -> 3e42; v to 1e42: 123e42 = 1.23e44; 1e44 >= 1e5 so a common power 44 */
    { 1.2345e44, 3.3e42, "(1.23 ± 0.03)×10⁴⁴", "$(1.23 \\pm 0.03) \\times 10^{44}$" },
    /* u = 97 -> one digit at the tens: 9.7 rounds to 10 tens = 100; v to tens: 1230 */
    { 1234.5, 97, "1230 ± 100", "$1230 \\pm 100$" },
    /* u = 1.26e-6: first digit 1 -> 1.3e-6; v to 1e-7: 250e-7; below 1e-3: power -5 */
    { 2.5e-5, 1.26e-6, "(2.50 ± 0.13)×10⁻⁵", "$(2.50 \\pm 0.13) \\times 10^{-5}$" },
    /* half away from zero: 0.125 (exact in binary) to 0.01 is 0.13 (u = 0.02: one digit) */
    { 0.125, 0.02, "0.13 ± 0.02", "$0.13 \\pm 0.02$" },
    /* u = 0.01 starts with 1: two digits, 0.010, so 0.125 stays */
    { 0.125, 0.01, "0.125 ± 0.010", "$0.125 \\pm 0.010$" },
    /* negative value */
    { -0.75, 0.05, "-0.75 ± 0.05", "$-0.75 \\pm 0.05$" },
    /* no uncertainty: three significant digits */
    { 1234.5, NAN, "1230", "$1230$" },
    { 0.5, 0, "0.500", "$0.500$" },
    { 39.93852, NAN, "39.9", "$39.9$" },
    /* an uncertainty larger than the value: the value rounds to the uncertainty's place */
    { 0.3, 2.2, "0 ± 2", "$0 \\pm 2$" },
  };

  for (guint i = 0; i < G_N_ELEMENTS (cases); i++)
    {
      g_autofree char *md = efflux_table_format_rounded (cases[i].v, cases[i].u, EFFLUX_TABLE_MARKDOWN);
      g_autofree char *tex = efflux_table_format_rounded (cases[i].v, cases[i].u, EFFLUX_TABLE_LATEX);

      g_assert_cmpstr (md, ==, cases[i].md);
      g_assert_cmpstr (tex, ==, cases[i].tex);
    }
  {
    g_autofree char *nan = efflux_table_format_rounded (NAN, 1, EFFLUX_TABLE_MARKDOWN);

    g_assert_cmpstr (nan, ==, "");
  }
}

/* Full precision: the shortest text that reads back to the same double. */
static void
test_number_text (void)
{
  static const struct { double v; const char *text; } cases[] = {
    { 350, "350" }, { 0.1, "0.1" }, { 1e-5, "1e-05" }, { 4.741045386393703e+42, "4.741045386393703e+42" },
    { 2.7255, "2.7255" }, { 0.0001, "0.0001" }, { -12.48, "-12.48" }, { 1e20, "1e+20" },
  };

  for (guint i = 0; i < G_N_ELEMENTS (cases); i++)
    {
      g_autofree char *t = efflux_table_number_text (cases[i].v);

      g_assert_cmpstr (t, ==, cases[i].text);
    }
  for (guint i = 0; i < 20000; i++)
    {
      double v = g_test_rand_double_range (-1e3, 1e3) * pow (10, g_test_rand_int_range (-40, 40));
      g_autofree char *t = efflux_table_number_text (v);

      g_assert_true (g_ascii_strtod (t, NULL) == v);
    }
  {
    g_autofree char *t = efflux_table_number_text (NAN);

    g_assert_cmpstr (t, ==, "");
  }
}

/* ---------------------------------------------------------------------------------------------- */
/* a sample of three sources on the synthetic cubes                                                */

typedef struct
{
  char *tmp;
  char *sample;           /* the folder of dossiers */
  const char *cli;
} Fixture;

static char *
path_in (const Fixture *f,
         const char    *name)
{
  return g_build_filename (f->tmp, name, NULL);
}

static char *
replace_line (const char *text,
              const char *prefix,
              const char *with)
{
  g_auto (GStrv) lines = g_strsplit (text, "\n", -1);

  for (guint i = 0; lines[i] != NULL; i++)
    if (g_str_has_prefix (lines[i], prefix))
      {
        g_free (lines[i]);
        lines[i] = g_strdup (with);
      }
  return g_strjoinv ("\n", lines);
}

static void
fixture_set_up (Fixture *f)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *recipe_src = g_build_filename (g_getenv ("EFFLUX_SOURCE_ROOT"), "sample-data", "demo.recipe", NULL);
  g_autofree char *recipe = NULL;
  g_autofree char *recipe_path = NULL;
  g_autofree char *cubes = NULL;
  g_autofree char *dossier_path = NULL;
  g_autofree char *dossier = NULL;
  g_autofree char *out = NULL, *err = NULL;
  static const struct { const char *file, *name, *distance, *extra; } sources[] = {
    /* the Monte Carlo spread (tex range) drives the rounding of one source */
    { "a.efflux", "Alpha", "distance-pc=350", "tex-range-k=20;40\nmc-samples=300" },
    /* a name with a comma and quotes: csv quoting, XML and LaTeX escapes */
    { "b.efflux", "Beta \"B\", north & co", "distance-pc=420", "mc-samples=0" },
    { "c.efflux", "Gamma_1", "distance-pc=300", "co-abundance-range=5e-5;2e-4\nmc-samples=200\nmc-seed=7" },
  };

  f->cli = efflux_test_cli ();
  g_assert_nonnull (g_getenv ("EFFLUX_SOURCE_ROOT"));
  f->tmp = efflux_test_tmp_dir ("efflux-tables");

  /* the demo recipe on a coarser, smaller grid: quick to make and to measure */
  recipe = efflux_test_read_file (recipe_src, NULL);
  {
    char *a = replace_line (recipe, "nx=", "nx=48");
    char *b = replace_line (a, "ny=", "ny=48");
    char *c = replace_line (b, "pixel-arcsec=", "pixel-arcsec=1.0");

    g_free (recipe);
    g_free (a);
    g_free (b);
    recipe = c;
  }
  recipe_path = path_in (f, "small.recipe");
  efflux_test_write_file (recipe_path, recipe);
  cubes = path_in (f, "cubes");
  {
    const char *argv[] = { f->cli, "synth", recipe_path, "-o", cubes, NULL };

    g_assert_cmpint (efflux_test_spawn (NULL, argv, &out, &err), ==, 0);
  }
  dossier_path = g_build_filename (cubes, "demo-model.efflux", NULL);
  dossier = efflux_test_read_file (dossier_path, NULL);

  f->sample = path_in (f, "sample");
  g_assert_cmpint (g_mkdir (f->sample, 0755), ==, 0);
  for (guint i = 0; i < G_N_ELEMENTS (sources); i++)
    {
      g_autofree char *name_line = g_strdup_printf ("name=%s", sources[i].name);
      g_autofree char *clip = g_strdup_printf ("clip-sigma=0\n%s", sources[i].extra);
      g_autofree char *a = replace_line (dossier, "name=", name_line);
      g_autofree char *b = replace_line (a, "distance-pc=", sources[i].distance);
      g_autofree char *c0 = replace_line (b, "clip-sigma=", clip);
      /* Gamma's tracer has no line: guessed from the rest frequency, with a note */
      g_autofree char *c = i == 2 ? replace_line (c0, "line=12CO 2-1", "") : g_strdup (c0);
      g_autofree char *d = NULL;
      g_autofree char *path = g_build_filename (f->sample, sources[i].file, NULL);
      GString *s = g_string_new (NULL);

      /* the cubes are one folder up: paths relative to the dossier */
      for (const char *p = c; *p; p++)
        {
          if (g_str_has_prefix (p, "path=demo"))
            {
              g_string_append (s, "path=../cubes/");
              p += strlen ("path=") - 1;
              continue;
            }
          g_string_append_c (s, *p);
        }
      d = g_string_free (s, FALSE);
      efflux_test_write_file (path, d);
    }
  {
    /* not a dossier: ignored by the folder listing */
    g_autofree char *other = g_build_filename (f->sample, "notes.txt", NULL);

    efflux_test_write_file (other, "not a dossier\n");
  }
}

static void
fixture_tear_down (Fixture *f)
{
  efflux_test_remove_tree (f->tmp);
  g_free (f->tmp);
  g_free (f->sample);
}

static char *
measure_to (const Fixture *f,
            const char    *format,
            const char    *shard,
            const char    *file)
{
  g_autofree char *out = NULL, *err = NULL;
  char *path = path_in (f, file);
  const char *argv[] = { f->cli, "measure", f->sample, "--format", format, "-o", path,
                         shard ? "--shard" : NULL, shard, NULL };

  if (efflux_test_spawn (NULL, argv, &out, &err) != 0)
    g_error ("measure %s: %s", format, err);
  return path;
}

/* An error: the exit status and one line on stderr, "efflux-cli: error: ..." naming `names`. */
static void
assert_one_line_error (const char * const *argv,
                       int                 want,
                       const char         *names)
{
  g_autofree char *out = NULL, *err = NULL;
  int status = efflux_test_spawn (NULL, argv, &out, &err);

  g_test_message ("%s %s -> %d: %s", argv[1], argv[2], status, err);
  g_assert_cmpint (status, ==, want);
  g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  g_assert_nonnull (strchr (err, '\n'));
  g_assert_cmpstr (strchr (err, '\n') + 1, ==, "");
  if (names != NULL)
    g_assert_nonnull (strstr (err, names));
}

/* ecsv, votable, json and csv read by astropy and Python (tests/ref/tables_check.py) */
static void
test_formats_astropy (void)
{
  Fixture f;
  static const char * const formats[] = { "csv", "ecsv", "votable", "json" };
  g_autofree char *out = NULL;
  g_autofree char *stem = NULL;

  fixture_set_up (&f);
  for (guint i = 0; i < G_N_ELEMENTS (formats); i++)
    {
      g_autofree char *file = g_strdup_printf ("whole.%s", formats[i]);
      g_autofree char *p = measure_to (&f, formats[i], NULL, file);
    }
  stem = path_in (&f, "whole");
  {
    const char *args[] = { stem, PACKAGE_VERSION, "3", NULL };

    out = efflux_test_python ("tables_check.py", args);
    g_test_message ("%s", out);
    g_assert_nonnull (strstr (out, "ok ecsv"));
    g_assert_nonnull (strstr (out, "ok votable"));
  }
  fixture_tear_down (&f);
}

static guint
count (const char *hay,
       const char *needle)
{
  guint n = 0;

  for (const char *p = strstr (hay, needle); p != NULL; p = strstr (p + strlen (needle), needle))
    n++;
  return n;
}

/* No TeX on the machine: check the deluxetable's structure, and that each rounded cell follows
 * the rule from the full-precision csv. Markdown likewise. */
static void
test_latex_markdown (void)
{
  Fixture f;
  g_autofree char *tex_path = NULL, *md_path = NULL, *csv_path = NULL;
  g_autofree char *tex = NULL, *md = NULL, *csv = NULL;
  g_auto (GStrv) lines = NULL;
  g_auto (GStrv) csv_lines = NULL;
  g_auto (GStrv) head = NULL;
  guint n_rows = 0, depth = 0;
  const char *data, *end;

  fixture_set_up (&f);
  tex_path = measure_to (&f, "latex", NULL, "t.tex");
  md_path = measure_to (&f, "markdown", NULL, "t.md");
  csv_path = measure_to (&f, "csv", NULL, "t.csv");
  tex = efflux_test_read_file (tex_path, NULL);
  md = efflux_test_read_file (md_path, NULL);
  csv = efflux_test_read_file (csv_path, NULL);

  /* LaTeX: version and assumptions in comments, one deluxetable, 14 columns */
  g_assert_true (g_str_has_prefix (tex, "% Outflow table written by Efflux " PACKAGE_VERSION));
  g_assert_cmpuint (count (tex, "% Assumptions of "), ==, 3);
  g_assert_cmpuint (count (tex, "\\begin{deluxetable*}{lllrcccccccccc}"), ==, 1);
  g_assert_cmpuint (count (tex, "\\end{deluxetable*}"), ==, 1);
  g_assert_cmpuint (count (tex, "\\colhead{"), ==, 28);
  g_assert_cmpuint (count (tex, "\\startdata"), ==, 1);
  g_assert_cmpuint (count (tex, "\\enddata"), ==, 1);
  g_assert_nonnull (strstr (tex, "\\tablecomments{"));
  g_assert_nonnull (strstr (tex, "Measured with Efflux " PACKAGE_VERSION));
  /* special characters escaped in the body */
  g_assert_nonnull (strstr (tex, "Beta \"B\", north \\& co & blue"));
  g_assert_nonnull (strstr (tex, "Gamma\\_1 & total & \\nodata"));
  for (const char *p = tex; *p; p++)
    {
      if (*p == '\\' && p[1] != '\0')
        {
          p++;
          continue;
        }
      if (*p == '%')            /* a comment line: skip to its end */
        {
          while (*p && *p != '\n')
            p++;
          if (!*p)
            break;
          continue;
        }
      if (*p == '{')
        depth++;
      else if (*p == '}')
        {
          g_assert_cmpuint (depth, >, 0);
          depth--;
        }
    }
  g_assert_cmpuint (depth, ==, 0);
  data = strstr (tex, "\\startdata\n") + strlen ("\\startdata\n");
  end = strstr (tex, "\\enddata");
  {
    g_autofree char *body = g_strndup (data, end - data);

    lines = g_strsplit (body, "\n", -1);
  }
  csv_lines = g_strsplit (csv, "\n", -1);
  head = g_strsplit (csv_lines[0], ",", -1);
  for (guint i = 0; lines[i] != NULL && *lines[i] != '\0'; i++, n_rows++)
    {
      g_autofree char *row = g_strdup (lines[i]);
      g_auto (GStrv) cells = NULL;
      guint dollars = 0;

      if (g_str_has_suffix (row, " \\\\"))
        row[strlen (row) - 3] = '\0';
      cells = g_strsplit (row, " & ", -1);
      g_assert_cmpuint (g_strv_length (cells), ==, 14);
      for (const char *p = row; *p; p++)
        dollars += (*p == '$');
      g_assert_cmpuint (dollars % 2, ==, 0);
    }
  g_assert_cmpuint (n_rows, ==, 9);   /* 2 lobes + total, 3 sources */

  /* the mass of the first row, rounded by the rule from the csv's full-precision numbers */
  {
    g_auto (GStrv) first = g_strsplit (csv_lines[1], ",", -1);
    g_auto (GStrv) cells = NULL;
    double mass = NAN, err = NAN, p16 = NAN, p84 = NAN, u;
    g_autofree char *want = NULL;

    for (guint c = 0; head[c] != NULL; c++)
      {
        if (strcmp (head[c], "mass_msun") == 0)
          mass = g_ascii_strtod (first[c], NULL);
        else if (strcmp (head[c], "mass_msun_err") == 0)
          err = g_ascii_strtod (first[c], NULL);
        else if (strcmp (head[c], "mass_msun_p16") == 0)
          p16 = g_ascii_strtod (first[c], NULL);
        else if (strcmp (head[c], "mass_msun_p84") == 0)
          p84 = g_ascii_strtod (first[c], NULL);
      }
    g_assert_cmpstr (first[0], ==, "Alpha");
    g_assert_true (isfinite (mass) && isfinite (err) && isfinite (p16) && isfinite (p84));
    u = MAX (err, 0.5 * (p84 - p16));
    /* here the Monte Carlo over T_ex (20-40 K) dominates the noise */
    g_assert_cmpfloat (0.5 * (p84 - p16), >, err);
    want = efflux_table_format_rounded (mass, u, EFFLUX_TABLE_LATEX);
    cells = g_strsplit (lines[0], " & ", -1);
    g_assert_cmpstr (cells[4], ==, want);
  }

  /* markdown: a version line, a header and separator of 14 columns, 9 rows, footnotes */
  {
    g_auto (GStrv) ml = g_strsplit (md, "\n", -1);
    guint table_rows = 0;

    g_assert_true (g_str_has_prefix (md, "Outflows measured with Efflux " PACKAGE_VERSION ".[^rounding]"));
    for (guint i = 0; ml[i] != NULL; i++)
      if (g_str_has_prefix (ml[i], "|"))
        {
          guint bars = 0;

          for (const char *p = ml[i]; *p; p++)
            bars += (*p == '|' && (p == ml[i] || p[-1] != '\\'));
          g_assert_cmpuint (bars, ==, 15);
          table_rows++;
        }
    g_assert_cmpuint (table_rows, ==, 2 + 9);
    g_assert_nonnull (strstr (md, "\n[^rounding]: Values are rounded"));
    g_assert_nonnull (strstr (md, "\n[^s1]: Alpha (a.efflux): distance_pc = 350 pc"));
    g_assert_nonnull (strstr (md, "\n[^s2]: Beta \"B\", north & co (b.efflux)"));
    g_assert_nonnull (strstr (md, "| Alpha[^s1] | blue | blue |"));
    g_assert_nonnull (strstr (md, "| Gamma_1 | total |  |"));
    /* mass, momentum, energy, mdot, force and lmech carry an uncertainty on all 9 rows (noise
     * errors; Beta has no Monte Carlo); tdyn has none: no distance error, and neither T_ex nor
     * the abundance moves rmax / vmax, so its Monte Carlo spread is zero */
    g_assert_cmpuint (count (md, " ± "), ==, 9 * 6);
  }
  fixture_tear_down (&f);
}

/* every Nth source, merged back: the same bytes as the whole */
static void
test_shards_merge (void)
{
  Fixture f;
  g_autofree char *whole_path = NULL, *whole = NULL, *ecsv_path = NULL, *ecsv = NULL;

  fixture_set_up (&f);
  whole_path = measure_to (&f, "csv", NULL, "whole.csv");
  whole = efflux_test_read_file (whole_path, NULL);
  ecsv_path = measure_to (&f, "ecsv", NULL, "whole.ecsv");
  ecsv = efflux_test_read_file (ecsv_path, NULL);
  for (guint n = 1; n <= 4; n++)
    {
      g_autoptr (GPtrArray) argv = g_ptr_array_new_with_free_func (g_free);
      g_autofree char *merged_path = path_in (&f, "merged.csv");
      g_autofree char *merged_ecsv = path_in (&f, "merged.ecsv");
      g_autofree char *out = NULL, *err = NULL, *merged = NULL, *merged2 = NULL;

      g_ptr_array_add (argv, g_strdup (f.cli));
      g_ptr_array_add (argv, g_strdup ("merge"));
      /* parts in reverse order: merge restores the sample order */
      for (guint k = n; k >= 1; k--)
        {
          g_autofree char *shard = g_strdup_printf ("%u/%u", k, n);
          g_autofree char *file = g_strdup_printf ("part-%u-of-%u.csv", k, n);
          char *part = measure_to (&f, "csv", shard, file);
          g_autofree char *text = efflux_test_read_file (part, NULL);
          g_autofree char *sources = NULL;
          guint lines = count (text, "\n") - 1;

          /* sources k, k+n, ...: 3 rows each (two lobes and the total) */
          g_assert_cmpuint (lines, ==, 3 * ((3 + n - k) / n));
          g_ptr_array_add (argv, part);
        }
      g_ptr_array_add (argv, g_strdup ("-o"));
      g_ptr_array_add (argv, g_strdup (merged_path));
      g_ptr_array_add (argv, NULL);
      g_assert_cmpint (efflux_test_spawn (NULL, (const char * const *) argv->pdata, &out, &err), ==, 0);
      merged = efflux_test_read_file (merged_path, NULL);
      g_assert_cmpstr (merged, ==, whole);

      /* and in another format: the same as measuring the whole in it */
      g_free (argv->pdata[argv->len - 2]);
      argv->pdata[argv->len - 2] = g_strdup (merged_ecsv);
      g_free (out);
      g_free (err);
      g_assert_cmpint (efflux_test_spawn (NULL, (const char * const *) argv->pdata, &out, &err), ==, 0);
      merged2 = efflux_test_read_file (merged_ecsv, NULL);
      g_assert_cmpstr (merged2, ==, ecsv);
    }
  fixture_tear_down (&f);
}

static void
test_errors (void)
{
  Fixture f;
  g_autofree char *empty = NULL, *p1 = NULL, *p2 = NULL, *bad = NULL, *text = NULL, *edited = NULL;
  g_autofree char *nodir = NULL;

  fixture_set_up (&f);
  empty = path_in (&f, "empty");
  g_assert_cmpint (g_mkdir (empty, 0755), ==, 0);
  nodir = path_in (&f, "no/such/folder/t.csv");
  {
    const char *argv[] = { f.cli, "measure", f.sample, "-o", nodir, NULL };
    /* an unwritable output is refused input (issue 7) */
    assert_one_line_error (argv, 1, "no/such/folder/t.csv");
  }
  {
    const char *argv[] = { f.cli, "measure", f.sample, "-o", f.sample, NULL };
    assert_one_line_error (argv, 1, "is a folder");
  }
  {
    static const char * const specs[] = { "0/3", "4/3", "a/b", "3", "1/0", "1/2/3", "-1/2", "" };

    for (guint i = 0; i < G_N_ELEMENTS (specs); i++)
      {
        const char *argv[] = { f.cli, "measure", f.sample, "--shard", specs[i], NULL };
        assert_one_line_error (argv, 2, "--shard");
      }
  }
  {
    const char *argv[] = { f.cli, "measure", f.sample, "--format", "xlsx", NULL };
    assert_one_line_error (argv, 2, "xlsx");
  }
  {
    const char *argv[] = { f.cli, "measure", empty, NULL };
    assert_one_line_error (argv, 1, "no dossier (*.efflux) in this folder");
  }

  /* merge: mismatched versions, columns, missing and doubled sources */
  p1 = measure_to (&f, "csv", "1/2", "p1.csv");
  p2 = measure_to (&f, "csv", "2/2", "p2.csv");
  bad = path_in (&f, "bad.csv");
  text = efflux_test_read_file (p2, NULL);
  {
    GString *s = g_string_new (text);

    g_string_replace (s, "," PACKAGE_VERSION ",", ",0.0.1-other,", 0);
    edited = g_string_free (s, FALSE);
    efflux_test_write_file (bad, edited);
    const char *argv[] = { f.cli, "merge", p1, bad, NULL };
    assert_one_line_error (argv, 1, "written by Efflux 0.0.1-other");
  }
  {
    g_autofree char *renamed = NULL;
    GString *s = g_string_new (text);

    g_string_replace (s, "mass_msun_err,", "mass_error,", 1);
    renamed = g_string_free (s, FALSE);
    efflux_test_write_file (bad, renamed);
    const char *argv[] = { f.cli, "merge", p1, bad, NULL };
    assert_one_line_error (argv, 1, "mass_error");
  }
  {
    const char *argv[] = { f.cli, "merge", p1, NULL };
    assert_one_line_error (argv, 1, "1 of the 3 sources of the sample are in no part (2)");
  }
  {
    const char *argv[] = { f.cli, "merge", p1, p2, p1, NULL };
    assert_one_line_error (argv, 1, "is also in");
  }
  {
    const char *argv[] = { f.cli, "merge", p1, p2, "-o", nodir, NULL };
    assert_one_line_error (argv, 1, "no/such/folder/t.csv");
  }
  {
    g_autofree char *p1_text = efflux_test_read_file (p1, NULL);
    g_autofree char *huge = NULL;
    GString *s = g_string_new (p1_text);

    /* a sample size no machine holds: refused, not allocated */
    g_string_replace (s, "," PACKAGE_VERSION ",1,3,a.efflux,", "," PACKAGE_VERSION ",1,4294967295,a.efflux,", 0);
    huge = g_string_free (s, FALSE);
    g_assert_cmpstr (huge, !=, p1_text);
    efflux_test_write_file (bad, huge);
    const char *argv[] = { f.cli, "merge", bad, NULL };
    assert_one_line_error (argv, 1, "sample_size '4294967295'");
  }
  {
    efflux_test_write_file (bad, "a,b\n1,2\n");
    const char *argv[] = { f.cli, "merge", bad, NULL };
    assert_one_line_error (argv, 1, "no efflux_version column");
  }
  fixture_tear_down (&f);
}

/* --mark records the measurement in each dossier; the sample scan then says "measured" */
static void
test_mark (void)
{
  Fixture f;
  g_autoptr (GPtrArray) before = NULL, after = NULL;
  g_autoptr (GError) error = NULL;
  g_autofree char *out = NULL, *err = NULL, *a = NULL, *text = NULL;

  fixture_set_up (&f);
  before = efflux_sample_scan (f.sample, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (before->len, ==, 3);
  for (guint i = 0; i < before->len; i++)
    g_assert_cmpint (((EffluxSampleEntry *) g_ptr_array_index (before, i))->state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  {
    const char *argv[] = { f.cli, "measure", f.sample, "--shard", "2/2", "--mark", "--format", "csv", NULL };

    g_assert_cmpint (efflux_test_spawn (NULL, argv, &out, &err), ==, 0);
  }
  after = efflux_sample_scan (f.sample, &error);
  g_assert_no_error (error);
  g_assert_cmpint (((EffluxSampleEntry *) g_ptr_array_index (after, 0))->state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  g_assert_cmpint (((EffluxSampleEntry *) g_ptr_array_index (after, 1))->state, ==, EFFLUX_SOURCE_MEASURED);
  g_assert_cmpstr (((EffluxSampleEntry *) g_ptr_array_index (after, 1))->measured_with, ==, PACKAGE_VERSION);
  g_assert_cmpint (((EffluxSampleEntry *) g_ptr_array_index (after, 2))->state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  /* the marked dossier still measures (and keeps its comments) */
  a = g_build_filename (f.sample, "b.efflux", NULL);
  text = efflux_test_read_file (a, NULL);
  g_assert_nonnull (strstr (text, "\n[Status]\n"));
  g_assert_true (g_str_has_prefix (text, "# Dossier of a synthetic source"));
  {
    const char *argv[] = { f.cli, "measure", a, "--format", "csv", NULL };

    g_free (out);
    g_free (err);
    g_assert_cmpint (efflux_test_spawn (NULL, argv, &out, &err), ==, 0);
  }
  fixture_tear_down (&f);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/tables/rounding", test_rounding);
  g_test_add_func ("/tables/number-text", test_number_text);
  g_test_add_func ("/tables/formats-astropy", test_formats_astropy);
  g_test_add_func ("/tables/latex-markdown", test_latex_markdown);
  g_test_add_func ("/tables/shards-merge", test_shards_merge);
  g_test_add_func ("/tables/errors", test_errors);
  g_test_add_func ("/tables/mark", test_mark);
  return g_test_run ();
}
