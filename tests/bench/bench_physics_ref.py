# SPDX-License-Identifier: GPL-3.0-or-later
"""numpy timings beside tests/bench/bench-physics.c: the weighted log-log line fit
(numpy.polyfit with w and cov='unscaled') on 64 channels, and numpy.percentile of 1e6 values."""
import timeit

import numpy as np

rng = np.random.default_rng(1)
v = 1.0 + 0.5 * np.arange(64)
m = 1e-3 * np.where(v < 10.0, (v / 10.0) ** -1.8, (v / 10.0) ** -4.0)
e = 0.05 * m
m = m + rng.normal(0.0, 1.0, 64) * e
x = np.log10(v)
y = np.log10(m)
w = m * np.log(10.0) / e

reps = 2000
t = timeit.timeit(lambda: np.polyfit(x, y, 1, w=w, cov="unscaled"), number=reps) / reps
print("numpy: weighted polyfit (deg 1, cov), 64 channels: %.2f us/fit" % (t * 1e6))

values = rng.normal(0.0, 1.0, 1000000)
reps = 5
t = timeit.timeit(lambda: np.percentile(values, [16, 50, 84]), number=reps) / reps
print("numpy: percentile 16/50/84 of 1e6 values: %.1f ms" % (t * 1e3))
