/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Recovery of known outflows from synthetic cubes: `efflux-cli synth` writes cubes, the true
 * masses, momenta and energies (NAME.truth) and a dossier; the measurement must find them again.
 *   - optically thin 12CO (peak tau 0.036): mass within 2% of the truth;
 *   - inclination-corrected momentum and energy (the true inclination in the dossier) within 2%;
 *   - 12CO with peak tau 3.6, corrected from the 13CO cube (opacity=from-isotopologue): mass
 *     within 10%, where the uncorrected mass is more than 20% short.
 * The truth is computed by the synth module from the recipe alone (its own integral of the mass
 * spectrum), independently of the measurement code. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <sys/wait.h>

#include "efflux-dossier.h"
#include "efflux-measure.h"

static const char thin_recipe[] =
  "[Recipe]\nname=thin\nseed=5\n"
  "[Source]\nname=Thin source\nra-deg=200.0\ndec-deg=-30.0\ndistance-pc=250\nvsys-kms=3.0\n"
  "inclination-deg=55\nposition-angle-deg=40\n"
  "[Grid]\nnx=64\nny=64\npixel-arcsec=1.0\nnchan=80\nvstart-kms=-36.5\ndv-kms=1.0\nbeam-arcsec=2.0\nconvolve=false\n"
  "[Physics]\ntex-k=40\nco-abundance=1e-4\n"
  "[Lobe blue]\nkind=blue\nmass-msun=2e-6\nlength-au=6000\nvmin-kms=3\nvmax-kms=30\ngamma=2.0\nhalf-opening-deg=15\n"
  "[Lobe red]\nkind=red\nmass-msun=1.5e-6\nlength-au=5000\nvmin-kms=3\nvmax-kms=25\ngamma=1.6\nhalf-opening-deg=12\n"
  "[Cube co]\nline=12CO 2-1\n";

static const char thick_recipe[] =
  "[Recipe]\nname=thick\nseed=11\n"
  "[Source]\nname=Thick source\nra-deg=200.0\ndec-deg=-30.0\ndistance-pc=250\nvsys-kms=3.0\n"
  "inclination-deg=55\nposition-angle-deg=40\n"
  "[Grid]\nnx=64\nny=64\npixel-arcsec=1.0\nnchan=80\nvstart-kms=-36.5\ndv-kms=1.0\nbeam-arcsec=2.0\nconvolve=false\n"
  "[Physics]\ntex-k=40\nco-abundance=1e-4\nisotope-ratio=62\n"
  "[Lobe blue]\nkind=blue\nmass-msun=2e-4\nlength-au=6000\nvmin-kms=3\nvmax-kms=30\ngamma=2.0\nhalf-opening-deg=15\n"
  "[Lobe red]\nkind=red\nmass-msun=1.5e-4\nlength-au=5000\nvmin-kms=3\nvmax-kms=25\ngamma=1.6\nhalf-opening-deg=12\n"
  "[Cube co]\nline=12CO 2-1\nrms-k=0.01\n"
  "[Cube co13]\nline=13CO 2-1\nrms-k=0.001\n";

typedef struct
{
  char *dir;
} Tmp;

static void
tmp_clear (Tmp *t)
{
  g_autoptr (GDir) dir = g_dir_open (t->dir, 0, NULL);
  const char *name;

  while (dir != NULL && (name = g_dir_read_name (dir)) != NULL)
    {
      g_autofree char *p = g_build_filename (t->dir, name, NULL);
      g_assert_cmpint (g_remove (p), ==, 0);
    }
  g_assert_cmpint (g_rmdir (t->dir), ==, 0);
  g_free (t->dir);
}

static int
run_cli (const char * const *args,
         char              **out)
{
  const char *cli = g_getenv ("EFFLUX_CLI");
  g_autoptr (GPtrArray) argv = g_ptr_array_new ();
  g_autoptr (GError) error = NULL;
  g_autofree char *err = NULL;
  int status = 0;

  g_assert_nonnull (cli);
  g_ptr_array_add (argv, (gpointer) cli);
  for (gsize i = 0; args[i] != NULL; i++)
    g_ptr_array_add (argv, (gpointer) args[i]);
  g_ptr_array_add (argv, NULL);
  g_assert_true (g_spawn_sync (NULL, (char **) argv->pdata, NULL, G_SPAWN_DEFAULT, NULL, NULL, out, &err,
                               &status, &error));
  g_assert_no_error (error);
  if (!WIFEXITED (status) || WEXITSTATUS (status) != 0)
    g_test_message ("efflux-cli %s: %s", args[0], err);
  return WIFEXITED (status) ? WEXITSTATUS (status) : -1;
}

/* Write the recipe, run synth, return the directory. */
static void
synth (Tmp        *t,
       const char *recipe,
       const char *name)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *path = NULL;

  if (g_getenv ("EFFLUX_CLI") == NULL)
    {
      g_test_fail_printf ("EFFLUX_CLI is not set (run through meson test)");
      return;
    }
  t->dir = g_dir_make_tmp ("efflux-recovery-XXXXXX", &error);
  g_assert_no_error (error);
  path = g_build_filename (t->dir, name, NULL);
  g_assert_true (g_file_set_contents (path, recipe, -1, &error));
  {
    const char *args[] = { "synth", path, "-o", t->dir, NULL };
    g_assert_cmpint (run_cli (args, NULL), ==, 0);
  }
}

static double
truth (GKeyFile   *kf,
       const char *lobe,
       const char *key)
{
  g_autofree char *group = g_strdup_printf ("Lobe %s", lobe);
  g_autoptr (GError) error = NULL;
  double v = g_key_file_get_double (kf, group, key, &error);

  g_assert_no_error (error);
  g_assert_true (isfinite (v) && v > 0);
  return v;
}

static EffluxMeasureRow *
row (EffluxMeasureResult *res,
     const char          *lobe)
{
  for (guint i = 0; i < res->rows->len; i++)
    {
      EffluxMeasureRow *r = g_ptr_array_index (res->rows, i);
      if (strcmp (r->lobe, lobe) == 0)
        return r;
    }
  g_error ("no row %s", lobe);
  return NULL;
}

static void
check (double      got,
       double      want,
       double      tol,
       const char *what)
{
  double rel = (got - want) / want;

  g_test_message ("%s: measured %.6g, truth %.6g (%+.2f%%)", what, got, want, 100 * rel);
  if (!(fabs (rel) <= tol))
    g_error ("%s: measured %.6g, truth %.6g: off by %+.2f%% (allowed %.0f%%)", what, got, want, 100 * rel, 100 * tol);
}

static void
test_thin (void)
{
  Tmp t = { NULL };
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  g_autofree char *dossier = NULL;
  g_autofree char *truth_path = NULL;
  g_autofree char *csv = NULL;
  const char *lobes[] = { "blue", "red" };

  synth (&t, thin_recipe, "thin.recipe");
  if (t.dir == NULL)
    return;
  dossier = g_build_filename (t.dir, "thin.efflux", NULL);
  truth_path = g_build_filename (t.dir, "thin.truth", NULL);
  g_assert_true (g_key_file_load_from_file (kf, truth_path, G_KEY_FILE_NONE, &error));
  d = efflux_dossier_load (dossier, &error);
  g_assert_no_error (error);
  /* the synth dossier carries the true inclination, fixed */
  g_assert_cmpint (d->inclination_mode, ==, EFFLUX_INCLINATION_FIXED);
  res = efflux_measure_dossier (d, NULL, &error);
  g_assert_no_error (error);
  for (int i = 0; i < 2; i++)
    {
      EffluxMeasureRow *r = row (res, lobes[i]);
      g_autofree char *w1 = g_strdup_printf ("thin %s mass", lobes[i]);
      g_autofree char *w2 = g_strdup_printf ("thin %s momentum (inclination-corrected)", lobes[i]);
      g_autofree char *w3 = g_strdup_printf ("thin %s energy (inclination-corrected)", lobes[i]);

      check (r->mass_msun, truth (kf, lobes[i], "mass-in-range-msun"), 0.02, w1);
      check (r->momentum_msun_kms, truth (kf, lobes[i], "momentum-true-in-range-msun-kms"), 0.02, w2);
      check (r->energy_erg, truth (kf, lobes[i], "energy-true-in-range-erg"), 0.02, w3);
    }

  /* the command line gives the same numbers: the total mass column of the CSV */
  {
    const char *args[] = { "measure", dossier, "--format", "csv", NULL };
    g_auto (GStrv) lines = NULL;
    g_auto (GStrv) head = NULL;
    g_auto (GStrv) last = NULL;
    guint n;

    g_assert_cmpint (run_cli (args, &csv), ==, 0);
    lines = g_strsplit (csv, "\n", -1);
    n = g_strv_length (lines);
    g_assert_cmpuint (n, ==, 5);   /* header, blue, red, total, "" */
    head = g_strsplit (lines[0], ",", -1);
    g_assert_cmpstr (head[4], ==, "mass_msun");
    last = g_strsplit (lines[3], ",", -1);
    g_assert_cmpstr (last[1], ==, "total");
    check (g_ascii_strtod (last[4], NULL), row (res, "total")->mass_msun, 1e-6, "CLI total mass = API total mass");
  }
  tmp_clear (&t);
}

static void
test_thick_from_13co (void)
{
  Tmp t = { NULL };
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) thin = NULL;
  g_autoptr (EffluxDossier) corr = NULL;
  g_autoptr (EffluxMeasureResult) r0 = NULL;
  g_autoptr (EffluxMeasureResult) r1 = NULL;
  g_autofree char *dossier = NULL;
  g_autofree char *truth_path = NULL;
  g_autofree char *text = NULL;
  g_autofree char *changed = NULL;
  const char *lobes[] = { "blue", "red" };
  char *at;

  synth (&t, thick_recipe, "thick.recipe");
  if (t.dir == NULL)
    return;
  dossier = g_build_filename (t.dir, "thick.efflux", NULL);
  truth_path = g_build_filename (t.dir, "thick.truth", NULL);
  g_assert_true (g_key_file_load_from_file (kf, truth_path, G_KEY_FILE_NONE, &error));
  g_assert_cmpfloat (g_key_file_get_double (kf, "Cube co", "peak-tau", NULL), >, 3.0);

  thin = efflux_dossier_load (dossier, &error);
  g_assert_no_error (error);
  g_assert_cmpint (thin->opacity, ==, EFFLUX_OPACITY_NONE);
  r0 = efflux_measure_dossier (thin, NULL, &error);
  g_assert_no_error (error);

  g_assert_true (g_file_get_contents (dossier, &text, NULL, &error));
  at = strstr (text, "opacity=none\n");
  g_assert_nonnull (at);
  changed = g_strdup_printf ("%.*sopacity=from-isotopologue\n%s", (int) (at - text), text, at + strlen ("opacity=none\n"));
  corr = efflux_dossier_new_from_data (changed, -1, dossier, t.dir, &error);
  g_assert_no_error (error);
  r1 = efflux_measure_dossier (corr, NULL, &error);
  g_assert_no_error (error);

  for (int i = 0; i < 2; i++)
    {
      double m_true = truth (kf, lobes[i], "mass-in-range-msun");
      g_autofree char *w = g_strdup_printf ("thick %s mass corrected from 13CO", lobes[i]);

      /* without the correction the optically thick 12CO misses much of the mass */
      g_assert_cmpfloat (row (r0, lobes[i])->mass_msun, <, 0.8 * m_true);
      check (row (r1, lobes[i])->mass_msun, m_true, 0.10, w);
      g_assert_cmpint (row (r1, lobes[i])->opacity, ==, EFFLUX_OPACITY_FROM_ISOTOPOLOGUE);
    }
  tmp_clear (&t);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/recovery/thin", test_thin);
  g_test_add_func ("/recovery/thick-from-13co", test_thick_from_13co);
  return g_test_run ();
}
