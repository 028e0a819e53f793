# SPDX-License-Identifier: GPL-3.0-or-later
"""numpy.nanpercentile display limits of a raw float32 map, timed (best and median of 15)."""
import sys
import time

import numpy as np

a = np.fromfile(sys.argv[1], dtype='<f4')
times = []
for _ in range(15):
    t0 = time.perf_counter()
    lo, hi = np.nanpercentile(a, [0.25, 99.75])
    times.append((time.perf_counter() - t0) * 1e3)
times.sort()
print('%-44s best %8.3f ms   median %8.3f ms' % ('numpy.nanpercentile 0.25/99.75, 1024 x 1024',
                                                 times[0], times[len(times) // 2]))
print('numpy limits: %.9g %.9g' % (lo, hi))
