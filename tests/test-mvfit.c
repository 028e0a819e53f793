/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Mass-spectrum power-law fits, the hidden low-velocity mass, weighted least squares against
 * numpy.polyfit, and the seeded sampling helpers against numpy (MT19937, numpy.percentile) and
 * REFERENCES.md 1.8 (mean inclination of isotropic orientations = 1 rad). The numpy checks run
 * tests/ref/mvfit_check.py with EFFLUX_PYTHON (Debian's python3); without it they fail. */

#include "efflux-mvfit.h"
#include "efflux-sampling.h"
#include "efflux-test-util.h"

#include <glib/gstdio.h>
#include <math.h>
#include <stdlib.h>

/* ---- running the numpy reference ---------------------------------------------------------- */

/* Run tests/ref/mvfit_check.py with args; return its stdout lines as doubles (a missing python or
 * a failing script fails the test). */
static GArray *
run_reference (const char * const *args)
{
  g_autofree char *out = efflux_test_python ("mvfit_check.py", args);

  return efflux_test_parse_numbers (out);
}

static char *
write_columns (const char   *dir,
               const char   *name,
               const double *a,
               const double *b,
               const double *c,
               guint         n)
{
  g_autoptr(GString) s = g_string_new (NULL);
  g_autoptr(GError) error = NULL;
  char *path = g_build_filename (dir, name, NULL);
  guint i;

  for (i = 0; i < n; i++)
    {
      char buf[G_ASCII_DTOSTR_BUF_SIZE];

      g_string_append (s, g_ascii_dtostr (buf, sizeof buf, a[i]));
      if (b != NULL)
        g_string_append_printf (s, " %s", g_ascii_dtostr (buf, sizeof buf, b[i]));
      if (c != NULL)
        g_string_append_printf (s, " %s", g_ascii_dtostr (buf, sizeof buf, c[i]));
      g_string_append_c (s, '\n');
    }
  g_file_set_contents (path, s->str, -1, &error);
  g_assert_no_error (error);
  return path;
}

/* ---- single power law ------------------------------------------------------------------------ */

static void
power_spectrum (double *v,
                double *dmdv,
                double *err,
                guint   n,
                double  v0,
                double  dv,
                double  a,
                double  gamma,
                double  frac_err)
{
  guint i;

  for (i = 0; i < n; i++)
    {
      v[i] = v0 + i * dv;
      dmdv[i] = a * pow (v[i], -gamma);
      if (err != NULL)
        err[i] = frac_err * dmdv[i];
    }
}

static void
test_single_exact (void)
{
  double v[30], m[30], e[30];
  EffluxPowerLawFit fit;

  /* Exact power laws: gamma recovered to 1e-6 (REFERENCES.md 1.9 slopes 1.5-7), with and
   * without errors, with negative velocities (|v| is used) and with skipped channels. */
  power_spectrum (v, m, e, 30, 1.5, 0.5, 2.0e-3, 1.8, 0.1);
  g_assert_true (efflux_mvfit_single (v, m, e, 30, &fit));
  efflux_test_assert_rel (fit.gamma, 1.8, 1e-6);
  efflux_test_assert_rel (fit.log10_a, log10 (2.0e-3), 1e-6);
  g_assert_cmpuint (fit.n_used, ==, 30);
  g_assert_cmpint (fit.dof, ==, 28);
  g_assert_false (fit.errors_scaled);
  g_assert_cmpfloat (fit.chi2, <, 1e-18);
  g_assert_cmpfloat (fit.gamma_err, >, 0.0);
  efflux_test_assert_rel (efflux_mvfit_single_eval (&fit, 7.0), 2.0e-3 * pow (7.0, -1.8), 1e-6);

  power_spectrum (v, m, NULL, 30, 2.0, 1.0, 5.0e-2, 6.5, 0.0);
  for (guint i = 0; i < 30; i++)
    v[i] = -v[i];
  m[3] = 0.0;     /* skipped: dM/dv <= 0 */
  m[4] = -1e-5;   /* skipped */
  m[5] = NAN;     /* skipped */
  g_assert_true (efflux_mvfit_single (v, m, NULL, 30, &fit));
  efflux_test_assert_rel (fit.gamma, 6.5, 1e-6);
  g_assert_cmpuint (fit.n_used, ==, 27);
  g_assert_true (fit.errors_scaled);
  g_assert_cmpfloat (fit.gamma_err, <, 1e-8);

  /* too few channels */
  g_assert_false (efflux_mvfit_single (v, m, NULL, 2, &fit));
  g_assert_true (isnan (fit.gamma));
}

static void
test_single_noisy (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (42);
  double v[25], truth[25], m[25], e[25];
  int trial, in_gamma = 0, in_a = 0;
  double chi2_sum = 0.0;

  power_spectrum (v, truth, NULL, 25, 1.0, 1.0, 1.0e-3, 2.4, 0.0);
  for (trial = 0; trial < 200; trial++)
    {
      EffluxPowerLawFit fit;
      guint i;

      for (i = 0; i < 25; i++)
        {
          e[i] = 0.05 * truth[i];
          m[i] = truth[i] + efflux_rng_normal (rng, 0.0, e[i]);
        }
      g_assert_true (efflux_mvfit_single (v, m, e, 25, &fit));
      in_gamma += fabs (fit.gamma - 2.4) <= 3.0 * fit.gamma_err;
      in_a += fabs (fit.log10_a + 3.0) <= 3.0 * fit.log10_a_err;
      chi2_sum += fit.chi2 / fit.dof;
    }
  g_test_message ("200 noisy fits: gamma within 3 sigma %d, log A %d, mean chi2/dof %.3f",
                  in_gamma, in_a, chi2_sum / 200);
  /* 3 sigma holds with probability 0.9973: at most 4 misses in 200 are plausible */
  g_assert_cmpint (in_gamma, >=, 196);
  g_assert_cmpint (in_a, >=, 196);
  /* the error model is right: mean reduced chi2 near 1 (its spread over 200 fits is 0.02) */
  g_assert_cmpfloat_with_epsilon (chi2_sum / 200, 1.0, 0.08);
}

/* numpy.polyfit(x, y, deg, w=1/sigma, cov='unscaled') is the reference for the weighted least
 * squares: in log-log space for the mass spectrum, and a parabola as the ratio fit uses. */
static void
test_against_numpy_polyfit (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-mvfit");
  g_autoptr(EffluxRng) rng = efflux_rng_new (7);
  double v[18], m[18], e[18], x[18], y[18], sy[18];
  EffluxPowerLawFit fit;
  guint i;

  g_assert_nonnull (dir);
  power_spectrum (v, m, NULL, 18, 2.0, 1.5, 3.0e-3, 3.1, 0.0);
  for (i = 0; i < 18; i++)
    {
      e[i] = (0.03 + 0.01 * (i % 4)) * m[i];
      m[i] += efflux_rng_normal (rng, 0.0, e[i]);
      x[i] = log10 (v[i]);
      y[i] = log10 (m[i]);
      sy[i] = e[i] / (m[i] * G_LN10);
    }
  g_assert_true (efflux_mvfit_single (v, m, e, 18, &fit));

  {
    g_autofree char *path = write_columns (dir, "loglog.txt", x, y, sy, 18);
    const char *args[] = { "polyfit", path, "1", NULL };
    g_autoptr(GArray) ref = run_reference (args);

    if (ref != NULL)
      {
        g_assert_cmpuint (ref->len, ==, 6);
        /* numpy: y = c0 + c1 x with c1 = -gamma */
        efflux_test_assert_rel (fit.log10_a, g_array_index (ref, double, 0), 1e-10);
        efflux_test_assert_rel (fit.gamma, -g_array_index (ref, double, 1), 1e-10);
        efflux_test_assert_rel (fit.log10_a_err, sqrt (g_array_index (ref, double, 2)), 1e-9);
        efflux_test_assert_rel (fit.cov_log10a_gamma, -g_array_index (ref, double, 3), 1e-9);
        efflux_test_assert_rel (fit.gamma_err, sqrt (g_array_index (ref, double, 5)), 1e-9);
      }
    g_unlink (path);
  }

  /* a parabola with weights, through efflux_polyfit_weighted directly */
  {
    double u[12], r[12], s[12], coef[3], cov[9], chi2;
    guint used;
    g_autofree char *path = NULL;
    const char *args[] = { "polyfit", NULL, "2", NULL };
    g_autoptr(GArray) ref = NULL;

    for (i = 0; i < 12; i++)
      {
        u[i] = -8.0 + 1.3 * i;
        s[i] = 0.5 + 0.1 * i;
        r[i] = 12.0 - 0.7 * u[i] + 0.3 * u[i] * u[i] + efflux_rng_normal (rng, 0.0, s[i]);
      }
    g_assert_true (efflux_polyfit_weighted (u, r, s, 12, 2, coef, cov, &chi2, &used));
    g_assert_cmpuint (used, ==, 12);
    path = write_columns (dir, "parabola.txt", u, r, s, 12);
    args[1] = path;
    ref = run_reference (args);
    if (ref != NULL)
      {
        g_assert_cmpuint (ref->len, ==, 12);
        for (i = 0; i < 3; i++)
          efflux_test_assert_rel (coef[i], g_array_index (ref, double, i), 1e-10);
        for (i = 0; i < 9; i++)
          efflux_test_assert_rel (cov[i], g_array_index (ref, double, 3 + i), 1e-9);
      }
    g_unlink (path);
  }
  g_rmdir (dir);
}

/* ---- broken power law ------------------------------------------------------------------------ */

static void
broken_spectrum (double *v,
                 double *m,
                 guint   n,
                 double  vb,
                 double  ab,
                 double  g1,
                 double  g2)
{
  guint i;

  for (i = 0; i < n; i++)
    {
      v[i] = 1.0 + i;
      m[i] = ab * pow (v[i] / vb, v[i] < vb ? -g1 : -g2);
    }
}

static void
test_broken_exact (void)
{
  double v[40], m[40], e[40];
  EffluxBrokenPowerLawFit fit;
  guint i;

  /* REFERENCES.md 1.9: gamma ~ 1.5-2 below a break at 10-30 km/s, 3-7 above. */
  broken_spectrum (v, m, 40, 12.3, 4.0e-4, 1.8, 4.5);
  for (i = 0; i < 40; i++)
    e[i] = 0.05 * m[i];
  g_assert_true (efflux_mvfit_broken (v, m, e, 40, &fit));
  g_test_message ("exact: vb %.9g gamma1 %.9g gamma2 %.9g chi2 %.3g", fit.vb_kms, fit.gamma1,
                  fit.gamma2, fit.chi2);
  efflux_test_assert_rel (fit.vb_kms, 12.3, 1e-6);
  efflux_test_assert_rel (fit.gamma1, 1.8, 1e-6);
  efflux_test_assert_rel (fit.gamma2, 4.5, 1e-6);
  efflux_test_assert_rel (fit.log10_ab, log10 (4.0e-4), 1e-6);
  g_assert_cmpint (fit.dof, ==, 36);
  efflux_test_assert_rel (efflux_mvfit_broken_eval (&fit, 30.0), 4.0e-4 * pow (30.0 / 12.3, -4.5), 1e-5);
  efflux_test_assert_rel (efflux_mvfit_broken_eval (&fit, 3.0), 4.0e-4 * pow (3.0 / 12.3, -1.8), 1e-5);
  g_assert_true (fit.vb_bounded);
  g_assert_cmpfloat (fit.vb_lo, <, 12.3);
  g_assert_cmpfloat (fit.vb_hi, >, 12.3);

  /* too few channels */
  g_assert_false (efflux_mvfit_broken (v, m, e, 4, &fit));
}

static void
test_broken_noisy (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (1234);
  double v[40], truth[40], m[40], e[40];
  int trial;

  broken_spectrum (v, truth, 40, 15.6, 1.0e-4, 1.6, 5.0);
  for (trial = 0; trial < 10; trial++)
    {
      EffluxBrokenPowerLawFit fit;
      guint i;

      for (i = 0; i < 40; i++)
        {
          e[i] = 0.03 * truth[i];
          m[i] = truth[i] + efflux_rng_normal (rng, 0.0, e[i]);
        }
      g_assert_true (efflux_mvfit_broken (v, m, e, 40, &fit));
      g_test_message ("noisy %d: vb %.3f [%.3f, %.3f] gamma1 %.4f +- %.4f gamma2 %.4f +- %.4f "
                      "chi2/dof %.2f", trial, fit.vb_kms, fit.vb_lo, fit.vb_hi, fit.gamma1,
                      fit.gamma1_err, fit.gamma2, fit.gamma2_err, fit.chi2 / fit.dof);
      /* the brief's acceptance: v_b within one channel (1 km/s), slopes within 2% */
      g_assert_cmpfloat (fabs (fit.vb_kms - 15.6), <, 1.0);
      g_assert_cmpfloat (fabs (fit.gamma1 / 1.6 - 1.0), <, 0.02);
      g_assert_cmpfloat (fabs (fit.gamma2 / 5.0 - 1.0), <, 0.02);
      g_assert_true (fit.vb_lo <= fit.vb_kms && fit.vb_kms <= fit.vb_hi);
      g_assert_cmpfloat (fit.vb_err, >, 0.0);
    }
}

/* The 1-sigma errors mean what they say: over many seeded noisy spectra the truth lies inside
 * the v_b profile interval and within gamma +- gamma_err in about 68.3% of the fits (binomial sd
 * over 300 fits: 2.7%; accepted 60-77%). */
static void
test_broken_coverage (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (5);
  double v[40], truth[40], m[40], e[40];
  int trial, n = 300, in_vb = 0, in_g1 = 0, in_g2 = 0;

  broken_spectrum (v, truth, 40, 15.6, 1.0e-4, 1.6, 5.0);
  for (trial = 0; trial < n; trial++)
    {
      EffluxBrokenPowerLawFit fit;
      guint i;

      for (i = 0; i < 40; i++)
        {
          e[i] = 0.1 * truth[i];
          m[i] = truth[i] + efflux_rng_normal (rng, 0.0, e[i]);
        }
      g_assert_true (efflux_mvfit_broken (v, m, e, 40, &fit));
      in_vb += fit.vb_lo <= 15.6 && 15.6 <= fit.vb_hi;
      in_g1 += fabs (fit.gamma1 - 1.6) <= fit.gamma1_err;
      in_g2 += fabs (fit.gamma2 - 5.0) <= fit.gamma2_err;
    }
  g_test_message ("1-sigma coverage over %d fits: v_b %.3f, gamma1 %.3f, gamma2 %.3f", n,
                  in_vb / (double) n, in_g1 / (double) n, in_g2 / (double) n);
  g_assert_cmpfloat (in_vb / (double) n, >, 0.60);
  g_assert_cmpfloat (in_vb / (double) n, <, 0.77);
  g_assert_cmpfloat (in_g1 / (double) n, >, 0.60);
  g_assert_cmpfloat (in_g1 / (double) n, <, 0.77);
  g_assert_cmpfloat (in_g2 / (double) n, >, 0.60);
  g_assert_cmpfloat (in_g2 / (double) n, <, 0.77);
}

/* ---- hidden mass ----------------------------------------------------------------------------- */

static void
test_hidden_mass (void)
{
  EffluxPowerLawFit fit = { 0 };
  EffluxHiddenMass h;
  double a = 2.0e-3, g = 2.2, lo = 0.25, hi = 1.5;
  double exact = a * (pow (hi, 1.0 - g) - pow (lo, 1.0 - g)) / (1.0 - g);

  fit.gamma = g;
  fit.log10_a = log10 (a);
  fit.gamma_err = 0.1;
  fit.log10_a_err = 0.05;
  fit.cov_log10a_gamma = -0.003;

  g_assert_true (efflux_mvfit_hidden_mass (&fit, lo, hi, &h));
  efflux_test_assert_rel (h.mass_msun, exact, 1e-12);
  g_assert_cmpfloat (h.v_lo_kms, ==, lo);
  g_assert_cmpfloat (h.v_hi_kms, ==, hi);
  /* error: analytic derivatives of M = A (hi^(1-g) - lo^(1-g)) / (1-g):
   * dM/dlog10A = M ln 10; dM/dg = A [ -(hi^s ln hi - lo^s ln lo)/s + (hi^s - lo^s)/s^2 ], s=1-g */
  {
    double s = 1.0 - g;
    double dmda = exact * G_LN10;
    double dmdg = a * (-(pow (hi, s) * log (hi) - pow (lo, s) * log (lo)) / s
                       + (pow (hi, s) - pow (lo, s)) / (s * s));
    double var = dmda * dmda * 0.05 * 0.05 + dmdg * dmdg * 0.01 + 2.0 * dmda * dmdg * -0.003;

    efflux_test_assert_rel (h.mass_err_msun, sqrt (var), 1e-6);
  }

  /* gamma = 1: A ln(hi/lo) */
  fit.gamma = 1.0;
  g_assert_true (efflux_mvfit_hidden_mass (&fit, lo, hi, &h));
  efflux_test_assert_rel (h.mass_msun, a * log (hi / lo), 1e-14);
  fit.gamma = 1.0 + 1e-12;
  g_assert_true (efflux_mvfit_hidden_mass (&fit, lo, hi, &h));
  efflux_test_assert_rel (h.mass_msun, a * log (hi / lo), 1e-9);

  /* refused ranges */
  g_assert_false (efflux_mvfit_hidden_mass (&fit, 0.0, hi, &h));
  g_assert_false (efflux_mvfit_hidden_mass (&fit, hi, lo, &h));
  g_assert_true (isnan (h.mass_msun));

  /* From a fit: a single power law fitted above 2 km/s extrapolated into [0.5, 2] km/s gives the
   * integral of the true law there. */
  {
    double v[20], m[20], e[20];
    EffluxPowerLawFit f2;

    power_spectrum (v, m, e, 20, 2.5, 1.0, 1.0e-3, 1.7, 0.05);
    g_assert_true (efflux_mvfit_single (v, m, e, 20, &f2));
    g_assert_true (efflux_mvfit_hidden_mass (&f2, 0.5, 2.0, &h));
    efflux_test_assert_rel (h.mass_msun, 1.0e-3 * (pow (2.0, -0.7) - pow (0.5, -0.7)) / -0.7, 1e-6);
    g_assert_cmpfloat (h.mass_err_msun, >, 0.0);
  }
}

static int
compare_doubles (const void *a,
                 const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

/* ---- sampling -------------------------------------------------------------------------------- */

static void
test_rng_against_numpy (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (((guint64) 7 << 32) | 5u);
  g_autoptr(EffluxRng) rng2 = efflux_rng_new (((guint64) 7 << 32) | 5u);
  const char *args[] = { "mt19937", "5", "7", "6", NULL };
  g_autoptr(GArray) ref = run_reference (args);
  guint i;

  /* numpy.random.MT19937 with legacy init_by_array seeding [5, 7], and
   * numpy.random.RandomState([5, 7]).random_sample(): the same stream, bit for bit. */
  if (ref == NULL)
    return;
  g_assert_cmpuint (ref->len, ==, 12);
  for (i = 0; i < 6; i++)
    g_assert_cmpfloat ((double) efflux_rng_uint32 (rng), ==, g_array_index (ref, double, i));
  for (i = 0; i < 6; i++)
    g_assert_cmpfloat (efflux_rng_double (rng2), ==, g_array_index (ref, double, 6 + i));
}

static void
test_rng_distributions (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (99);
  const guint n = 400000;
  double sum = 0.0, sum2 = 0.0, sum4 = 0.0, lsum = 0.0, isum = 0.0, rsum = 0.0;
  double lo = 5.0 * G_PI / 180.0, hi = 85.0 * G_PI / 180.0;
  guint i, below = 0;

  for (i = 0; i < n; i++)
    {
      double z = efflux_rng_normal (rng, 0.0, 1.0);
      double l = efflux_rng_log_uniform (rng, 1.0, 1000.0);
      double iso = efflux_rng_inclination_isotropic (rng, 0.0, G_PI / 2.0);
      double r = efflux_rng_inclination_range (rng, lo, hi);
      double c = efflux_rng_inclination_isotropic (rng, lo, hi);

      sum += z;
      sum2 += z * z;
      sum4 += z * z * z * z;
      g_assert_true (l >= 1.0 && l < 1000.0);
      lsum += log10 (l);
      isum += iso;
      g_assert_true (r >= lo && r < hi);
      rsum += r;
      g_assert_true (c >= lo && c <= hi);
      below += cos (c) > cos (lo) - 0.5 * (cos (lo) - cos (hi));
    }
  /* normal: mean 0, variance 1, kurtosis 3 (standard errors 1/sqrt(n), sqrt(2/n), sqrt(96/n)) */
  g_assert_cmpfloat (fabs (sum / n), <, 4.0 / sqrt (n));
  g_assert_cmpfloat (fabs (sum2 / n - 1.0), <, 4.0 * sqrt (2.0 / n));
  g_assert_cmpfloat (fabs (sum4 / n - 3.0), <, 4.0 * sqrt (96.0 / n));
  /* log-uniform on [1, 1000]: log10 uniform on [0, 3], mean 1.5, sd 0.866 */
  g_assert_cmpfloat (fabs (lsum / n - 1.5), <, 4.0 * 0.866 / sqrt (n));
  /* REFERENCES.md 1.8 [D]: the mean i of isotropic orientations over [0, 90] deg is 1 rad
   * (integral of i sin i = 1); the sd of i is sqrt(pi - 2 - 1) = 0.3757. */
  g_test_message ("mean isotropic inclination %.5f rad", isum / n);
  g_assert_cmpfloat (fabs (isum / n - 1.0), <, 4.0 * 0.3757 / sqrt (n));
  /* range: uniform in i, mean (lo + hi)/2 */
  g_assert_cmpfloat (fabs (rsum / n - 0.5 * (lo + hi)), <, 4.0 * (hi - lo) / sqrt (12.0 * n));
  /* random within limits: uniform in cos i, so half the draws lie on each side of the middle
   * cos i (binomial sd 0.5 sqrt(n)) */
  g_assert_cmpfloat (fabs ((double) below - 0.5 * n), <, 4.0 * 0.5 * sqrt (n));
  g_assert_cmpfloat (EFFLUX_INCLINATION_RANDOM_MIN_DEG, ==, 5.0);
  g_assert_cmpfloat (EFFLUX_INCLINATION_RANDOM_MAX_DEG, ==, 85.0);

  /* determinism: the same seed gives the same stream */
  {
    g_autoptr(EffluxRng) a = efflux_rng_new (123456789012345);
    g_autoptr(EffluxRng) b = efflux_rng_new (123456789012345);

    for (i = 0; i < 100; i++)
      g_assert_cmpfloat (efflux_rng_normal (a, 1.0, 2.0), ==, efflux_rng_normal (b, 1.0, 2.0));
  }
}

static void
test_percentiles (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-pct");
  g_autoptr(EffluxRng) rng = efflux_rng_new (2024);
  double x[37], with_nan[39];
  g_autofree char *path = NULL;
  const char *args[] = { "percentile", NULL, "0", "16", "50", "84", "99.5", "100", NULL };
  static const double qs[] = { 0, 16, 50, 84, 99.5, 100 };
  g_autoptr(GArray) ref = NULL;
  EffluxSpread spread;
  guint i;

  g_assert_nonnull (dir);
  for (i = 0; i < 37; i++)
    {
      x[i] = efflux_rng_log_uniform (rng, 0.1, 100.0);
      with_nan[i] = x[i];
    }
  with_nan[37] = NAN;
  with_nan[38] = INFINITY;

  /* hand-computed: [3, 1, 2, 10] sorted 1 2 3 10; q = 16 -> h = 0.48 -> 1.48 (numpy 'linear') */
  {
    double small[] = { 3, 1, 2, 10 };

    g_assert_cmpfloat_with_epsilon (efflux_percentile (small, 4, 16.0), 1.48, 1e-15);
    g_assert_cmpfloat_with_epsilon (efflux_percentile (small, 4, 50.0), 2.5, 1e-15);
    g_assert_cmpfloat_with_epsilon (efflux_percentile (small, 4, 84.0), 6.64, 1e-14);
    g_assert_cmpfloat (small[0], ==, 3.0); /* not modified */
  }
  g_assert_true (isnan (efflux_percentile (x, 0, 50.0)));
  g_assert_true (isnan (efflux_percentile (x, 37, 101.0)));

  path = write_columns (dir, "values.txt", x, NULL, NULL, 37);
  args[1] = path;
  ref = run_reference (args);
  if (ref != NULL)
    {
      g_assert_cmpuint (ref->len, ==, G_N_ELEMENTS (qs));
      for (i = 0; i < G_N_ELEMENTS (qs); i++)
        {
          efflux_test_assert_rel (efflux_percentile (x, 37, qs[i]), g_array_index (ref, double, i), 1e-14);
          /* NaN and infinities are skipped */
          efflux_test_assert_rel (efflux_percentile (with_nan, 39, qs[i]), g_array_index (ref, double, i),
                                  1e-14);
        }
      g_assert_cmpuint (efflux_spread (with_nan, 39, &spread), ==, 37);
      efflux_test_assert_rel (spread.p16, g_array_index (ref, double, 1), 1e-14);
      efflux_test_assert_rel (spread.p50, g_array_index (ref, double, 2), 1e-14);
      efflux_test_assert_rel (spread.p84, g_array_index (ref, double, 3), 1e-14);
    }
  g_unlink (path);
  g_rmdir (dir);

  /* The selection (quickselect) against the definition on a fully sorted copy, with many ties
   * and all small sizes: position h = q/100 (m - 1), linear between neighbours. */
  for (guint n = 1; n <= 60; n++)
    {
      double vals[60], sorted[60];

      for (i = 0; i < n; i++)
        vals[i] = sorted[i] = floor (efflux_rng_uniform (rng, 0.0, 6.0));
      qsort (sorted, n, sizeof (double), compare_doubles);
      for (double q = 0.0; q <= 100.0; q += 2.5)
        {
          double h = q / 100.0 * (n - 1);
          guint j = (guint) floor (h);
          double want = j + 1 < n ? sorted[j] + (h - j) * (sorted[j + 1] - sorted[j]) : sorted[j];

          g_assert_cmpfloat_with_epsilon (efflux_percentile (vals, n, q), want, 1e-12);
        }
    }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);

  g_test_add_func ("/mvfit/single/exact", test_single_exact);
  g_test_add_func ("/mvfit/single/noisy", test_single_noisy);
  g_test_add_func ("/mvfit/single/numpy-polyfit", test_against_numpy_polyfit);
  g_test_add_func ("/mvfit/broken/exact", test_broken_exact);
  g_test_add_func ("/mvfit/broken/noisy", test_broken_noisy);
  g_test_add_func ("/mvfit/broken/coverage", test_broken_coverage);
  g_test_add_func ("/mvfit/hidden-mass", test_hidden_mass);
  g_test_add_func ("/sampling/rng-numpy", test_rng_against_numpy);
  g_test_add_func ("/sampling/distributions", test_rng_distributions);
  g_test_add_func ("/sampling/percentiles", test_percentiles);

  return g_test_run ();
}
