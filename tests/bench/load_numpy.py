#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference timing for bench-load: astropy.io.fits.getdata of a FITS cube (no memory map) and a
numpy transpose to the spectral-contiguous layout Efflux uses (data[y, x, k], native float32).
Best of 3. Usage: load_numpy.py CUBE.fits"""

import sys
import time

import numpy as np
from astropy.io import fits

path = sys.argv[1]
times = []
for _ in range(5):
    t0 = time.perf_counter()
    data = fits.getdata(path, memmap=False)                 # (nchan, ny, nx), big-endian
    cube = np.ascontiguousarray(np.transpose(data, (1, 2, 0)), dtype=np.float32)  # (ny, nx, nchan)
    t = time.perf_counter() - t0
    times.append(t)
    del data, cube
times.sort()
print("%.4f s (median of 5; best %.4f s)" % (times[2], times[0]))
