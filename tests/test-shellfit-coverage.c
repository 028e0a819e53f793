/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Are the wind-driven shell fit's quoted errors (efflux-shellfit.h) the right size? Coverage over
 * noise realisations: synthetic shells (efflux-synth shape=shell, Lee et al. 2000, ApJ 542, 925,
 * the model of REFERENCES.md 1.10 item 2) at 30, 50 and 70 deg from the line of sight, made once
 * without noise, then N_REAL times with fresh Gaussian noise added to every voxel (uncorrelated
 * between voxels, as efflux-synth adds it), cut along the axis and fitted. For a correct 1-sigma
 * error, the fraction of fits whose inclination lies within 1 quoted sigma of the truth is 68.3%
 * (the Gaussian's +-1 sigma probability: erf (1 / sqrt 2), from memory; scipy.stats.norm gives
 * 0.6827).
 *
 * What is asserted. The quoted error is a statistical one: the test counts the fits within 1 sigma of
 * the mean of the fits of the same truth (the scatter the noise makes), and asserts separately
 * that the biases the model leaves are small (mean i within 1 deg of the truth, mean t0 and C
 * within 5%). The coverage of the truth itself is reported: lower than 68% by those biases.
 * Measured when this was written (180 fits, noise 8% of the peak voxel): within 1 sigma of the
 * fits' mean 55.6% (60.0, 61.7 and 45.0% at 30, 50 and 70 deg: the errors are still about 1.3x too
 * small, from 5x too large before); of the truth 38.9% for i, 37.2% for t0, 27.2% for C; mean i
 * 30.21, 50.30, 69.86; mean C / truth 1.016, 1.019, 1.002; mean t0 / truth 0.992, 0.989, 1.009.
 *
 * Tolerance. Each inclination gives 2 lobes x N_REAL fits; with 3 x 2 x 30 = 180 fits (lobes of one
 * cut are not quite independent, so count ~90 to 180) the binomial spread of a true 68% is 3.5 to
 * 5 points. The test accepts 52% to 84% over all fits: a 2x underestimate of the errors gives
 * P(|z| < 0.5) = 38% and a 2x overestimate P(|z| < 2) = 95% (normal distribution, from memory),
 * both well outside. The coverages of t0 and C are reported (g_test_message) and C's bias too. */

#include <glib.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-kinematics.h"
#include "efflux-pv.h"
#include "efflux-shellfit.h"
#include "efflux-synth.h"
#include "efflux-test-util.h"

#include <math.h>
#include <string.h>

#define N_REAL 30

#include "shell-recipe.h"

/* the noise per voxel, as a fraction of the noise-free cube's brightest voxel */
#define NOISE_FRACTION 0.08

typedef struct
{
  guint  n;
  guint  in_i, in_t, in_c;      /* within 1 sigma of the truth */
  guint  in_mean;               /* i within 1 sigma of the mean of its inclination's fits */
  double sum_zi2;               /* sum of ((fit - truth) / err)^2 for i */
  double sum_c_ratio;           /* sum of C_fit / C_true */
  double sum_t_ratio;
} Tally;

/* The fits of one inclination's realisations, shared by the threads (each writes its own). */
typedef struct
{
  EffluxPv       *pvs[N_REAL];
  EffluxShellFit *fits[N_REAL];
  double          soff, vsys, distance, beam, noise;
} Job;

typedef struct
{
  Job   *job;
  guint  first, stride;
} FitArgs;

static gpointer
fit_thread (gpointer data)
{
  FitArgs *a = data;

  for (guint r = a->first; r < N_REAL; r += a->stride)
    {
      EffluxShellfitOptions opt = { NAN, NAN, NAN };

      opt.noise_k = a->job->noise;
      opt.vmin_kms = 1.0;   /* the lobes' vmin-kms */
      a->job->fits[r] = efflux_shellfit_pv (a->job->pvs[r], a->job->soff, a->job->vsys, a->job->distance,
                                            a->job->beam, &opt, NULL);
    }
  g_free (a);
  return NULL;
}

static void
run_inclination (double  incl,
                 Tally  *all)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-shellcov");
  g_autofree char *text = g_strdup_printf (RECIPE_FMT, incl);
  g_autofree char *dpath = g_build_filename (dir, "shell.efflux", NULL);
  g_autofree char *cpath = g_build_filename (dir, "shell-co.fits", NULL);
  g_autofree char *tpath = g_build_filename (dir, "shell.truth", NULL);
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxSynthRecipe) rc = NULL;
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxCube) cube = NULL;
  g_autoptr (GKeyFile) truth = g_key_file_new ();
  g_autofree float *clean = NULL;
  g_autoptr (GRand) rand = g_rand_new_with_seed ((guint32) (1000 + incl));
  EffluxCubeLoadOptions load = { 0 };
  const EffluxDossierCut *cut;
  g_autofree double *ra_dec = NULL;
  double t0, c_true, peak = 0.0, rms, sx, sy;
  gsize nvox;
  Tally t = { 0 };
  Job job = { 0 };
  double mean_i;

  rc = efflux_synth_recipe_load_data (text, "shell.recipe", &error);
  g_assert_no_error (error);
  g_assert_true (efflux_synth_run (rc, dir, &error));
  g_assert_no_error (error);
  g_assert_true (g_key_file_load_from_file (truth, tpath, G_KEY_FILE_NONE, &error));
  t0 = g_key_file_get_double (truth, "Lobe blue", "t0-yr", &error);
  g_assert_no_error (error);
  c_true = g_key_file_get_double (truth, "Lobe blue", "shell-c-per-arcsec", &error);
  g_assert_no_error (error);
  dossier = efflux_dossier_load (dpath, &error);
  g_assert_no_error (error);
  load.no_noise = TRUE;
  cube = efflux_cube_load (cpath, &load, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  nvox = cube->nx * cube->ny * cube->nchan;
  clean = g_memdup2 (cube->data, nvox * sizeof (float));
  for (gsize v = 0; v < nvox; v++)
    peak = MAX (peak, clean[v]);
  rms = NOISE_FRACTION * peak;
  cut = g_ptr_array_index (dossier->cuts, 0);
  ra_dec = efflux_dossier_cut_path (cut);
  g_assert_true (efflux_cube_icrs_to_pixel (cube, dossier->ra_deg, dossier->dec_deg, &sx, &sy));

  /* the cuts of every realisation (cheap), then the fits (dear) in threads */
  for (guint r = 0; r < N_REAL; r++)
    {
      /* Gaussian noise by Box-Muller from GRand's uniform doubles */
      for (gsize v = 0; v + 1 < nvox; v += 2)
        {
          double u1 = g_rand_double (rand), u2 = g_rand_double (rand);
          double rr = sqrt (-2.0 * log (MAX (u1, 1e-300)));

          cube->data[v] = clean[v] + (float) (rms * rr * cos (2.0 * G_PI * u2));
          cube->data[v + 1] = clean[v + 1] + (float) (rms * rr * sin (2.0 * G_PI * u2));
        }
      job.pvs[r] = efflux_pv_cut (cube, ra_dec, cut->n_vertices, cut->width_arcsec, &error);
      g_assert_no_error (error);
    }
  g_assert_true (efflux_kinematics_offset_on_cut (job.pvs[0], sx, sy, &job.soff, NULL));
  job.vsys = dossier->vsys_kms;
  job.distance = dossier->distance_pc;
  job.beam = cube->bmaj_arcsec;
  /* the cut's noise: the voxel noise over the samples averaged across it (a lower bound:
   * neighbouring samples share voxels through the interpolation); it sets the threshold only */
  job.noise = rms / sqrt (2.0 * job.pvs[0]->half_width + 1.0);
  {
    guint nt = CLAMP (g_get_num_processors (), 1, 4);
    GThread *threads[4];

    for (guint w = 0; w < nt; w++)
      {
        FitArgs *a = g_new (FitArgs, 1);
        a->job = &job;
        a->first = w;
        a->stride = nt;
        threads[w] = g_thread_new ("fit", fit_thread, a);
      }
    for (guint w = 0; w < nt; w++)
      g_thread_join (threads[w]);
  }
  /* the mean inclination of this truth's fits: the scatter about it is the statistical part */
  {
    double sum = 0.0;
    for (guint r = 0; r < N_REAL; r++)
      {
        g_assert_nonnull (job.fits[r]);
        g_assert_cmpuint (job.fits[r]->n_lobes, ==, 2);
        sum += job.fits[r]->lobes[0].inclination_deg + job.fits[r]->lobes[1].inclination_deg;
      }
    mean_i = sum / (2.0 * N_REAL);
  }
  for (guint r = 0; r < N_REAL; r++)
    {
      const EffluxShellFit *fit = job.fits[r];

      g_assert_nonnull (fit);
      g_assert_cmpuint (fit->n_lobes, ==, 2);
      for (guint l = 0; l < 2; l++)
        {
          const EffluxShellLobeFit *lf = &fit->lobes[l];
          double zi;

          g_assert_true (lf->ok);
          g_assert_cmpfloat (lf->inclination_err_deg, >, 0.0);
          zi = (lf->inclination_deg - incl) / lf->inclination_err_deg;
          t.n++;
          t.in_i += fabs (zi) <= 1.0;
          t.in_mean += fabs (lf->inclination_deg - mean_i) <= lf->inclination_err_deg;
          t.in_t += fabs (lf->age_yr - t0) <= lf->age_err_yr;
          t.in_c += fabs (lf->c_per_arcsec - c_true) <= lf->c_err_per_arcsec;
          t.sum_zi2 += zi * zi;
          t.sum_c_ratio += lf->c_per_arcsec / c_true;
          t.sum_t_ratio += lf->age_yr / t0;
          g_test_message ("i = %g, realisation %u, lobe %u: i %.2f +- %.2f, t0 %.0f +- %.0f (truth %.0f), "
                          "C %.3f +- %.3f (truth %.3f)", incl, r, l, lf->inclination_deg,
                          lf->inclination_err_deg, lf->age_yr, lf->age_err_yr, t0, lf->c_per_arcsec,
                          lf->c_err_per_arcsec, c_true);
        }
      efflux_shellfit_free (job.fits[r]);
      efflux_pv_free (job.pvs[r]);
    }
  g_test_message ("i = %g: %u fits; within 1 sigma of the truth: i %.1f%%, t0 %.1f%%, C %.1f%%; of the "
                  "fits' mean i (%.2f): %.1f%%; rms z(i) %.2f; mean C / truth %.3f, mean t0 / truth %.3f",
                  incl, t.n, 100.0 * t.in_i / t.n, 100.0 * t.in_t / t.n, 100.0 * t.in_c / t.n, mean_i,
                  100.0 * t.in_mean / t.n, sqrt (t.sum_zi2 / t.n), t.sum_c_ratio / t.n, t.sum_t_ratio / t.n);
  /* the biases the model leaves on these shells (efflux-shellfit.h) */
  g_assert_cmpfloat (fabs (mean_i - incl), <, 1.0);
  g_assert_cmpfloat (fabs (t.sum_c_ratio / t.n - 1.0), <, 0.05);
  g_assert_cmpfloat (fabs (t.sum_t_ratio / t.n - 1.0), <, 0.05);
  all->n += t.n;
  all->in_i += t.in_i;
  all->in_t += t.in_t;
  all->in_c += t.in_c;
  all->in_mean += t.in_mean;
  all->sum_zi2 += t.sum_zi2;
  all->sum_c_ratio += t.sum_c_ratio;
  all->sum_t_ratio += t.sum_t_ratio;
  efflux_test_remove_tree (dir);
}

static void
test_coverage (void)
{
  Tally all = { 0 };
  double cov;

  run_inclination (30.0, &all);
  run_inclination (50.0, &all);
  run_inclination (70.0, &all);
  cov = (double) all.in_mean / all.n;
  g_test_message ("all: %u fits; within 1 sigma of the truth: i %.1f%%, t0 %.1f%%, C %.1f%%; of the fits' mean "
                  "i: %.1f%%; rms z(i) %.2f; mean C / truth %.3f, mean t0 / truth %.3f", all.n,
                  100.0 * all.in_i / all.n, 100.0 * all.in_t / all.n, 100.0 * all.in_c / all.n, 100.0 * cov,
                  sqrt (all.sum_zi2 / all.n), all.sum_c_ratio / all.n, all.sum_t_ratio / all.n);
  /* 68.3% expected for the statistical error (see the top of the file); the coverage of the truth
   * itself is reported, not asserted: it is lower by the biases the model leaves (asserted above
   * per inclination) */
  g_assert_cmpfloat (cov, >=, 0.52);
  g_assert_cmpfloat (cov, <=, 0.84);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/shellfit/coverage", test_coverage);
  return g_test_run ();
}
