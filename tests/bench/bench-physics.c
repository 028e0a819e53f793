/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Timings of the physics kernels: LTE column per K km/s, tau from the isotope ratio, the
 * per-lobe ratio fit, the mass-spectrum fits and percentiles. The numpy equivalents (weighted
 * numpy.polyfit, numpy.percentile) are timed by bench_physics_ref.py beside this file, run with
 * EFFLUX_PYTHON, for comparison. Prints its figures; run with `meson test -C BUILD --benchmark`. */

#include "efflux-lines.h"
#include "efflux-lte.h"
#include "efflux-mvfit.h"
#include "efflux-opacity.h"
#include "efflux-sampling.h"

#include <math.h>

static volatile double sink;

static double
now (void)
{
  return g_get_monotonic_time () * 1e-6;
}

static void
run_numpy_reference (void)
{
  const char *python = g_getenv ("EFFLUX_PYTHON");
  g_autofree char *script = g_test_build_filename (G_TEST_DIST, "bench", "bench_physics_ref.py",
                                                NULL);
  const char *argv[] = { python, script, NULL };
  g_autoptr(GError) error = NULL;
  g_autofree char *out = NULL;
  int status = 0;

  if (python == NULL || *python == '\0')
    {
      g_print ("numpy reference: EFFLUX_PYTHON not set, not run\n");
      return;
    }
  if (!g_spawn_sync (NULL, (char **) argv, NULL, G_SPAWN_STDERR_TO_DEV_NULL, NULL, NULL, &out,
                     NULL, &status, &error) || !g_spawn_check_wait_status (status, &error))
    {
      g_print ("numpy reference failed: %s\n", error->message);
      return;
    }
  g_print ("%s", out);
}

int
main (int    argc,
      char **argv)
{
  const EffluxLine *co21;
  g_autoptr(EffluxRng) rng = efflux_rng_new (1);
  double t0, t, acc = 0.0;
  int i, reps;

  g_test_init (&argc, &argv, NULL);
  co21 = efflux_line_lookup ("12CO 2-1");

  /* column per K km/s (partition-function sum included) */
  reps = 200000;
  t0 = now ();
  for (i = 0; i < reps; i++)
    acc += efflux_lte_column_per_kkms (co21, 10.0 + (i % 190), 2.7255);
  t = now () - t0;
  g_print ("lte column per K km/s (12CO 2-1, Tex 10-200 K): %.3f us/call\n", t / reps * 1e6);

  reps = 200000;
  t0 = now ();
  for (i = 0; i < reps; i++)
    acc += efflux_tau_from_ratio (1.5 + 60.0 * (i % 997) / 997.0, 62.0);
  t = now () - t0;
  g_print ("tau from 12CO/13CO ratio (bracketed bisection-Newton): %.3f us/call\n", t / reps * 1e6);

  /* the per-lobe ratio fit, 256 channels */
  {
    double v[256], s12[256], s13[256], e12[256], e13[256];
    EffluxRatioParams params = { 62.0, 0.0, 3.0, 2 };

    for (i = 0; i < 256; i++)
      {
        double u = -12.8 + 0.1 * i;

        v[i] = u;
        s13[i] = 20.0 * exp (-0.5 * u * u / 4.0) + efflux_rng_normal (rng, 0.0, 0.1);
        s12[i] = (8.0 + 0.6 * u * u) * 20.0 * exp (-0.5 * u * u / 4.0)
                 + efflux_rng_normal (rng, 0.0, 0.1);
        e12[i] = e13[i] = 0.1;
      }
    reps = 2000;
    t0 = now ();
    for (i = 0; i < reps; i++)
      {
        EffluxRatioFit *fit = efflux_ratio_fit_new (v, s12, s13, e12, e13, 256, &params, NULL);

        acc += fit->ctau[100];
        efflux_ratio_fit_free (fit);
      }
    t = now () - t0;
    g_print ("ratio fit + C_tau, 256 channels: %.1f us/lobe\n", t / reps * 1e6);
  }

  /* mass-spectrum fits, 64 channels */
  {
    double v[64], m[64], e[64];
    EffluxPowerLawFit single;
    EffluxBrokenPowerLawFit broken;

    for (i = 0; i < 64; i++)
      {
        v[i] = 1.0 + 0.5 * i;
        m[i] = 1e-3 * pow (v[i] / 10.0, v[i] < 10.0 ? -1.8 : -4.0);
        e[i] = 0.05 * m[i];
        m[i] += efflux_rng_normal (rng, 0.0, e[i]);
      }
    reps = 20000;
    t0 = now ();
    for (i = 0; i < reps; i++)
      {
        efflux_mvfit_single (v, m, e, 64, &single);
        acc += single.gamma;
      }
    t = now () - t0;
    g_print ("single power-law fit, 64 channels: %.2f us/fit\n", t / reps * 1e6);

    reps = 50;
    t0 = now ();
    for (i = 0; i < reps; i++)
      {
        efflux_mvfit_broken (v, m, e, 64, &broken);
        acc += broken.vb_kms;
      }
    t = now () - t0;
    g_print ("broken power-law fit (%d-point grid + refinement + profile), 64 channels: "
             "%.2f ms/fit\n", EFFLUX_MVFIT_BREAK_GRID, t / reps * 1e3);
  }

  /* percentiles of 1e6 Monte Carlo draws */
  {
    const gsize n = 1000000;
    g_autofree double *x = g_new (double, n);
    EffluxSpread spread;
    gsize k;

    for (k = 0; k < n; k++)
      x[k] = efflux_rng_normal (rng, 0.0, 1.0);
    t0 = now ();
    efflux_spread (x, n, &spread);
    t = now () - t0;
    acc += spread.p50;
    g_print ("16/50/84 percentiles of 1e6 values: %.1f ms\n", t * 1e3);

    t0 = now ();
    for (k = 0; k < n; k++)
      acc += efflux_rng_inclination_isotropic (rng, 5.0 * G_PI / 180.0, 85.0 * G_PI / 180.0);
    t = now () - t0;
    g_print ("isotropic inclination draws: %.1f ns/draw\n", t / n * 1e9);
  }

  sink = acc;
  run_numpy_reference ();
  return 0;
}
