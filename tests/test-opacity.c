/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The per-channel opacity correction from the 12CO/13CO ratio (REFERENCES.md 1.5, 4.8). */

#include "efflux-error.h"
#include "efflux-lte.h"
#include "efflux-opacity.h"
#include "efflux-sampling.h"

#include <math.h>
#include <string.h>

#define X62 62.0

static const EffluxRatioParams default_params = { X62, 5.0, 3.0, 2 };

/* Channels at v = vsys + u, u = -nhalf..nhalf km/s; 13CO is a Gaussian of peak `peak13` and
 * width `w13` (so it drops below 3 sigma in the wings), 12CO = R(u) x 13CO. */
typedef struct
{
  guint  n;
  double v[64], s12[64], s13[64], e12[64], e13[64];
} Channels;

static void
make_channels (Channels *c,
               int       nhalf,
               double    vsys,
               double    peak13,
               double    w13,
               double    sigma,
               double (*ratio) (double u))
{
  int k;

  c->n = 0;
  for (k = -nhalf; k <= nhalf; k++)
    {
      double u = k;
      double t13 = peak13 * exp (-0.5 * u * u / (w13 * w13));

      c->v[c->n] = vsys + u;
      c->s13[c->n] = t13;
      c->s12[c->n] = ratio (u) * t13;
      c->e13[c->n] = sigma;
      c->e12[c->n] = sigma;
      c->n++;
    }
}

static double
parabola (double u)
{
  return 10.0 + 0.5 * u * u;
}

static void
test_parabola_exact (void)
{
  Channels c;
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxRatioFit) fit = NULL;
  guint k, n_det = 0;

  /* 13CO peak 10 with sigma 0.1: detected (>= 0.3) while exp(-u^2/8) >= 0.03, i.e. |u| <= 5. */
  make_channels (&c, 14, 5.0, 10.0, 2.0, 0.1, parabola);
  fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &default_params, &error);
  g_assert_no_error (error);
  g_assert_nonnull (fit);

  g_assert_cmpint (fit->order, ==, 2);
  g_assert_null (fit->message);
  /* exact data: the coefficients of 10 + 0.5 u^2 and chi2 = 0 */
  g_assert_cmpfloat_with_epsilon (fit->coef[0], 10.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (fit->coef[1], 0.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (fit->coef[2], 0.5, 1e-10);
  g_assert_cmpfloat (fit->chi2, <, 1e-12);
  g_assert_cmpfloat (fit->r_floor, ==, 10.0);
  g_assert_cmpfloat (fit->v_detected_min, ==, 0.0);
  g_assert_cmpfloat (fit->v_detected_max, ==, 10.0);

  for (k = 0; k < c.n; k++)
    {
      double u = c.v[k] - 5.0;
      double rtrue = parabola (u);

      if (fabs (u) <= 5.0)
        {
          g_assert_true (fit->flags[k] & EFFLUX_RATIO_DETECTED);
          g_assert_false (fit->flags[k] & EFFLUX_RATIO_EXTRAPOLATED);
          g_assert_cmpfloat_with_epsilon (fit->ratio[k], rtrue, 1e-12 * rtrue);
          n_det++;
        }
      else
        {
          g_assert_true (fit->flags[k] & EFFLUX_RATIO_EXTRAPOLATED);
          g_assert_true (isnan (fit->ratio[k]));
        }
      g_assert_cmpfloat (fabs (fit->ratio_fit[k] - rtrue), <, 1e-8);
      g_assert_cmpfloat (fabs (efflux_ratio_fit_eval (fit, c.v[k]) - fit->ratio_fit[k]), <,
                         1e-12);

      /* 10 + 0.5 u^2 >= 62 for |u| >= 10.2: no correction there (REFERENCES.md 1.5) */
      if (fabs (u) >= 11.0)
        {
          g_assert_true (fit->flags[k] & EFFLUX_RATIO_NO_CORRECTION);
          g_assert_cmpfloat (fit->tau[k], ==, 0.0);
          g_assert_cmpfloat (fit->ctau[k], ==, 1.0);
        }
      else
        {
          double tau = efflux_tau_from_ratio (rtrue, X62);

          g_assert_false (fit->flags[k] & EFFLUX_RATIO_NO_CORRECTION);
          g_assert_cmpfloat (fabs (fit->tau[k] / tau - 1.0), <, 1e-7);
          g_assert_cmpfloat (fabs (fit->ctau[k] / efflux_opacity_correction (tau) - 1.0), <,
                             1e-7);
        }
    }
  g_assert_cmpuint (n_det, ==, 11);
  g_assert_cmpuint (fit->n_detected, ==, 11);
  g_assert_cmpint (fit->dof, ==, 8);

  /* At the systemic velocity R = 10: REFERENCES.md 4.8 [C] gives tau = 6.5222, C = 6.5318. */
  k = 14;
  g_assert_cmpfloat (c.v[k], ==, 5.0);
  g_assert_cmpfloat_with_epsilon (fit->tau[k], 6.5222, 0.00005);
  g_assert_cmpfloat_with_epsilon (fit->ctau[k], 6.5318, 0.00005);
}

static double
tilted (double u)
{
  return 30.0 - 2.0 * u + 0.25 * u * u;
}

/* Weighted fit on noisy ratios (seeded): the coefficients within 3 sigma of the truth. Weights: sigma_R = R sqrt((s12/S12)^2 + (s13/S13)^2). */
static void
test_parabola_noisy (void)
{
  g_autoptr(EffluxRng) rng = efflux_rng_new (20260401);
  EffluxRatioParams params = { X62, -3.0, 3.0, 2 };
  Channels c;
  int trial, n_within = 0;

  for (trial = 0; trial < 100; trial++)
    {
      g_autoptr(GError) error = NULL;
      g_autoptr(EffluxRatioFit) fit = NULL;
      guint k;
      int i;
      gboolean ok = TRUE;

      make_channels (&c, 10, -3.0, 40.0, 3.0, 0.05, tilted);
      for (k = 0; k < c.n; k++)
        {
          c.s12[k] += efflux_rng_normal (rng, 0.0, c.e12[k]);
          c.s13[k] += efflux_rng_normal (rng, 0.0, c.e13[k]);
        }
      fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params, &error);
      g_assert_no_error (error);
      g_assert_cmpint (fit->order, ==, 2);
      for (i = 0; i < 3; i++)
        {
          double truth = i == 0 ? 30.0 : i == 1 ? -2.0 : 0.25;
          double sig = sqrt (fit->cov[i][i]);

          g_assert_cmpfloat (sig, >, 0.0);
          if (fabs (fit->coef[i] - truth) > 3.0 * sig)
            ok = FALSE;
        }
      n_within += ok;
      /* eval_err is the propagated polynomial error: at u = 0 it is sqrt(cov00) */
      g_assert_cmpfloat_with_epsilon (efflux_ratio_fit_eval_err (fit, -3.0),
                                      sqrt (fit->cov[0][0]), 1e-12);
    }
  g_test_message ("%d of 100 noisy fits have all three coefficients within 3 sigma", n_within);
  /* 3 sigma on each of 3 coefficients: P(all within) >= 0.99 for Gaussian errors. The ratio's
   * first-order error propagation is biased in the edge channels, where 13CO is near 3 sigma
   * (2000 trials of this set-up: 98.95% within), so up to 4 misses in 100 are accepted. */
  g_assert_cmpint (n_within, >=, 96);
}

static double
constant_ten (double u)
{
  return 10.0;
}

static void
test_fallback_orders (void)
{
  const EffluxRatioParams params0 = { X62, 0.0, 3.0, 2 };
  Channels c;
  guint k;

  /* 13CO width 0.6 km/s, peak 10, sigma 0.5 (3 sigma = 1.5): exp(-u^2/0.72) >= 0.15 only at
   * u = 0 and +-1 -> 3 channels: order 2. Lower the peak so that fewer channels pass. */
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;

    make_channels (&c, 6, 0.0, 10.0, 0.6, 0.5, constant_ten);
    fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
    g_assert_no_error (error);
    g_assert_cmpuint (fit->n_detected, ==, 3);
    g_assert_cmpint (fit->order, ==, 2);
  }
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;

    /* two detected channels (u = 0 and u = 1 only: remove the u = -1 detection) */
    make_channels (&c, 6, 0.0, 10.0, 0.6, 0.5, constant_ten);
    c.s13[5] = 0.1;
    c.s12[5] = 1.0;
    c.s12[7] = 11.0 * c.s13[7]; /* ratio 11 at u = +1, 10 at u = 0: slope 1 per km/s */
    fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
    g_assert_no_error (error);
    g_assert_cmpuint (fit->n_detected, ==, 2);
    g_assert_cmpint (fit->order, ==, 1);
    g_assert_cmpfloat_with_epsilon (fit->coef[0], 10.0, 1e-10);
    g_assert_cmpfloat_with_epsilon (fit->coef[1], 1.0, 1e-10);
    g_assert_cmpfloat (fit->coef[2], ==, 0.0);
    g_assert_nonnull (fit->message);
    g_assert_nonnull (strstr (fit->message, "order 1 instead of 2"));
    /* the straight line extrapolates: R(u = 5) = 15 */
    g_assert_cmpfloat_with_epsilon (fit->ratio_fit[11], 15.0, 1e-9);
    g_assert_true (fit->flags[11] & EFFLUX_RATIO_EXTRAPOLATED);
  }
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;

    /* one detected channel: a constant, the measured ratio, everywhere; its error is the
     * propagated ratio error R sqrt((s12/S12)^2 + (s13/S13)^2) */
    make_channels (&c, 6, 0.0, 10.0, 0.6, 0.5, constant_ten);
    c.s13[5] = c.s13[7] = 0.1;
    fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
    g_assert_no_error (error);
    g_assert_cmpuint (fit->n_detected, ==, 1);
    g_assert_cmpint (fit->order, ==, 0);
    g_assert_nonnull (strstr (fit->message, "order 0 instead of 2"));
    g_assert_cmpfloat_with_epsilon (efflux_ratio_fit_eval_err (fit, 3.0),
                                    10.0 * hypot (0.5 / 100.0, 0.5 / 10.0), 1e-12);
    for (k = 0; k < c.n; k++)
      {
        g_assert_cmpfloat_with_epsilon (fit->ratio_fit[k], 10.0, 1e-12);
        /* REFERENCES.md 4.8 [C]: R = 10, X = 62 -> C_tau = 6.5318 */
        g_assert_cmpfloat_with_epsilon (fit->ctau[k], 6.5318, 0.00005);
      }
  }
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;

    /* no 13CO at all: no fit, no correction, not an error */
    make_channels (&c, 6, 0.0, 1.0, 0.6, 0.5, constant_ten);
    fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
    g_assert_no_error (error);
    g_assert_cmpuint (fit->n_detected, ==, 0);
    g_assert_cmpint (fit->order, ==, -1);
    g_assert_nonnull (strstr (fit->message, "not detected"));
    g_assert_true (isnan (efflux_ratio_fit_eval (fit, 0.0)));
    for (k = 0; k < c.n; k++)
      {
        g_assert_cmpuint (fit->flags[k], ==, EFFLUX_RATIO_NO_CORRECTION);
        g_assert_cmpfloat (fit->ctau[k], ==, 1.0);
        g_assert_cmpfloat (fit->tau[k], ==, 0.0);
      }
  }
}

static double
falling (double u)
{
  return 20.0 - 2.0 * u * u;
}

static void
test_clamp (void)
{
  const EffluxRatioParams params0 = { X62, 0.0, 3.0, 2 };
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxRatioFit) fit = NULL;
  Channels c;
  guint k;

  /* Detected at |u| <= 2 (ratios 12..20); the parabola 20 - 2u^2 is <= 1 for |u| >= 3.08:
   * clamped to the smallest detected ratio, 12, and said so. */
  make_channels (&c, 6, 0.0, 10.0, 1.0, 0.3, falling);
  fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (fit->n_detected, ==, 5);
  g_assert_cmpfloat_with_epsilon (fit->r_floor, 12.0, 1e-9);
  g_assert_nonnull (fit->message);
  g_assert_nonnull (strstr (fit->message, "clamped"));
  for (k = 0; k < c.n; k++)
    {
      double u = c.v[k];

      if (fabs (u) >= 4.0)
        {
          g_assert_true (fit->flags[k] & EFFLUX_RATIO_CLAMPED);
          g_assert_cmpfloat_with_epsilon (fit->ratio_fit[k], 12.0, 1e-9);
          g_assert_cmpfloat_with_epsilon (efflux_ratio_fit_eval (fit, u), 12.0, 1e-9);
          g_assert_cmpfloat (fabs (fit->tau[k] / efflux_tau_from_ratio (12.0, X62) - 1.0), <,
                             1e-7);
        }
      else
        g_assert_false (fit->flags[k] & EFFLUX_RATIO_CLAMPED);
    }
}

static void
test_invalid (void)
{
  const EffluxRatioParams params0 = { X62, 0.0, 3.0, 2 };
  Channels c;
  EffluxRatioParams p = params0;

  make_channels (&c, 3, 0.0, 10.0, 1.0, 0.3, parabola);
  {
    g_autoptr(GError) error = NULL;

    p.isotope_ratio = 1.0;
    g_assert_null (efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &p, &error));
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
    g_assert_nonnull (strstr (error->message, "isotope-ratio"));
  }
  {
    g_autoptr(GError) error = NULL;

    p = params0;
    p.max_order = 3;
    g_assert_null (efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &p, &error));
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  }
  {
    g_autoptr(GError) error = NULL;

    g_assert_null (efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, 0, &params0,
                                         &error));
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  }
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;

    /* NaN channels are simply not detected; negative 12CO likewise */
    c.s13[3] = NAN;
    c.s12[2] = -1.0;
    fit = efflux_ratio_fit_new (c.v, c.s12, c.s13, c.e12, c.e13, c.n, &params0, &error);
    g_assert_no_error (error);
    g_assert_false (fit->flags[3] & EFFLUX_RATIO_DETECTED);
    g_assert_false (fit->flags[2] & EFFLUX_RATIO_DETECTED);
    g_assert_cmpuint (fit->n_detected, ==, 3);
  }
  {
    g_autoptr(GError) error = NULL;
    g_autoptr(EffluxRatioFit) fit = NULL;
    double v[3] = { 1.0, 1.0, 1.0 }, s12[3] = { 20, 22, 24 }, s13[3] = { 2, 2, 2 };
    double e[3] = { 0.1, 0.1, 0.1 };

    double sw = 0.0, swr = 0.0;
    guint k;

    /* three detections at one velocity cannot fix a slope: a constant, their weighted mean with
     * weights 1/sigma_R^2, sigma_R = R hypot(0.1/S12, 0.1/S13) */
    fit = efflux_ratio_fit_new (v, s12, s13, e, e, 3, &params0, &error);
    g_assert_no_error (error);
    g_assert_cmpint (fit->order, ==, 0);
    g_assert_nonnull (strstr (fit->message, "do not determine"));
    for (k = 0; k < 3; k++)
      {
        double r = s12[k] / s13[k], sr = r * hypot (0.1 / s12[k], 0.1 / s13[k]);

        sw += 1.0 / (sr * sr);
        swr += r / (sr * sr);
      }
    g_assert_cmpfloat_with_epsilon (fit->coef[0], swr / sw, 1e-12);
    g_assert_cmpfloat_with_epsilon (fit->cov[0][0], 1.0 / sw, 1e-15);
  }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);

  g_test_add_func ("/opacity/parabola-exact", test_parabola_exact);
  g_test_add_func ("/opacity/parabola-noisy", test_parabola_noisy);
  g_test_add_func ("/opacity/fallback-orders", test_fallback_orders);
  g_test_add_func ("/opacity/clamp", test_clamp);
  g_test_add_func ("/opacity/invalid", test_invalid);

  return g_test_run ();
}
