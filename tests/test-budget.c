/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Outflow feedback against the cloud (efflux-budget.h): the turbulence example and the unit checks
 * of REFERENCES.md 4.9 (computed there, [C]), the binding energy and escape speed against astropy
 * 5.2's constants (run with EFFLUX_PYTHON), and the command's usage errors. */

#include <glib.h>

#include "efflux-budget.h"
#include "efflux-constants.h"
#include "efflux-dossier.h"
#include "efflux-measure.h"
#include "efflux-synth.h"
#include "efflux-test-util.h"

#include <glib/gstdio.h>

#include <math.h>
#include <string.h>

#define ERG_PER_MSUN_KMS2 (EFFLUX_MSUN * EFFLUX_KM * EFFLUX_KM)

/* REFERENCES.md 4.9, turbulence example: M = 80 Msun, FWHM = 2 km/s, R = 0.2 pc, t_diss = R/sigma_3D;
 * Mac Low form with lambda_d = 2R, v_rms = sigma_3D (eta_v = 0.21/pi, Mac Low 1999 abstract). */
static void
test_turbulence_example (void)
{
  EffluxCloud cloud = { 80.0, 0.2, 2.0, NAN, NAN };
  EffluxTurbulence t;
  g_autoptr (GError) error = NULL;

  g_assert_true (efflux_cloud_turbulence (&cloud, &t, &error));
  g_assert_no_error (error);
  efflux_test_assert_rel (t.sigma_1d_kms, 0.84932, 1e-4);
  efflux_test_assert_rel (t.sigma_3d_kms, 1.47107, 1e-4);
  efflux_test_assert_rel (t.e_turb_erg / ERG_PER_MSUN_KMS2, 86.5617, 1e-4);
  efflux_test_assert_rel (t.e_turb_erg, 1.72120e45, 1e-4);
  efflux_test_assert_rel (t.t_cross_yr, 1.32936e5, 1e-4);
  efflux_test_assert_rel (t.l_turb_erg_s, 4.1028e32, 1e-4);
  efflux_test_assert_rel (t.l_turb_maclow_erg_s, 1.7232e32, 1e-4);
  /* 0.2705 M FWHM^2 (REFERENCES.md 1.11, [D]) to its four digits */
  efflux_test_assert_rel (t.e_turb_erg / ERG_PER_MSUN_KMS2, 0.2705 * 80.0 * 4.0, 2e-4);
  /* P_turb = M sigma_3D */
  efflux_test_assert_rel (t.p_turb_msun_kms, 80.0 * 1.47107, 1e-4);
  g_assert_cmpfloat (t.driving_scale_pc, ==, 0.4);

  /* the coefficient and the driving scale are exposed: L scales as eta_v / lambda_d */
  {
    EffluxCloud c2 = { 80.0, 0.2, 2.0, 2.0 * EFFLUX_MACLOW_ETA_V, 0.8 };
    EffluxTurbulence t2;
    g_assert_true (efflux_cloud_turbulence (&c2, &t2, NULL));
    efflux_test_assert_rel (t2.l_turb_maclow_erg_s, 1.7232e32, 1e-4);
    g_assert_cmpfloat (t2.eta_v, ==, 2.0 * EFFLUX_MACLOW_ETA_V);
  }
}

/* REFERENCES.md 4.9 unit checks: 64 Msun km^2/s^2 = 1.27258e45 erg (Nakamura et al. 2011's total
 * outflow energy); 7e44 erg = 35.20 Msun km^2/s^2 (Plunkett et al. 2013). */
static void
test_unit_checks (void)
{
  efflux_test_assert_rel (64.0 * ERG_PER_MSUN_KMS2, 1.27258e45, 1e-5);
  efflux_test_assert_rel (7e44 / ERG_PER_MSUN_KMS2, 35.20, 1e-3);
}

/* Serpens South as REFERENCES.md 5 quotes Nakamura et al. 2011 (80 Msun, 0.2 pc; outflows
 * M = 0.6 Msun, P = 8 Msun km/s, E = 64 Msun km^2/s^2) with the 4.9 line width: the ratios are the
 * quotients of the numbers above. */
static void
test_budget_ratios (void)
{
  EffluxCloud cloud = { 80.0, 0.2, 2.0, NAN, NAN };
  EffluxBudget b;
  double e_out = 64.0 * ERG_PER_MSUN_KMS2, l_out = 1e32;

  g_assert_true (efflux_budget_compute (&cloud, 1, 0.6, 8.0, e_out, l_out, &b, NULL));
  efflux_test_assert_rel (b.e_ratio, 64.0 / 86.5617, 1e-4);
  efflux_test_assert_rel (b.l_ratio, 1e32 / 4.1028e32, 1e-4);
  efflux_test_assert_rel (b.l_ratio_maclow, 1e32 / 1.7232e32, 1e-4);
  efflux_test_assert_rel (b.p_ratio, 8.0 / (80.0 * 1.47107), 1e-4);
  efflux_test_assert_rel (b.m_unbound_msun, 8.0 / b.cloud.v_esc_kms, 1e-12);
  efflux_test_assert_rel (b.unbound_fraction, b.m_unbound_msun / 80.0, 1e-12);
  efflux_test_assert_rel (b.grav_ratio, e_out / b.cloud.e_grav_erg, 1e-12);
}

/* E_grav = 3/5 G M^2 / R and v_esc = sqrt (2 G M / R) for the 4.9 cloud, against astropy 5.2
 * (astropy.constants G, M_sun, pc: CODATA 2018 and IAU 2015). */
static void
test_gravity_astropy (void)
{
  const char *code =
    "from astropy import constants as c, units as u\n"
    "M = 80 * u.M_sun; R = 0.2 * u.pc\n"
    "print((0.6 * c.G * M**2 / R).to(u.erg).value)\n"
    "print(((2 * c.G * M / R) ** 0.5).to(u.km / u.s).value)\n";
  g_autofree char *out = efflux_test_python_code (code, NULL);
  g_auto (GStrv) lines = NULL;
  EffluxCloud cloud = { 80.0, 0.2, 2.0, NAN, NAN };
  EffluxTurbulence t;

  lines = g_strsplit (out, "\n", -1);
  g_assert_cmpuint (g_strv_length (lines), >=, 2);
  g_assert_true (efflux_cloud_turbulence (&cloud, &t, NULL));
  efflux_test_assert_rel (t.e_grav_erg, g_ascii_strtod (lines[0], NULL), 1e-6);
  efflux_test_assert_rel (t.v_esc_kms, g_ascii_strtod (lines[1], NULL), 1e-6);
}

static void
test_refused (void)
{
  EffluxCloud bad[] = { { 0.0, 0.2, 2.0, NAN, NAN }, { 80.0, -1.0, 2.0, NAN, NAN },
                        { 80.0, 0.2, NAN, NAN, NAN } };
  const char *opt[] = { "--cloud-mass", "--cloud-radius-pc", "--cloud-fwhm-kms" };

  for (guint i = 0; i < G_N_ELEMENTS (bad); i++)
    {
      EffluxTurbulence t;
      g_autoptr (GError) error = NULL;
      g_assert_false (efflux_cloud_turbulence (&bad[i], &t, &error));
      g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE);
      g_assert_true (g_str_has_prefix (error->message, opt[i]));
    }
}

static void
test_cli_usage (void)
{
  const char *no_cloud[] = { "budget", "x.efflux", NULL };
  const char *no_dossier[] = { "budget", "--cloud-mass", "80", "--cloud-radius-pc", "0.2",
                               "--cloud-fwhm-kms", "2", NULL };
  const char *zero_mass[] = { "budget", "--cloud-mass", "0", "--cloud-radius-pc", "0.2",
                              "--cloud-fwhm-kms", "2", "x.efflux", NULL };
  const char *missing[] = { "budget", "--cloud-mass", "80", "--cloud-radius-pc", "0.2",
                            "--cloud-fwhm-kms", "2", "/nonexistent/x.efflux", NULL };
  const char *help[] = { "budget", "--help", NULL };
  g_autofree char *o1 = NULL, *e1 = NULL, *o2 = NULL, *e2 = NULL, *o3 = NULL, *e3 = NULL;
  g_autofree char *o4 = NULL, *e4 = NULL, *o5 = NULL, *e5 = NULL;

  g_assert_cmpint (efflux_test_run_cli (no_cloud, &o1, &e1), ==, 2);
  g_assert_nonnull (strstr (e1, "efflux-cli: error: "));
  g_assert_cmpint (efflux_test_run_cli (no_dossier, &o2, &e2), ==, 2);
  g_assert_cmpint (efflux_test_run_cli (zero_mass, &o3, &e3), ==, 2);
  g_assert_nonnull (strstr (e3, "--cloud-mass 0"));
  g_assert_cmpint (efflux_test_run_cli (missing, &o4, &e4), ==, 1);
  g_assert_nonnull (strstr (e4, "/nonexistent/x.efflux"));
  g_assert_cmpint (efflux_test_run_cli (help, &o5, &e5), ==, 0);
  g_assert_nonnull (strstr (o5, "--cloud-fwhm-kms"));
}

/* The command sums the total rows of efflux_measure_dossier over its dossiers (the same dossier
 * given twice counts twice) and divides by the cloud's numbers above. */
static void
test_cli_sample (void)
{
  static const char recipe[] =
    "[Recipe]\nname=cloud\nseed=3\n\n"
    "[Source]\nname=Budget test\nra-deg=52.3\ndec-deg=31.2\ndistance-pc=300\nvsys-kms=5\n"
    "inclination-deg=60\nposition-angle-deg=120\n\n"
    "[Grid]\nnx=64\nny=64\npixel-arcsec=0.5\nnchan=61\nvstart-kms=-25\ndv-kms=1\nbeam-arcsec=1.2\n\n"
    "[Physics]\ntex-k=30\nco-abundance=1e-4\n\n"
    "[Lobe blue]\nkind=blue\nmass-msun=0.001\nlength-au=3000\nvmin-kms=2\nvmax-kms=30\ngamma=2\n"
    "half-opening-deg=15\n\n"
    "[Lobe red]\nkind=red\nmass-msun=0.001\nlength-au=3000\nvmin-kms=2\nvmax-kms=30\ngamma=2\n"
    "half-opening-deg=15\n\n"
    "[Cube co]\nline=12CO 2-1\n";
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-budget");
  g_autoptr (EffluxSynthRecipe) rc = NULL;
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxMeasureResult) result = NULL;
  g_autofree char *dpath = NULL;
  g_autofree char *out = NULL, *err = NULL;
  const EffluxMeasureRow *total = NULL;
  EffluxCloud cloud = { 80.0, 0.2, 2.0, NAN, NAN };
  EffluxTurbulence t;

  g_assert_no_error (error);
  rc = efflux_synth_recipe_load_data (recipe, "cloud.recipe", &error);
  g_assert_no_error (error);
  g_assert_true (efflux_synth_run (rc, dir, &error));
  g_assert_no_error (error);
  dpath = g_build_filename (dir, "cloud.efflux", NULL);
  dossier = efflux_dossier_load (dpath, &error);
  g_assert_no_error (error);
  result = efflux_measure_dossier (dossier, NULL, &error);
  g_assert_no_error (error);
  for (guint r = 0; r < result->rows->len; r++)
    if (((EffluxMeasureRow *) g_ptr_array_index (result->rows, r))->is_total)
      total = g_ptr_array_index (result->rows, r);
  g_assert_nonnull (total);
  g_assert_cmpfloat (total->mass_msun, >, 0.0);
  {
    const char *argv[] = { "budget", dpath, dpath, "--cloud-mass", "80", "--cloud-radius-pc", "0.2",
                           "--cloud-fwhm-kms", "2", "--json", NULL };
    g_assert_cmpint (efflux_test_run_cli (argv, &out, &err), ==, 0);
  }
  g_assert_cmpfloat (efflux_test_json_number (out, "n_sources"), ==, 2.0);
  efflux_test_assert_rel (efflux_test_json_number (out, "outflow_mass_msun"), 2.0 * total->mass_msun, 1e-12);
  efflux_test_assert_rel (efflux_test_json_number (out, "outflow_momentum_msun_kms"), 2.0 * total->momentum_msun_kms, 1e-12);
  efflux_test_assert_rel (efflux_test_json_number (out, "outflow_energy_erg"), 2.0 * total->energy_erg, 1e-12);
  efflux_test_assert_rel (efflux_test_json_number (out, "outflow_lmech_erg_s"), 2.0 * total->lmech_lsun * EFFLUX_LSUN, 1e-12);
  /* REFERENCES.md 4.9 through the command */
  efflux_test_assert_rel (efflux_test_json_number (out, "e_turb_erg"), 1.72120e45, 1e-4);
  efflux_test_assert_rel (efflux_test_json_number (out, "t_cross_yr"), 1.32936e5, 1e-4);
  efflux_test_assert_rel (efflux_test_json_number (out, "l_turb_erg_s"), 4.1028e32, 1e-4);
  efflux_test_assert_rel (efflux_test_json_number (out, "l_turb_maclow_erg_s"), 1.7232e32, 1e-4);
  g_assert_true (efflux_cloud_turbulence (&cloud, &t, NULL));
  efflux_test_assert_rel (efflux_test_json_number (out, "e_out_over_e_turb"), 2.0 * total->energy_erg / t.e_turb_erg, 1e-12);
  efflux_test_assert_rel (efflux_test_json_number (out, "unbound_mass_msun"), 2.0 * total->momentum_msun_kms / t.v_esc_kms, 1e-12);

  efflux_test_remove_tree (dir);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/budget/turbulence-example", test_turbulence_example);
  g_test_add_func ("/budget/unit-checks", test_unit_checks);
  g_test_add_func ("/budget/ratios", test_budget_ratios);
  g_test_add_func ("/budget/gravity-astropy", test_gravity_astropy);
  g_test_add_func ("/budget/refused", test_refused);
  g_test_add_func ("/budget/cli-usage", test_cli_usage);
  g_test_add_func ("/budget/cli-sample", test_cli_sample);
  return g_test_run ();
}
