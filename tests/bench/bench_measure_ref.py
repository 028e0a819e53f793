# SPDX-License-Identifier: GPL-3.0-or-later
"""numpy reference for bench-measure.c: the same two lobe outlines (pixel coordinates) on a
512 x 512 x 1024 float32 array, masks by the even-odd rule on pixel centres with the half-open
crossing rule of efflux-lobe.h (written independently here with numpy), then the per-channel sums,
voxel counts and largest detected distance that efflux_measure_prepare computes. Prints the mask
sizes (the C benchmark compares them with its own) and the time of the numpy pass."""
import sys
import time

import numpy as np

NX, NY, NCHAN = 512, 512, 1024
BLUE = ([262, 330, 420, 470, 400, 300], [262, 250, 300, 420, 460, 380])
RED = ([250, 182, 92, 42, 112, 212], [250, 262, 212, 92, 52, 132])


def mask(px, py):
    y, x = np.mgrid[0:NY, 0:NX].astype(np.float64)
    inside = np.zeros((NY, NX), dtype=bool)
    n = len(px)
    for i in range(n):
        x0, y0, x1, y1 = px[i], py[i], px[(i + 1) % n], py[(i + 1) % n]
        if y0 == y1:
            continue
        lo, hi = min(y0, y1), max(y0, y1)
        xc = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
        inside ^= (lo <= y) & (y < hi) & (xc <= x)
    return inside


def main():
    rng = np.random.default_rng(20261201)
    cube = rng.uniform(-0.175, 0.175, size=(NY * NX, NCHAN)).astype(np.float32)
    masks = [mask(*BLUE), mask(*RED)]
    print("numpy masks: blue %d pixels, red %d pixels" % (masks[0].sum(), masks[1].sum()))
    thr = np.float32(0.3)
    t0 = time.perf_counter()
    for m in masks:
        idx = np.flatnonzero(m.ravel())
        yy, xx = np.divmod(idx, NX)
        dist = np.hypot(xx - 256.0, yy - 256.0) * 0.5
        block = cube[idx]
        finite = np.isfinite(block)
        sums = np.where(finite, block, 0).sum(axis=0, dtype=np.float64)
        counts = finite.sum(axis=0)
        det = (block > 0) & (block >= thr)
        rdet = np.where(det, dist[:, None], -1.0).max(axis=0)
        assert sums.shape == (NCHAN,) and counts.shape == (NCHAN,) and rdet.shape == (NCHAN,)
    t = time.perf_counter() - t0
    print("numpy pass (sums, counts, detected distance) over both lobes: %.3f s" % t)
    return 0


if __name__ == "__main__":
    sys.exit(main())
