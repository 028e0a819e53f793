/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Synthetic outflow cubes: determinism, the truth against the cube, the radiative transfer against
 * an independent astropy computation, the written dossier, the demo scenario, and refused recipes. */

#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-error.h"
#include "efflux-lte.h"
#include "efflux-synth.h"
#include "efflux-test-util.h"

#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

static char *tmpdir;

/* A small noiseless, optically thin recipe: two lobes of 1e-9 Msun, no ambient gas, no jet. */
static const char thin_recipe[] =
  "[Recipe]\nname=thin\nseed=1\n"
  "[Source]\nname=Test source T\nra-deg=121.3750\ndec-deg=-12.4800\ndistance-pc=300\nvsys-kms=5.0\n"
  "inclination-deg=55\nposition-angle-deg=70\n"
  "[Grid]\nnx=64\nny=64\npixel-arcsec=0.5\nnchan=80\nvstart-kms=-15\ndv-kms=0.5\nbeam-arcsec=1.0\n"
  "[Physics]\ntex-k=50\ntbg-k=2.7255\nco-abundance=1e-4\nisotope-ratio=62\nmass-per-h2=2.8\n"
  "[Lobe blue]\nkind=blue\nmass-msun=1e-9\nlength-au=3000\nvmin-kms=4\nvmax-kms=30\ngamma=2.0\nhalf-opening-deg=15\n"
  "[Lobe red]\nkind=red\nmass-msun=8e-10\nlength-au=2600\nvmin-kms=4\nvmax-kms=26\ngamma=1.5\nhalf-opening-deg=12\n"
  "[Cube co]\nline=12CO 2-1\nfile=thin-co.fits\nunit=K\n";

/* Thick: 0.05 Msun per lobe, no beam, no noise, 12CO and 13CO. */
static const char thick_recipe[] =
  "[Recipe]\nname=thick\nseed=2\n"
  "[Source]\nname=Test source U\nra-deg=121.3750\ndec-deg=-12.4800\ndistance-pc=300\nvsys-kms=5.0\n"
  "inclination-deg=55\nposition-angle-deg=70\n"
  "[Grid]\nnx=48\nny=48\npixel-arcsec=0.5\nnchan=80\nvstart-kms=-15\ndv-kms=0.5\nbeam-arcsec=1.0\nconvolve=false\n"
  "[Physics]\ntex-k=30\nco-abundance=1e-4\nisotope-ratio=62\n"
  "[Lobe blue]\nkind=blue\nmass-msun=0.05\nlength-au=2500\nvmin-kms=4\nvmax-kms=30\ngamma=2.0\nhalf-opening-deg=15\n"
  "[Cube co]\nline=12CO 2-1\n"
  "[Cube co13]\nline=13CO 2-1\n";

/* With everything: ambient gas, a jet, noise, Jy/beam and a frequency axis. */
static const char full_recipe[] =
  "[Recipe]\nname=full\nseed=%u\n"
  "[Source]\nname=Test source V\nra-deg=200.5\ndec-deg=30.25\ndistance-pc=400\nvsys-kms=-2.0\n"
  "inclination-deg=40\nposition-angle-deg=200\n"
  "[Grid]\nnx=40\nny=40\npixel-arcsec=0.6\nnchan=60\nvstart-kms=-24.5\ndv-kms=0.75\nbeam-arcsec=1.5;1.2;90\n"
  "[Physics]\ntex-k=25\nco-abundance=1e-4\n"
  "[Ambient]\nmass-msun=0.1\nfwhm-kms=1.0\nsize-fwhm-arcsec=15\n"
  "[Lobe blue]\nkind=blue\nmass-msun=2e-3\nlength-au=3500\nvmin-kms=4\nvmax-kms=25\ngamma=1.8\nhalf-opening-deg=15\n"
  "[Lobe red]\nkind=red\nmass-msun=1e-3\nlength-au=3000\nvmin-kms=4\nvmax-kms=22\ngamma=2.0\nhalf-opening-deg=15\n"
  "[Jet]\nspeed-kms=25\nsio-abundance=5e-8\nknot-fwhm-kms=2\nknot-mass-msun=1e-5\nblue-knot-ages-yr=200;400\nred-knot-ages-yr=300\n"
  "[Cube co]\nline=12CO 2-1\nunit=Jy/beam\nrms-k=0.1\n"
  "[Cube sio]\nline=SiO 5-4\nspectral=freq\nrms-k=0.05\n";

static char *
write_recipe (const char *name,
              const char *text)
{
  char *path = g_build_filename (tmpdir, name, NULL);
  g_autoptr (GError) error = NULL;

  g_assert_true (g_file_set_contents (path, text, -1, &error));
  g_assert_no_error (error);
  return path;
}

static char *
run_recipe (const char *text,
            const char *subdir)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) recipe = efflux_synth_recipe_load_data (text, "test.recipe", &error);
  char *dir = g_build_filename (tmpdir, subdir, NULL);

  g_assert_no_error (error);
  g_assert_true (efflux_synth_run (recipe, dir, &error));
  g_assert_no_error (error);
  return dir;
}

static GKeyFile *
load_keyfile (const char *dir,
              const char *name)
{
  g_autofree char *path = g_build_filename (dir, name, NULL);
  GKeyFile *kf = g_key_file_new ();
  g_autoptr (GError) error = NULL;

  g_assert_true (g_key_file_load_from_file (kf, path, G_KEY_FILE_KEEP_COMMENTS, &error));
  g_assert_no_error (error);
  return kf;
}

static EffluxCube *
load_cube (const char *dir,
           const char *name)
{
  g_autofree char *path = g_build_filename (dir, name, NULL);
  EffluxCubeLoadOptions opts = { 0, TRUE };
  g_autoptr (GError) error = NULL;
  EffluxCube *cube = efflux_cube_load (path, &opts, NULL, NULL, NULL, &error);

  g_assert_no_error (error);
  g_assert_nonnull (cube);
  return cube;
}

/* ---------------------------------------------------------------------------------------- */

static void
test_determinism (void)
{
  g_autofree char *t1 = g_strdup_printf (full_recipe, 7u);
  g_autofree char *t2 = g_strdup_printf (full_recipe, 8u);
  g_autofree char *d1 = NULL;
  g_autofree char *d2 = NULL;
  g_autofree char *d3 = NULL;
  const char *files[] = { "full-co.fits", "full-sio.fits", "full.truth", "full.efflux", NULL };

  /* the cubes carry no DATE card, so nothing depends on the clock */
  d1 = run_recipe (t1, "det-a");
  g_usleep (1100000);   /* a clock-dependent card would now differ */
  d2 = run_recipe (t1, "det-b");
  d3 = run_recipe (t2, "det-c");

  for (gsize i = 0; files[i] != NULL; i++)
    {
      g_autofree char *p1 = g_build_filename (d1, files[i], NULL);
      g_autofree char *p2 = g_build_filename (d2, files[i], NULL);
      g_autofree char *p3 = g_build_filename (d3, files[i], NULL);
      g_autofree char *c1 = NULL, *c2 = NULL, *c3 = NULL;
      gsize n1, n2, n3;

      g_assert_true (g_file_get_contents (p1, &c1, &n1, NULL));
      g_assert_true (g_file_get_contents (p2, &c2, &n2, NULL));
      g_assert_true (g_file_get_contents (p3, &c3, &n3, NULL));
      g_assert_cmpmem (c1, n1, c2, n2);
      /* another seed: other noise in the cubes; the truth and the dossier do not depend on it */
      if (g_str_has_suffix (files[i], ".fits"))
        {
          g_assert_cmpuint (n1, ==, n3);
          g_assert_true (memcmp (c1, c3, n1) != 0);
        }
      else
        g_assert_cmpmem (c1, n1, c3, n3);
    }

  /* the noise has the asked rms: a line-free channel (the first, -24.5 km/s) of the SiO cube */
  {
    g_autoptr (EffluxCube) a = load_cube (d1, "full-sio.fits");
    g_autoptr (EffluxCube) c = load_cube (d3, "full-sio.fits");
    double s2 = 0.0, diff = 0.0;
    gsize n = a->nx * a->ny;

    for (gsize i = 0; i < n; i++)
      {
        double v = a->data[i * a->nchan];
        s2 += v * v;
        diff += fabs (v - c->data[i * c->nchan]);
      }
    /* 1600 samples: the rms is known to 1/sqrt(2 x 1600) = 1.8%, so 6% is 3.4 sigma */
    g_assert_cmpfloat_with_epsilon (sqrt (s2 / (double) n), 0.05, 0.003);
    g_assert_cmpfloat (diff / (double) n, >, 0.02);
  }
  efflux_test_remove_tree (d1);
  efflux_test_remove_tree (d2);
  efflux_test_remove_tree (d3);
}

/* Point in polygon (even-odd rule) and distance to its edges, in pixel coordinates. */
static gboolean
inside (const double *px,
        const double *py,
        gsize         n,
        double        x,
        double        y)
{
  gboolean in = FALSE;

  for (gsize i = 0, j = n - 1; i < n; j = i++)
    if (((py[i] > y) != (py[j] > y)) && (x < (px[j] - px[i]) * (y - py[i]) / (py[j] - py[i]) + px[i]))
      in = !in;
  return in;
}

static double
edge_distance (const double *px,
               const double *py,
               gsize         n,
               double        x,
               double        y)
{
  double best = G_MAXDOUBLE;

  for (gsize i = 0, j = n - 1; i < n; j = i++)
    {
      double ex = px[i] - px[j], ey = py[i] - py[j];
      double t = ((x - px[j]) * ex + (y - py[j]) * ey) / (ex * ex + ey * ey);
      double dx, dy;

      t = CLAMP (t, 0.0, 1.0);
      dx = px[j] + t * ex - x;
      dy = py[j] + t * ey - y;
      best = MIN (best, sqrt (dx * dx + dy * dy));
    }
  return best;
}

typedef struct
{
  gsize   n;
  double *x, *y;
  double  v_lo, v_hi;
  char   *kind;
} Lobe;

static void
lobe_clear (Lobe *lobe)
{
  g_free (lobe->x);
  g_free (lobe->y);
  g_free (lobe->kind);
}

/* The dossier's lobe: polygon to pixel coordinates of `grid`, and its velocity range. */
static void
read_lobe (GKeyFile         *kf,
           const char       *group,
           const EffluxCube *grid,
           Lobe             *lobe)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *poly = g_key_file_get_string (kf, group, "polygon", &error);
  gsize nv = 0;
  g_autofree double *range = NULL;
  g_auto (GStrv) pairs = NULL;

  g_assert_no_error (error);
  pairs = g_strsplit (poly, ";", -1);
  lobe->n = g_strv_length (pairs);
  g_assert_cmpuint (lobe->n, >=, 3);
  lobe->x = g_new (double, lobe->n);
  lobe->y = g_new (double, lobe->n);
  for (gsize i = 0; i < lobe->n; i++)
    {
      g_auto (GStrv) radec = g_strsplit (pairs[i], ",", -1);
      g_assert_cmpuint (g_strv_length (radec), ==, 2);
      g_assert_true (efflux_cube_icrs_to_pixel (grid, g_ascii_strtod (radec[0], NULL),
                                                g_ascii_strtod (radec[1], NULL), &lobe->x[i], &lobe->y[i]));
    }
  range = g_key_file_get_double_list (kf, group, "velocity-kms", &nv, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (nv, ==, 2);
  lobe->v_lo = MIN (range[0], range[1]);
  lobe->v_hi = MAX (range[0], range[1]);
  lobe->kind = g_key_file_get_string (kf, group, "kind", &error);
  g_assert_no_error (error);
}

/* Sum of T over the lobe's voxels (pixel centre inside the polygon, channel centre in the range). */
static double
lobe_sum (const EffluxCube *cube,
          const Lobe       *lobe,
          double            vsys,
          double           *sum_u)
{
  double sum = 0.0, su = 0.0;

  for (gsize y = 0; y < cube->ny; y++)
    for (gsize x = 0; x < cube->nx; x++)
      if (inside (lobe->x, lobe->y, lobe->n, (double) x, (double) y))
        for (gsize k = 0; k < cube->nchan; k++)
          if (cube->velocity[k] >= lobe->v_lo && cube->velocity[k] <= lobe->v_hi)
            {
              double t = efflux_cube_spectrum (cube, x, y)[k];
              sum += t;
              su += t * fabs (cube->velocity[k] - vsys);
            }
  *sum_u = su;
  return sum;
}

static void
test_thin_mass (void)
{
  g_autofree char *dir = run_recipe (thin_recipe, "thin");
  g_autoptr (GKeyFile) dossier = load_keyfile (dir, "thin.efflux");
  g_autoptr (GKeyFile) truth = load_keyfile (dir, "thin.truth");
  g_autoptr (EffluxCube) cube = load_cube (dir, "thin-co.fits");
  const char *lobes[] = { "Lobe blue", "Lobe red", NULL };
  /* REFERENCES.md 4.4 [C]: N(12CO) per K km/s for 12CO 2-1 at Tex = 50 K with the CMB (2.7255 K),
   * 7.7063e14 cm^-2, thin LTE after Mangum & Shirley 2015; given to 5 digits (5e-5). */
  double n_per_kkms = 7.7063e14;
  double pix_cm = 300.0 * EFFLUX_PC * 0.5 * EFFLUX_ARCSEC;
  double msun_per_kkms = n_per_kkms / 1e-4 * 2.8 * EFFLUX_M_H * pix_cm * pix_cm / EFFLUX_MSUN;
  double dv = 0.5, vsys = 5.0;

  for (gsize l = 0; lobes[l] != NULL; l++)
    {
      Lobe lobe = { 0 };
      double su, sum, mass, p_obs;
      g_autoptr (GError) error = NULL;

      read_lobe (dossier, lobes[l], cube, &lobe);
      sum = lobe_sum (cube, &lobe, vsys, &su);
      mass = g_key_file_get_double (truth, lobes[l], "mass-msun", &error);
      g_assert_no_error (error);
      p_obs = g_key_file_get_double (truth, lobes[l], "momentum-obs-msun-kms", &error);
      g_assert_no_error (error);
      g_assert_cmpfloat (mass, >, 0.0);
      /* Residuals: the 5-digit constant (5e-5); tau/(1 - e^-tau) - 1 = tau/2 < 1e-6 at these
       * columns; beam spill beyond the polygon: the margin is 2.5 beams = 5.9 sigma, so < 1e-8;
       * float32 storage (1e-7). Well within the 1% the recovery tests will ask. */
      g_assert_cmpfloat_with_epsilon (sum * dv * msun_per_kkms, mass, 2e-4 * mass);
      g_assert_cmpfloat_with_epsilon (su * dv * msun_per_kkms, p_obs, 2e-4 * p_obs);
      lobe_clear (&lobe);
    }
  efflux_test_remove_tree (dir);
}

/* Independent radiative transfer of one voxel: tests/ref/synth_lte.py with astropy's constants. */
static void
python_lte (const EffluxLine *line,
            double            tex,
            double            tbg,
            double            column,
            double            dv,
            double           *tau,
            double           *t)
{
  char args[8][G_ASCII_DTOSTR_BUF_SIZE];
  double values[8] = { line->freq_hz, line->a_ul, line->eu_k, (double) line->g_u, line->b_hz, tex, tbg, column };
  char dvs[G_ASCII_DTOSTR_BUF_SIZE];
  g_autofree char *out = NULL;
  g_auto (GStrv) lines = NULL;

  for (int i = 0; i < 8; i++)
    g_ascii_dtostr (args[i], sizeof args[i], values[i]);
  g_ascii_dtostr (dvs, sizeof dvs, dv);
  {
    const char *argv[] = { args[0], args[1], args[2], args[3], args[4], args[5], args[6], args[7], dvs, NULL };

    out = efflux_test_python ("synth_lte.py", argv);
  }
  lines = g_strsplit (out, "\n", -1);
  g_assert_true (g_str_has_prefix (lines[0], "tau "));
  g_assert_true (g_str_has_prefix (lines[1], "t "));
  *tau = g_ascii_strtod (lines[0] + 4, NULL);
  *t = g_ascii_strtod (lines[1] + 2, NULL);
}

static void
test_thick_ratio (void)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) recipe = efflux_synth_recipe_load_data (thick_recipe, "thick.recipe", &error);
  g_autoptr (EffluxSynthModel) model = NULL;
  g_autoptr (EffluxCube) c12 = NULL;
  g_autoptr (EffluxCube) c13 = NULL;
  const EffluxLine *l12, *l13;
  gsize n, best = 0, checked = 0;
  double tau_best = 0.0, tex = 30.0, tbg = EFFLUX_TCMB, dv = 0.5;

  g_assert_no_error (error);
  model = efflux_synth_model_new (recipe, &error);
  g_assert_no_error (error);
  c12 = efflux_synth_render (recipe, model, 0, &error);
  g_assert_no_error (error);
  c13 = efflux_synth_render (recipe, model, 1, &error);
  g_assert_no_error (error);
  l12 = efflux_synth_recipe_cube_line (recipe, 0);
  l13 = efflux_synth_recipe_cube_line (recipe, 1);
  g_assert_cmpint (l12->species, ==, EFFLUX_SPECIES_12CO);
  g_assert_cmpint (l13->species, ==, EFFLUX_SPECIES_13CO);

  n = model->nx * model->ny * model->nchan;
  for (gsize i = 0; i < n; i++)
    {
      double n12 = 1e-4 * model->lobe_h2[i];
      double tau12, tau13, expect;

      if (!(model->lobe_h2[i] > 0.0))
        continue;
      /* each isotopologue through its own line data; 13CO at 12CO/62 */
      tau12 = efflux_lte_tau (l12, tex, n12, dv);
      tau13 = efflux_lte_tau (l13, tex, n12 / 62.0, dv);
      expect = (efflux_jnu (l12->freq_hz, tex) - efflux_jnu (l12->freq_hz, tbg)) * -expm1 (-tau12) /
               ((efflux_jnu (l13->freq_hz, tex) - efflux_jnu (l13->freq_hz, tbg)) * -expm1 (-tau13));
      if (c13->data[i] > 1e-3)
        {
          g_assert_cmpfloat_with_epsilon (c12->data[i] / c13->data[i], expect, 2e-5 * expect);
          checked++;
        }
      if (tau12 > tau_best)
        {
          tau_best = tau12;
          best = i;
        }
    }
  g_assert_cmpuint (checked, >, 100);
  /* the recipe is thick where the column is high: the ratio falls far below 62 */
  g_assert_cmpfloat (tau_best, >, 20.0);
  g_assert_cmpfloat (c12->data[best] / c13->data[best], <, 5.0);

  /* the brightest 12CO voxel and its 13CO, against astropy */
  {
    double tau, t;
    python_lte (l12, tex, tbg, 1e-4 * model->lobe_h2[best], dv, &tau, &t);
    g_assert_cmpfloat_with_epsilon (tau, tau_best, 1e-4 * tau);
    g_assert_cmpfloat_with_epsilon (t, c12->data[best], 1e-4 * t);
    python_lte (l13, tex, tbg, 1e-4 * model->lobe_h2[best] / 62.0, dv, &tau, &t);
    g_assert_cmpfloat_with_epsilon (t, c13->data[best], 1e-4 * t);
    g_assert_cmpfloat (tau, >, 0.3);
  }
}

/* The truth's channel masses against scipy.integrate.quad (tests/ref/synth_massvel.py). */
static void
check_massvel (GKeyFile   *truth,
               const char *group,
               const char *args)
{
  g_auto (GStrv) argv = g_strsplit (args, " ", -1);
  g_autofree char *out = efflux_test_python ("synth_massvel.py", (const char * const *) argv);
  g_autofree double *v = NULL;
  g_autofree double *m = NULL;
  g_auto (GStrv) lines = NULL;
  g_autoptr (GError) error = NULL;
  gsize nv = 0, nm = 0, n = 0;

  v = g_key_file_get_double_list (truth, group, "channel-velocity-kms", &nv, &error);
  g_assert_no_error (error);
  m = g_key_file_get_double_list (truth, group, "channel-mass-msun", &nm, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (nv, ==, nm);
  lines = g_strsplit (out, "\n", -1);
  for (gsize i = 0; lines[i] != NULL; i++)
    {
      g_auto (GStrv) f = NULL;
      if (*lines[i] == '\0')
        continue;
      f = g_strsplit (lines[i], " ", -1);
      g_assert_cmpuint (n, <, nv);
      g_assert_cmpfloat_with_epsilon (v[n], g_ascii_strtod (f[0], NULL), 1e-9);
      g_assert_cmpfloat_with_epsilon (m[n], g_ascii_strtod (f[1], NULL), 1e-9 * m[n]);
      n++;
    }
  g_assert_cmpuint (n, ==, nv);
  g_assert_cmpuint (n, >, 10);
}

/* Every pixel holding gas of a lobe lies inside the dossier polygon, >= 2 beams from its edges
 * (less half a pixel diagonal: the gas fills its pixel, the test looks at the centre); every
 * channel holding the lobe's mass lies in the lobe's velocity range, and no channel of the range
 * lies within `exclude` of vsys. */
static void
check_enclosure (const EffluxSynthModel *model,
                 GKeyFile               *dossier,
                 GKeyFile               *truth,
                 const char             *group,
                 double                  bmaj_pix,
                 double                  vsys,
                 double                  exclude)
{
  Lobe lobe = { 0 };
  gboolean red;
  gsize n_gas = 0;
  g_autoptr (GError) error = NULL;
  g_autofree double *chv = NULL;
  gsize nch = 0;

  read_lobe (dossier, group, model->grid, &lobe);
  red = strcmp (lobe.kind, "red") == 0;
  for (gsize y = 0; y < model->ny; y++)
    for (gsize x = 0; x < model->nx; x++)
      for (gsize k = 0; k < model->nchan; k++)
        {
          double v = model->grid->velocity[k];
          if ((v > vsys) != red || !(model->lobe_h2[(y * model->nx + x) * model->nchan + k] > 0.0))
            continue;
          n_gas++;
          g_assert_true (inside (lobe.x, lobe.y, lobe.n, (double) x, (double) y));
          g_assert_cmpfloat (edge_distance (lobe.x, lobe.y, lobe.n, (double) x, (double) y), >=,
                             2.0 * bmaj_pix - G_SQRT2 / 2.0);
          break;
        }
  g_assert_cmpuint (n_gas, >, 20);

  chv = g_key_file_get_double_list (truth, group, "channel-velocity-kms", &nch, &error);
  g_assert_no_error (error);
  for (gsize k = 0; k < nch; k++)
    {
      g_assert_cmpfloat (chv[k], >=, lobe.v_lo);
      g_assert_cmpfloat (chv[k], <=, lobe.v_hi);
    }
  for (gsize k = 0; k < model->nchan; k++)
    {
      double v = model->grid->velocity[k];
      if (v >= lobe.v_lo && v <= lobe.v_hi)
        g_assert_cmpfloat (fabs (v - vsys), >=, exclude);
    }
  lobe_clear (&lobe);
}

static void
test_dossier (void)
{
  g_autofree char *text = g_strdup_printf (full_recipe, 7u);
  g_autofree char *dir = run_recipe (text, "dossier");
  g_autoptr (GKeyFile) dossier = load_keyfile (dir, "full.efflux");
  g_autoptr (GKeyFile) truth = load_keyfile (dir, "full.truth");
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) recipe = efflux_synth_recipe_load_data (text, "test.recipe", &error);
  g_autoptr (EffluxSynthModel) model = efflux_synth_model_new (recipe, &error);
  /* CONTRACT.md section 2 */
  const char *source_keys[] = { "name", "ra-deg", "dec-deg", "distance-pc", "vsys-kms", "inclination-mode",
                                "inclination-deg", NULL };
  const char *assumption_keys[] = { "tex-k", "tbg-k", "co-abundance", "isotope-ratio", "mass-per-h2",
                                    "opacity", "tau", "clip-sigma", NULL };
  const char *cube_keys[] = { "path", "line", "role", "beam-efficiency", "rms-k", NULL };
  const char *lobe_keys[] = { "kind", "cube", "polygon", "velocity-kms", "note", "author", NULL };
  const char *cut_keys[] = { "cube", "path", "width-arcsec", NULL };
  const char *cubes[] = { "Cube co", "Cube sio", NULL };
  g_auto (GStrv) cut = NULL;
  g_autofree char *path = NULL;
  g_autofree char *incl = NULL;

  g_assert_no_error (error);
  for (gsize i = 0; source_keys[i] != NULL; i++)
    g_assert_true (g_key_file_has_key (dossier, "Source", source_keys[i], NULL));
  for (gsize i = 0; assumption_keys[i] != NULL; i++)
    g_assert_true (g_key_file_has_key (dossier, "Assumptions", assumption_keys[i], NULL));
  for (gsize c = 0; cubes[c] != NULL; c++)
    for (gsize i = 0; cube_keys[i] != NULL; i++)
      g_assert_true (g_key_file_has_key (dossier, cubes[c], cube_keys[i], NULL));
  for (gsize i = 0; lobe_keys[i] != NULL; i++)
    {
      g_assert_true (g_key_file_has_key (dossier, "Lobe blue", lobe_keys[i], NULL));
      g_assert_true (g_key_file_has_key (dossier, "Lobe red", lobe_keys[i], NULL));
    }
  for (gsize i = 0; cut_keys[i] != NULL; i++)
    g_assert_true (g_key_file_has_key (dossier, "Cut axis", cut_keys[i], NULL));

  g_assert_cmpfloat (g_key_file_get_double (dossier, "Source", "distance-pc", NULL), ==, 400.0);
  g_assert_cmpfloat (g_key_file_get_double (dossier, "Source", "vsys-kms", NULL), ==, -2.0);
  g_assert_cmpfloat (g_key_file_get_double (dossier, "Source", "inclination-deg", NULL), ==, 40.0);
  incl = g_key_file_get_string (dossier, "Source", "inclination-mode", NULL);
  g_assert_cmpstr (incl, ==, "fixed");
  path = g_key_file_get_string (dossier, "Cube co", "path", NULL);
  g_assert_cmpstr (path, ==, "full-co.fits");   /* relative to the dossier, which sits beside it */
  {
    g_autofree char *role = g_key_file_get_string (dossier, "Cube co", "role", NULL);
    g_autofree char *lobe_cube = g_key_file_get_string (dossier, "Lobe blue", "cube", NULL);
    g_autofree char *line = g_key_file_get_string (dossier, "Cube sio", "line", NULL);
    g_assert_cmpstr (role, ==, "tracer");
    g_assert_cmpstr (lobe_cube, ==, "co");
    g_assert_cmpstr (line, ==, "SiO 5-4");
  }
  {
    g_autofree char *cut_path = g_key_file_get_string (dossier, "Cut axis", "path", NULL);
    cut = g_strsplit (cut_path, ";", -1);
  }
  g_assert_cmpuint (g_strv_length (cut), ==, 2);

  /* beam 1.5" on 0.6" pixels; ambient FWHM 1 km/s, so the ranges keep out |v - vsys| < 1.5 */
  check_enclosure (model, dossier, truth, "Lobe blue", 1.5 / 0.6, -2.0, 1.5);
  check_enclosure (model, dossier, truth, "Lobe red", 1.5 / 0.6, -2.0, 1.5);

  /* the truth's lobes and knots */
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Lobe blue", "mass-msun", NULL), 2e-3, 1e-15);
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Lobe blue", "momentum-true-msun-kms", NULL),
                                  g_key_file_get_double (truth, "Lobe blue", "momentum-obs-msun-kms", NULL)
                                  / cos (40.0 * G_PI / 180.0), 1e-12);
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Lobe red", "vmax-obs-kms", NULL),
                                  22.0 * cos (40.0 * G_PI / 180.0), 1e-12);
  /* a knot of 200 yr at 25 km/s: 25 x 200 x (Julian year in s) / au = 1054.65 au, x sin 40 / 400 pc */
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Knot blue-1", "offset-arcsec", NULL),
                                  25e5 * 200 * 3.15576e7 / 1.495978707e13 * sin (40.0 * G_PI / 180.0) / 400.0,
                                  1e-9);
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Knot red-1", "velocity-kms", NULL),
                                  -2.0 + 25.0 * cos (40.0 * G_PI / 180.0), 1e-12);
  g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Truth", "ambient-mass-msun", NULL), 0.1, 1e-12);
  /* the densest blue-lobe voxel and its 12CO optical depth */
  {
    double hmax = 0.0;
    for (gsize k = 0; k < model->nchan; k++)
      if (model->grid->velocity[k] < -2.0)
        for (gsize i = 0; i < model->nx * model->ny; i++)
          hmax = MAX (hmax, model->lobe_h2[i * model->nchan + k]);
    g_assert_cmpfloat (hmax, >, 0.0);
    g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Lobe blue", "peak-h2-column-cm2", NULL),
                                    hmax, 1e-12 * hmax);
    g_assert_cmpfloat_with_epsilon (g_key_file_get_double (truth, "Lobe blue", "peak-tau-co", NULL),
                                    efflux_lte_tau (efflux_line_lookup ("12CO 2-1"), 25.0, 1e-4 * hmax, 0.75),
                                    1e-9 * g_key_file_get_double (truth, "Lobe blue", "peak-tau-co", NULL));
  }
  check_massvel (truth, "Lobe blue", "2e-3 4 25 1.8 40 -2.0 -24.5 0.75 60 0");
  check_massvel (truth, "Lobe red", "1e-3 4 22 2.0 40 -2.0 -24.5 0.75 60 1");

  /* the Jy/beam cube, read back (and converted to K by the loader), is the rendered K cube */
  {
    g_autoptr (EffluxCube) rendered = efflux_synth_render (recipe, model, 0, &error);
    g_autoptr (EffluxCube) loaded = load_cube (dir, "full-co.fits");
    double peak = 0.0;

    g_assert_no_error (error);
    g_assert_cmpint (loaded->bunit_kind, ==, EFFLUX_BUNIT_JY_BEAM);
    for (gsize i = 0; i < loaded->nx * loaded->ny * loaded->nchan; i++)
      {
        g_assert_cmpfloat_with_epsilon (loaded->data[i], rendered->data[i], 1e-6 * fabs (rendered->data[i]) + 1e-6);
        peak = MAX (peak, rendered->data[i]);
      }
    g_assert_cmpfloat (peak, >, 1.0);
  }
  efflux_test_remove_tree (dir);
}

/* The demo: its recipe builds, and the hand-drawn lobes of sample-data/demo.efflux enclose the
 * model lobes and keep out the ambient line. */
static void
test_demo (void)
{
  const char *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_autofree char *recipe_path = NULL;
  g_autofree char *sample = NULL;
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) recipe = NULL;
  g_autoptr (EffluxSynthModel) model = NULL;
  g_autoptr (GKeyFile) dossier = NULL;
  g_autoptr (GKeyFile) truth = NULL;
  g_autofree char *dir = NULL;

  g_assert_nonnull (root);
  sample = g_build_filename (root, "sample-data", NULL);
  recipe_path = g_build_filename (sample, "demo.recipe", NULL);
  recipe = efflux_synth_recipe_load (recipe_path, &error);
  g_assert_no_error (error);
  model = efflux_synth_model_new (recipe, &error);
  g_assert_no_error (error);
  dir = g_build_filename (tmpdir, "demo", NULL);
  g_assert_true (efflux_synth_run (recipe, dir, &error));
  g_assert_no_error (error);
  truth = load_keyfile (dir, "demo-model.truth");
  dossier = load_keyfile (sample, "demo.efflux");
  /* beam 1.2" on 0.5" pixels; ambient FWHM 1.2 km/s: exclude 1.8 km/s around 5.4 */
  check_enclosure (model, dossier, truth, "Lobe blue", 1.2 / 0.5, 5.4, 1.8);
  check_enclosure (model, dossier, truth, "Lobe red", 1.2 / 0.5, 5.4, 1.8);
  /* the cubes the demo dossier names are the ones the recipe writes */
  {
    g_autofree char *p1 = g_key_file_get_string (dossier, "Cube co", "path", NULL);
    g_autofree char *p2 = g_key_file_get_string (dossier, "Cube co13", "path", NULL);
    g_autofree char *p3 = g_key_file_get_string (dossier, "Cube sio", "path", NULL);
    g_autofree char *f1 = g_build_filename (dir, p1, NULL);
    g_autofree char *f2 = g_build_filename (dir, p2, NULL);
    g_autofree char *f3 = g_build_filename (dir, p3, NULL);
    g_assert_true (g_file_test (f1, G_FILE_TEST_IS_REGULAR));
    g_assert_true (g_file_test (f2, G_FILE_TEST_IS_REGULAR));
    g_assert_true (g_file_test (f3, G_FILE_TEST_IS_REGULAR));
  }
  efflux_test_remove_tree (dir);
}

/* ---------------------------------------------------------------------------------------- */

static void
run_cli_refusal (const char *name,
                 const char *text,
                 const char *group,
                 const char *key)
{
  g_autofree char *recipe = write_recipe (name, text);
  g_autofree char *out_dir = g_build_filename (tmpdir, "refused-out", NULL);
  g_autofree char *out = NULL;
  g_autofree char *err = NULL;
  g_autofree char *tag = g_strdup_printf ("[%s] %s", group, key);
  const char *args[] = { "synth", recipe, "-o", out_dir, NULL };

  g_assert_cmpint (g_mkdir (out_dir, 0755), ==, 0);
  g_assert_cmpint (efflux_test_run_cli (args, &out, &err), ==, 1);
  g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  /* one line, naming the recipe file, the group and the key */
  g_assert_nonnull (strchr (err, '\n'));
  g_assert_cmpstr (strchr (err, '\n') + 1, ==, "");
  g_assert_nonnull (strstr (err, recipe));
  g_assert_nonnull (strstr (err, tag));
  g_assert_cmpuint (efflux_test_count_entries (out_dir), ==, 0);
  g_assert_cmpint (g_rmdir (out_dir), ==, 0);
  g_assert_cmpint (g_unlink (recipe), ==, 0);
}

static char *
replace (const char *text,
         const char *old,
         const char *new)
{
  const char *at = strstr (text, old);

  g_assert_nonnull (at);
  return g_strdup_printf ("%.*s%s%s", (int) (at - text), text, new, at + strlen (old));
}

static void
test_cli_refusals (void)
{
  g_autofree char *missing = replace (thin_recipe, "distance-pc=300\n", "");
  g_autofree char *negative = replace (thin_recipe, "distance-pc=300\n", "distance-pc=-300\n");
  g_autofree char *unknown = replace (thin_recipe, "line=12CO 2-1\n", "line=12CO 9-8\n");
  g_autofree char *gamma = replace (thin_recipe, "gamma=1.5\n", "gamma=fast\n");
  g_autofree char *offband = replace (thin_recipe, "vmax-kms=26\n", "vmax-kms=60\n");
  g_autofree char *typo = replace (thin_recipe, "tex-k=50\n", "tex=50\n");

  run_cli_refusal ("missing.recipe", missing, "Source", "distance-pc");
  run_cli_refusal ("negative.recipe", negative, "Source", "distance-pc");
  run_cli_refusal ("unknown-line.recipe", unknown, "Cube co", "line");
  run_cli_refusal ("gamma.recipe", gamma, "Lobe red", "gamma");
  run_cli_refusal ("offband.recipe", offband, "Lobe red", "vmax-kms");
  run_cli_refusal ("typo.recipe", typo, "Physics", "tex");
}

static void
test_cli_writes (void)
{
  g_autofree char *recipe = write_recipe ("thin.recipe", thin_recipe);
  g_autofree char *out_dir = g_build_filename (tmpdir, "cli-out", "nested", NULL);
  g_autofree char *parent = g_build_filename (tmpdir, "cli-out", NULL);
  g_autofree char *err = NULL;
  const char *args[] = { "synth", recipe, "-o", out_dir, NULL };
  int status = efflux_test_run_cli (args, NULL, &err);

  g_assert_cmpstr (err, ==, "");
  g_assert_cmpint (status, ==, 0);
  /* the cube, the truth and the dossier, and no temporary files */
  g_assert_cmpuint (efflux_test_count_entries (out_dir), ==, 3);
  efflux_test_remove_tree (out_dir);
  g_assert_cmpint (g_rmdir (parent), ==, 0);
  g_assert_cmpint (g_unlink (recipe), ==, 0);
}

int
main (int    argc,
      char **argv)
{
  g_autoptr (GError) error = NULL;
  int rc;

  g_test_init (&argc, &argv, NULL);
  tmpdir = efflux_test_tmp_dir ("efflux-synth");

  g_test_add_func ("/synth/determinism", test_determinism);
  g_test_add_func ("/synth/thin-mass-matches-truth", test_thin_mass);
  g_test_add_func ("/synth/thick-12co-13co-ratio", test_thick_ratio);
  g_test_add_func ("/synth/dossier", test_dossier);
  g_test_add_func ("/synth/demo", test_demo);
  g_test_add_func ("/synth/cli-refusals", test_cli_refusals);
  g_test_add_func ("/synth/cli-writes", test_cli_writes);
  rc = g_test_run ();
  g_rmdir (tmpdir);
  g_free (tmpdir);
  return rc;
}
