# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference timing for tests/bench/bench-reproject.c: the same reprojections with astropy.wcs
(pixel_to_world of the target's pixel centres, world_to_pixel in the source's WCS, which converts
the frame) and scipy.ndimage.map_coordinates(order=1, mode='constant', cval=nan); median of 5
runs, CPU seconds (time.process_time), imports and file reading left out."""
import os
import sys
import time
import warnings

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS, FITSFixedWarning
from scipy import ndimage

warnings.simplefilter("ignore", FITSFixedWarning)
d = sys.argv[1]
target = WCS(fits.getheader(os.path.join(d, "target.fits"))).celestial
ny, nx = target.pixel_shape[1], target.pixel_shape[0]
for name, label in (("icrs.fits", "ICRS"), ("gal.fits", "galactic")):
    with fits.open(os.path.join(d, name)) as hdul:
        data = hdul[0].data.astype(float)
        w = WCS(hdul[0].header).celestial
    times = []
    for _ in range(5):
        t0 = time.process_time()
        y, x = np.mgrid[0:ny, 0:nx].astype(float)
        world = target.pixel_to_world(x, y)
        p1, p2 = w.world_to_pixel(world)
        out = ndimage.map_coordinates(data, [p2.ravel(), p1.ravel()], order=1, mode="constant",
                                      cval=np.nan)
        times.append(time.process_time() - t0)
    print("astropy + scipy, %s: median %.3f s CPU" % (label, sorted(times)[2]))
