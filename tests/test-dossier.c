/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Dossiers: load/save round trip (comments and unknown keys kept), setters, and every bad dossier
 * of issue 3 refused by `efflux-cli measure` with exit 1 and one stderr line naming the file,
 * the group and the key. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <sys/wait.h>

#include "efflux-dossier.h"

static const char good[] =
  "# a comment at the top\n"
  "[Source]\n"
  "name=Test source\n"
  "ra-deg=52.26300\n"
  "dec-deg=31.25500\n"
  "distance-pc=300\n"
  "distance-err-pc=30\n"
  "vsys-kms=6.2\n"
  "# the mode\n"
  "inclination-mode=fixed\n"
  "inclination-deg=60\n"
  "our-own-unknown-key=kept as it is\n"
  "\n"
  "[Assumptions]\n"
  "tex-k=50\n"
  "tbg-k=2.725\n"
  "co-abundance=1e-4\n"
  "isotope-ratio=62\n"
  "mass-per-h2=2.8\n"
  "opacity=none\n"
  "tau=0\n"
  "clip-sigma=0\n"
  "tex-range-k=30;80\n"
  "co-abundance-range=5e-5;2e-4\n"
  "isotope-ratio-range=50;77\n"
  "mc-samples=500\n"
  "mc-seed=42\n"
  "\n"
  "[Cube co]\n"
  "path=missing-12co21.fits\n"
  "line=12CO 2-1\n"
  "role=tracer\n"
  "beam-efficiency=1.0\n"
  "rms-k=0.05\n"
  "\n"
  "[Lobe blue]\n"
  "# blue | red\n"
  "kind=blue\n"
  "cube=co\n"
  "polygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n"
  "velocity-kms=-4;3\n"
  "note=\n"
  "author=\n"
  "\n"
  "[Cut axis]\n"
  "cube=co\n"
  "path=52.2700,31.2500;52.2560,31.2600\n"
  "width-arcsec=1.0\n"
  "\n"
  "[Review]\n"
  "# a group Efflux does not know yet\n"
  "remark=looks fine\n";

static char *
replace (const char *text,
         const char *old,
         const char *new_text)
{
  const char *at = strstr (text, old);

  g_assert_nonnull (at);
  return g_strdup_printf ("%.*s%s%s", (int) (at - text), text, new_text, at + strlen (old));
}

static void
test_parse (void)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_new_from_data (good, -1, "test.efflux", "/data", &error);
  EffluxDossierLobe *l;
  EffluxDossierCube *c;

  g_assert_no_error (error);
  g_assert_cmpstr (d->name, ==, "Test source");
  g_assert_cmpfloat (d->distance_pc, ==, 300);
  g_assert_cmpfloat (d->distance_err_pc, ==, 30);
  g_assert_cmpint (d->inclination_mode, ==, EFFLUX_INCLINATION_FIXED);
  g_assert_cmpfloat (d->inclination_deg, ==, 60);
  g_assert_cmpfloat (d->tbg_k, ==, 2.725);
  g_assert_cmpfloat (d->tex_range_k[0], ==, 30);
  g_assert_cmpfloat (d->co_abundance_range[1], ==, 2e-4);
  g_assert_cmpfloat (d->isotope_ratio_range[0], ==, 50);
  g_assert_cmpfloat (d->o18_ratio, ==, 560);      /* default, Wilson & Rood 1994 (from memory) */
  g_assert_true (isnan (d->sio_abundance));
  g_assert_cmpuint (d->mc_samples, ==, 500);
  g_assert_cmpuint (d->mc_seed, ==, 42);
  g_assert_cmpuint (d->cubes->len, ==, 1);
  c = efflux_dossier_find_cube (d, "co");
  g_assert_nonnull (c);
  g_assert_cmpstr (c->abs_path, ==, "/data/missing-12co21.fits");
  g_assert_nonnull (c->line);
  g_assert_cmpint (c->line->species, ==, EFFLUX_SPECIES_12CO);
  g_assert_cmpint (c->line->j_upper, ==, 2);
  l = efflux_dossier_find_lobe (d, "blue");
  g_assert_nonnull (l);
  g_assert_cmpuint (l->n_vertices, ==, 3);
  g_assert_cmpfloat (l->ra_deg[2], ==, 52.2620);
  g_assert_cmpfloat (l->dec_deg[2], ==, 31.2590);
  g_assert_cmpfloat (l->v1_kms, ==, -4);
  g_assert_cmpfloat (l->v2_kms, ==, 3);
  g_assert_cmpuint (d->cuts->len, ==, 1);
}

static void
test_round_trip (void)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-dossier-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autofree char *saved = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxDossier) again = NULL;
  double ra[4] = { 52.2640, 52.2660, 52.2620, 52.2610 };
  double dec[4] = { 31.2560, 31.2580, 31.2590, 31.2570 };

  g_assert_no_error (error);
  path = g_build_filename (dir, "test.efflux", NULL);
  g_assert_true (g_file_set_contents (path, good, -1, &error));
  d = efflux_dossier_load (path, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_dossier_set_distance (d, 420, &error));
  g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue", 2.5, -7.25, &error));
  g_assert_true (efflux_dossier_set_lobe_polygon (d, "blue", ra, dec, 4, &error));
  g_assert_false (efflux_dossier_set_distance (d, -1, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_nonnull (strstr (error->message, "[Source] distance-pc"));
  g_clear_error (&error);
  g_assert_true (efflux_dossier_save (d, NULL, &error));
  g_assert_no_error (error);

  g_assert_true (g_file_get_contents (path, &saved, NULL, &error));
  /* comments, unknown keys and unknown groups survive */
  g_assert_nonnull (strstr (saved, "# a comment at the top"));
  g_assert_nonnull (strstr (saved, "# the mode\n"));
  g_assert_nonnull (strstr (saved, "# blue | red\n"));
  g_assert_nonnull (strstr (saved, "our-own-unknown-key=kept as it is\n"));
  g_assert_nonnull (strstr (saved, "[Review]"));
  g_assert_nonnull (strstr (saved, "remark=looks fine\n"));
  g_assert_nonnull (strstr (saved, "distance-pc=420\n"));
  g_assert_nonnull (strstr (saved, "velocity-kms=-7.25;2.5\n"));

  again = efflux_dossier_load (path, &error);
  g_assert_no_error (error);
  g_assert_cmpfloat (again->distance_pc, ==, 420);
  g_assert_cmpfloat (efflux_dossier_find_lobe (again, "blue")->v1_kms, ==, -7.25);
  g_assert_cmpuint (efflux_dossier_find_lobe (again, "blue")->n_vertices, ==, 4);
  g_assert_cmpfloat (efflux_dossier_find_lobe (again, "blue")->dec_deg[3], ==, 31.2570);
  g_assert_cmpfloat (again->tex_k, ==, 50);

  g_assert_cmpint (g_remove (path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

typedef struct
{
  const char *name;
  const char *old;          /* text of the good dossier to replace */
  const char *new_text;
  const char *expect;       /* what the one stderr line must hold after "NAME.efflux: " */
} BadCase;

static const BadCase bad_cases[] = {
  { "missing-group", "[Assumptions]\n", "[Assumption]\n", "[Assumptions]" },
  { "missing-source-group", "[Source]\n", "[Sauce]\n", "[Source]" },
  { "missing-distance", "distance-pc=300\n", "", "[Source] distance-pc" },
  { "missing-tex", "tex-k=50\n", "", "[Assumptions] tex-k" },
  { "missing-path", "path=missing-12co21.fits\n", "", "[Cube co] path" },
  { "missing-polygon", "polygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n", "", "[Lobe blue] polygon" },
  { "missing-velocity", "velocity-kms=-4;3\n", "", "[Lobe blue] velocity-kms" },
  { "unknown-line", "line=12CO 2-1\n", "line=12CO 9-8 of nothing\n", "[Cube co] line" },
  { "inclination-0", "inclination-deg=60\n", "inclination-deg=0\n", "[Source] inclination-deg" },
  { "inclination-90", "inclination-deg=60\n", "inclination-deg=90\n", "[Source] inclination-deg" },
  { "inclination-range", "inclination-mode=fixed\n", "inclination-mode=range\ninclination-range-deg=0;40\n",
    "[Source] inclination-range-deg" },
  { "tex-below-bg", "tex-k=50\n", "tex-k=2.5\n", "[Assumptions] tex-k" },
  { "tex-equal-bg", "tex-k=50\n", "tex-k=2.725\n", "[Assumptions] tex-k" },
  { "distance-zero", "distance-pc=300\n", "distance-pc=0\n", "[Source] distance-pc" },
  { "distance-negative", "distance-pc=300\n", "distance-pc=-300\n", "[Source] distance-pc" },
  { "abundance-zero", "co-abundance=1e-4\n", "co-abundance=0\n", "[Assumptions] co-abundance" },
  { "abundance-negative", "co-abundance=1e-4\n", "co-abundance=-1e-4\n", "[Assumptions] co-abundance" },
  { "mass-per-h2-zero", "mass-per-h2=2.8\n", "mass-per-h2=0\n", "[Assumptions] mass-per-h2" },
  { "beam-efficiency-zero", "beam-efficiency=1.0\n", "beam-efficiency=0\n", "[Cube co] beam-efficiency" },
  { "two-vertices", "polygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n",
    "polygon=52.2640,31.2560;52.2660,31.2580\n", "[Lobe blue] polygon" },
  { "vertex-nan", "polygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n",
    "polygon=52.2640,31.2560;nan,31.2580;52.2620,31.2590\n", "[Lobe blue] polygon" },
  { "velocity-empty", "velocity-kms=-4;3\n", "velocity-kms=\n", "[Lobe blue] velocity-kms" },
  { "velocity-zero-width", "velocity-kms=-4;3\n", "velocity-kms=3;3\n", "[Lobe blue] velocity-kms" },
  { "velocity-one-number", "velocity-kms=-4;3\n", "velocity-kms=-4\n",
    "[Lobe blue] velocity-kms: expected two numbers 'V1;V2', got '-4'" },
  { "velocity-text", "velocity-kms=-4;3\n", "velocity-kms=-4;fast\n", "[Lobe blue] velocity-kms" },
  { "distance-nan", "distance-pc=300\n", "distance-pc=nan\n", "[Source] distance-pc" },
  { "tex-nan", "tex-k=50\n", "tex-k=NaN\n", "[Assumptions] tex-k" },
  { "vsys-inf", "vsys-kms=6.2\n", "vsys-kms=inf\n", "[Source] vsys-kms" },
  { "unknown-cube", "cube=co\npolygon", "cube=c0\npolygon", "[Lobe blue] cube" },
  { "kind-green", "kind=blue\n", "kind=green\n", "[Lobe blue] kind" },
  { "opacity-unknown", "opacity=none\n", "opacity=guess\n", "[Assumptions] opacity" },
  { "no-isotopologue", "opacity=none\n", "opacity=from-isotopologue\n", "[Assumptions] opacity" },
  { "mode-unknown", "inclination-mode=fixed\n", "inclination-mode=sideways\n", "[Source] inclination-mode" },
  { "tex-range-reversed", "tex-range-k=30;80\n", "tex-range-k=80;30\n", "[Assumptions] tex-range-k" },
};

static void
test_bad (gconstpointer data)
{
  const BadCase *bc = data;
  const char *cli = g_getenv ("EFFLUX_CLI");
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = NULL;
  g_autofree char *path = NULL;
  g_autofree char *text = NULL;
  g_autofree char *out = NULL;
  g_autofree char *err = NULL;
  g_autofree char *want = NULL;
  int status = 0;

  if (cli == NULL)
    {
      g_test_fail_printf ("EFFLUX_CLI is not set (run through meson test)");
      return;
    }
  dir = g_dir_make_tmp ("efflux-bad-XXXXXX", &error);
  g_assert_no_error (error);
  path = g_build_filename (dir, "bad.efflux", NULL);
  text = replace (good, bc->old, bc->new_text);
  g_assert_true (g_file_set_contents (path, text, -1, &error));
  {
    const char *argv[] = { cli, "measure", path, NULL };

    g_assert_true (g_spawn_sync (NULL, (char **) argv, NULL, G_SPAWN_DEFAULT, NULL, NULL, &out, &err, &status, &error));
  }
  g_assert_no_error (error);
  g_assert_true (WIFEXITED (status));
  g_assert_cmpint (WEXITSTATUS (status), ==, 1);
  g_assert_cmpstr (out, ==, "");
  /* one line: efflux-cli: error: PATH: [Group] key: ... */
  g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  g_assert_true (g_str_has_suffix (err, "\n"));
  g_assert_true (strchr (err, '\n') == err + strlen (err) - 1);
  want = g_strdup_printf ("%s: %s", path, bc->expect);
  if (strstr (err, want) == NULL)
    g_error ("%s: stderr '%s' does not name '%s'", bc->name, err, want);
  g_assert_cmpint (g_remove (path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

/* The good dossier passes validation and reaches the cube, which is missing: still exit 1, naming
 * the cube's file. */
static void
test_good_missing_cube (void)
{
  const char *cli = g_getenv ("EFFLUX_CLI");
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-good-XXXXXX", &error);
  g_autofree char *path = g_build_filename (dir, "good.efflux", NULL);
  g_autofree char *err = NULL;
  int status = 0;
  const char *argv[] = { cli, "measure", path, NULL };

  g_assert_nonnull (cli);
  g_assert_true (g_file_set_contents (path, good, -1, &error));
  g_assert_true (g_spawn_sync (NULL, (char **) argv, NULL, G_SPAWN_STDOUT_TO_DEV_NULL, NULL, NULL, NULL, &err, &status, &error));
  g_assert_cmpint (WEXITSTATUS (status), ==, 1);
  g_assert_nonnull (strstr (err, "missing-12co21.fits"));
  g_assert_cmpint (g_remove (path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/dossier/parse", test_parse);
  g_test_add_func ("/dossier/round-trip", test_round_trip);
  g_test_add_func ("/dossier/good-missing-cube", test_good_missing_cube);
  for (gsize i = 0; i < G_N_ELEMENTS (bad_cases); i++)
    {
      g_autofree char *name = g_strdup_printf ("/dossier/bad/%s", bad_cases[i].name);
      g_test_add_data_func (name, &bad_cases[i], test_bad);
    }
  return g_test_run ();
}
