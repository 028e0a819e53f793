/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Display stretches: a value v between the limits lo and hi goes to x = (v - lo) / (hi - lo),
 * clamped to [0, 1], and then to y in [0, 1]:
 *
 *   linear  y = x
 *   sqrt    y = sqrt (x)
 *   log     y = log (a x + 1) / log (a + 1),       a = EFFLUX_STRETCH_LOG_A = 1000
 *   asinh   y = asinh (x / b) / asinh (1 / b),      b = EFFLUX_STRETCH_ASINH_B = 0.1
 *
 * The log form keeps y(0) = 0 and y(1) = 1 and spreads about three decades over the range; the
 * asinh form (the softened logarithm of Lupton, Gunn & Szalay 1999, AJ 118, 1406) is linear for
 * x << b and logarithmic for x >> b. These are the same parametrisations and defaults as
 * astropy.visualization's LogStretch (a = 1000) and AsinhStretch (a = 0.1), which the tests use
 * as the reference. No GTK here. */

#define EFFLUX_STRETCH_LOG_A   1000.0
#define EFFLUX_STRETCH_ASINH_B 0.1

typedef enum
{
  EFFLUX_STRETCH_LINEAR,
  EFFLUX_STRETCH_SQRT,
  EFFLUX_STRETCH_LOG,
  EFFLUX_STRETCH_ASINH,
  EFFLUX_N_STRETCHES,
} EffluxStretchKind;

/* y in [0, 1] for a value between lo and hi (clamped); NaN for a NaN value or when hi <= lo is
 * not a usable range (hi == lo gives 0 for v <= lo and 1 above). */
double      efflux_stretch_apply    (EffluxStretchKind kind,
                                     double            value,
                                     double            lo,
                                     double            hi);

/* "linear", "sqrt", "log", "asinh"; from_string returns FALSE for an unknown name. */
const char *efflux_stretch_kind_to_string   (EffluxStretchKind  kind);
gboolean    efflux_stretch_kind_from_string (const char        *name,
                                             EffluxStretchKind *kind);

/* Percentiles of the finite values of a float image, with the same definition as
 * numpy.percentile / numpy.nanpercentile's default ("linear"): the value at rank
 * p / 100 x (n - 1) among the n finite values sorted, interpolated linearly between the two
 * neighbouring ranks. percents[i] in [0, 100]. Returns FALSE (out untouched) when the image has
 * no finite value. O(n) expected per percentile (selection, no full sort); uses a copy. */
gboolean    efflux_percentiles      (const float  *data,
                                     gsize         n,
                                     const double *percents,
                                     gsize         n_percents,
                                     double       *out);

/* Display limits: lo and hi at the symmetric percentiles that keep `percent` of the finite
 * values (e.g. 99.5 -> the 0.25th and 99.75th percentiles; 100 -> minimum and maximum). When
 * every finite value is equal, hi = lo. FALSE when no value is finite. */
gboolean    efflux_percentile_limits (const float *data,
                                      gsize        n,
                                      double       percent,
                                      double      *lo,
                                      double      *hi);

G_END_DECLS
