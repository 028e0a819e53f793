/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Deterministic Monte Carlo helpers. The generator is GLib's GRand, the Mersenne Twister MT19937
 * (Matsumoto & Nishimura 1998), seeded with init_by_array from the two 32-bit halves of a 64-bit
 * seed (low word first), so that a given seed gives the same sequence on every machine and in
 * numpy (numpy.random.RandomState([lo, hi]) is the same generator, checked in
 * tests/test-mvfit.c). Uniform doubles use 53 random bits from two 32-bit outputs, the same
 * construction as numpy's RandomState.random_sample: ((a >> 5) 2^26 + (b >> 6)) / 2^53, in
 * [0, 1). Not thread-safe: one EffluxRng per thread. */
typedef struct _EffluxRng EffluxRng;

EffluxRng *efflux_rng_new          (guint64    seed);
void       efflux_rng_free         (EffluxRng *rng);
/* Raw 32-bit output of MT19937. */
guint32    efflux_rng_uint32       (EffluxRng *rng);
/* Uniform in [0, 1). */
double     efflux_rng_double       (EffluxRng *rng);
/* Uniform in [a, b). */
double     efflux_rng_uniform      (EffluxRng *rng,
                                    double     a,
                                    double     b);
/* Log-uniform in [a, b), 0 < a < b: exp(uniform(ln a, ln b)). */
double     efflux_rng_log_uniform  (EffluxRng *rng,
                                    double     a,
                                    double     b);
/* Normal deviate by the Marsaglia polar method (Marsaglia & Bray 1964): pairs are drawn, the
 * second is kept for the next call. */
double     efflux_rng_normal       (EffluxRng *rng,
                                    double     mean,
                                    double     sigma);

/* Inclination i (radians, from the line of sight) for the dossier's inclination modes:
 * `range`: uniform in i between lo and hi;
 * `random`: isotropic orientations, i.e. uniform in cos i, restricted to [lo, hi]:
 *   i = acos(cos lo - u (cos lo - cos hi)).
 * Without limits `random` uses EFFLUX_INCLINATION_RANDOM_MIN/MAX_DEG = [5, 85] deg: outside it the
 * corrections diverge (1/cos i and the force factor sin i / cos^2 i at 90 deg, t_dyn's
 * cos i / sin i at 0); at 85 deg the force factor is 131 and the momentum factor 11.5. */
#define EFFLUX_INCLINATION_RANDOM_MIN_DEG 5.0
#define EFFLUX_INCLINATION_RANDOM_MAX_DEG 85.0

double     efflux_rng_inclination_range     (EffluxRng *rng,
                                             double     lo_rad,
                                             double     hi_rad);
double     efflux_rng_inclination_isotropic (EffluxRng *rng,
                                             double     lo_rad,
                                             double     hi_rad);

/* Percentile q (0..100) of the finite values of x (NaN and infinities are skipped), with linear
 * interpolation between order statistics: position q/100 (m - 1) in the sorted values, as
 * numpy.percentile's default method 'linear'. NaN when no value is finite. x is not modified. */
double     efflux_percentile       (const double *x,
                                    gsize         n,
                                    double        q);

/* The 16th, 50th and 84th percentiles at once (one sort). Returns the number of finite values. */
typedef struct
{
  double p16;
  double p50;
  double p84;
} EffluxSpread;

gsize      efflux_spread           (const double *x,
                                    gsize         n,
                                    EffluxSpread *out);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxRng, efflux_rng_free)

G_END_DECLS
