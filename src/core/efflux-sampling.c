/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Seeded random deviates, inclination distributions and percentiles. */

#include "efflux-sampling.h"

#include <math.h>

struct _EffluxRng
{
  GRand    *rand;
  gboolean  have_spare;
  double    spare;
};

EffluxRng *
efflux_rng_new (guint64 seed)
{
  EffluxRng *rng = g_new0 (EffluxRng, 1);
  guint32 key[2] = { (guint32) (seed & 0xffffffffu), (guint32) (seed >> 32) };

  /* init_by_array is not affected by G_RANDOM_VERSION (only g_rand_set_seed is). */
  rng->rand = g_rand_new_with_seed_array (key, 2);
  return rng;
}

void
efflux_rng_free (EffluxRng *rng)
{
  if (rng == NULL)
    return;
  g_rand_free (rng->rand);
  g_free (rng);
}

guint32
efflux_rng_uint32 (EffluxRng *rng)
{
  return g_rand_int (rng->rand);
}

double
efflux_rng_double (EffluxRng *rng)
{
  guint32 a = g_rand_int (rng->rand) >> 5;
  guint32 b = g_rand_int (rng->rand) >> 6;

  return (a * 67108864.0 + b) / 9007199254740992.0;
}

double
efflux_rng_uniform (EffluxRng *rng,
                    double     a,
                    double     b)
{
  return a + (b - a) * efflux_rng_double (rng);
}

double
efflux_rng_log_uniform (EffluxRng *rng,
                        double     a,
                        double     b)
{
  g_return_val_if_fail (a > 0.0 && b > 0.0, NAN);

  return exp (efflux_rng_uniform (rng, log (a), log (b)));
}

double
efflux_rng_normal (EffluxRng *rng,
                   double     mean,
                   double     sigma)
{
  double x, y, s, f;

  if (rng->have_spare)
    {
      rng->have_spare = FALSE;
      return mean + sigma * rng->spare;
    }

  do
    {
      x = 2.0 * efflux_rng_double (rng) - 1.0;
      y = 2.0 * efflux_rng_double (rng) - 1.0;
      s = x * x + y * y;
    }
  while (s >= 1.0 || s == 0.0);

  f = sqrt (-2.0 * log (s) / s);
  rng->spare = y * f;
  rng->have_spare = TRUE;
  return mean + sigma * x * f;
}

double
efflux_rng_inclination_range (EffluxRng *rng,
                              double     lo_rad,
                              double     hi_rad)
{
  return efflux_rng_uniform (rng, lo_rad, hi_rad);
}

double
efflux_rng_inclination_isotropic (EffluxRng *rng,
                                  double     lo_rad,
                                  double     hi_rad)
{
  double c_lo = cos (lo_rad), c_hi = cos (hi_rad);

  return acos (c_lo - efflux_rng_double (rng) * (c_lo - c_hi));
}

/* Copy of the finite values; *m gets their number. */
static double *
finite_copy (const double *x,
             gsize         n,
             gsize        *m)
{
  double *s = g_new (double, MAX (n, 1));
  gsize i, k = 0;

  for (i = 0; i < n; i++)
    if (isfinite (x[i]))
      s[k++] = x[i];
  *m = k;
  return s;
}

/* Quickselect (Hoare 1961) with a median-of-three pivot: afterwards s[k] holds the value it would
 * hold in sorted order, with nothing larger before it and nothing smaller after it. O(m) on
 * average, against O(m log m) for a sort. */
static void
select_kth (double *s,
            gsize   m,
            gsize   k)
{
  gsize lo = 0, hi = m - 1;

  while (hi > lo)
    {
      gsize mid = lo + (hi - lo) / 2, i, j;
      double pivot, a = s[lo], b = s[mid], c = s[hi];

      pivot = a < b ? (b < c ? b : (a < c ? c : a)) : (a < c ? a : (b < c ? c : b));
      i = lo;
      j = hi;
      while (i <= j)
        {
          while (s[i] < pivot)
            i++;
          while (s[j] > pivot)
            j--;
          if (i <= j)
            {
              double t = s[i];

              s[i] = s[j];
              s[j] = t;
              i++;
              if (j == 0)
                break;
              j--;
            }
        }
      /* now s[lo..j] <= pivot <= s[i..hi], and any s[j+1..i-1] equal the pivot */
      if (k <= j && j != G_MAXSIZE)
        hi = j;
      else if (k >= i)
        lo = i;
      else
        return;
    }
}

/* numpy 'linear': h = q/100 (m - 1), value = s[floor h] + (h - floor h)(s[floor h + 1] - s[floor h])
 * where s is the sorted sample. s is partially reordered. */
static double
percentile_select (double *s,
                   gsize   m,
                   double  q)
{
  double h, lo, below, above;
  gsize j, i;

  if (m == 0 || !(q >= 0.0 && q <= 100.0))
    return NAN;
  h = q / 100.0 * (double) (m - 1);
  lo = floor (h);
  j = (gsize) lo;
  select_kth (s, m, j);
  below = s[j];
  if (j + 1 >= m || h == lo)
    return below;
  above = s[j + 1];
  for (i = j + 2; i < m; i++)
    if (s[i] < above)
      above = s[i];
  return below + (h - lo) * (above - below);
}

double
efflux_percentile (const double *x,
                   gsize         n,
                   double        q)
{
  g_autofree double *s = NULL;
  gsize m;

  g_return_val_if_fail (x != NULL || n == 0, NAN);

  s = finite_copy (x, n, &m);
  return percentile_select (s, m, q);
}

gsize
efflux_spread (const double *x,
               gsize         n,
               EffluxSpread *out)
{
  g_autofree double *s = NULL;
  gsize m;

  g_return_val_if_fail ((x != NULL || n == 0) && out != NULL, 0);

  s = finite_copy (x, n, &m);
  out->p16 = percentile_select (s, m, 16.0);
  out->p50 = percentile_select (s, m, 50.0);
  out->p84 = percentile_select (s, m, 84.0);
  return m;
}
