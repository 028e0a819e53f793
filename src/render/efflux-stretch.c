/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-stretch"

#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-stretch.h"

static const char *stretch_names[EFFLUX_N_STRETCHES] = {
  [EFFLUX_STRETCH_LINEAR] = "linear",
  [EFFLUX_STRETCH_SQRT] = "sqrt",
  [EFFLUX_STRETCH_LOG] = "log",
  [EFFLUX_STRETCH_ASINH] = "asinh",
};

const char *
efflux_stretch_kind_to_string (EffluxStretchKind kind)
{
  g_return_val_if_fail ((int) kind >= 0 && kind < EFFLUX_N_STRETCHES, NULL);
  return stretch_names[kind];
}

gboolean
efflux_stretch_kind_from_string (const char        *name,
                                 EffluxStretchKind *kind)
{
  for (int i = 0; i < EFFLUX_N_STRETCHES; i++)
    if (g_strcmp0 (name, stretch_names[i]) == 0)
      {
        *kind = (EffluxStretchKind) i;
        return TRUE;
      }
  return FALSE;
}

double
efflux_stretch_apply (EffluxStretchKind kind,
                      double            value,
                      double            lo,
                      double            hi)
{
  double x;

  if (isnan (value) || isnan (lo) || isnan (hi))
    return NAN;
  if (!(hi > lo))
    return value <= lo ? 0.0 : 1.0;
  x = (value - lo) / (hi - lo);
  x = CLAMP (x, 0.0, 1.0);

  switch (kind)
    {
    case EFFLUX_STRETCH_LINEAR:
      return x;
    case EFFLUX_STRETCH_SQRT:
      return sqrt (x);
    case EFFLUX_STRETCH_LOG:
      return log1p (EFFLUX_STRETCH_LOG_A * x) / log1p (EFFLUX_STRETCH_LOG_A);
    case EFFLUX_STRETCH_ASINH:
      return asinh (x / EFFLUX_STRETCH_ASINH_B) / asinh (1.0 / EFFLUX_STRETCH_ASINH_B);
    case EFFLUX_N_STRETCHES:
    default:
      g_return_val_if_reached (x);
    }
}

/* Quickselect (Hoare partition, median-of-three pivot): afterwards v[k] holds the k-th smallest
 * value, everything before it is <= and everything after it is >=. */
static void
select_kth (float *v,
            gsize  n,
            gsize  k)
{
  gsize left = 0, right = n - 1;

  while (right > left)
    {
      gsize mid = left + (right - left) / 2;
      float a = v[left], b = v[mid], c = v[right];
      float pivot = (a < b) ? ((b < c) ? b : (a < c ? c : a)) : ((a < c) ? a : (b < c ? c : b));
      gsize i = left, j = right;

      while (i <= j)
        {
          while (v[i] < pivot)
            i++;
          while (v[j] > pivot)
            j--;
          if (i <= j)
            {
              float t = v[i];
              v[i] = v[j];
              v[j] = t;
              i++;
              if (j == 0)
                break;
              j--;
            }
        }
      /* now v[left..j] <= pivot <= v[i..right], and j < i */
      if (k <= j)
        right = j;
      else if (k >= i)
        left = i;
      else
        return;
    }
}

static float
min_of (const float *v,
        gsize        n)
{
  float m = v[0];

  for (gsize i = 1; i < n; i++)
    if (v[i] < m)
      m = v[i];
  return m;
}

gboolean
efflux_percentiles (const float  *data,
                    gsize         n,
                    const double *percents,
                    gsize         n_percents,
                    double       *out)
{
  g_autofree float *v = NULL;
  gsize m = 0;

  g_return_val_if_fail (data != NULL || n == 0, FALSE);

  v = g_new (float, MAX (n, 1));
  for (gsize i = 0; i < n; i++)
    if (isfinite (data[i]))
      v[m++] = data[i];
  if (m == 0)
    return FALSE;

  for (gsize p = 0; p < n_percents; p++)
    {
      double rank = CLAMP (percents[p], 0.0, 100.0) / 100.0 * (double) (m - 1);
      gsize k = (gsize) floor (rank);
      double frac = rank - (double) k;
      double lo_value, hi_value;

      if (k >= m - 1)
        {
          k = m - 1;
          frac = 0.0;
        }
      select_kth (v, m, k);
      lo_value = v[k];
      /* the next rank is the smallest value after position k */
      hi_value = (frac > 0.0) ? min_of (v + k + 1, m - k - 1) : lo_value;
      out[p] = lo_value + frac * (hi_value - lo_value);
    }
  return TRUE;
}

gboolean
efflux_percentile_limits (const float *data,
                          gsize        n,
                          double       percent,
                          double      *lo,
                          double      *hi)
{
  double keep = CLAMP (percent, 0.0, 100.0);
  double percents[2] = { (100.0 - keep) / 2.0, 100.0 - (100.0 - keep) / 2.0 };
  double limits[2];

  if (!efflux_percentiles (data, n, percents, 2, limits))
    return FALSE;
  *lo = limits[0];
  *hi = limits[1];
  return TRUE;
}
