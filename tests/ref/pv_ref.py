# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference position-velocity cuts for tests/test-pv.c.

The sampling rule is CONTRACT.md section 1 (PV output FITS), written here independently of the C
code: samples at whole-pixel arc lengths 0, 1, 2, ... along the polyline (pixel space, through the
vertices; on a vertex the later segment's direction), and across the path at whole-pixel offsets
-k..k along the perpendicular, k = floor(width / (2 x pixel size)). Each sample is
scipy.ndimage.map_coordinates(order=1, mode='constant', cval=nan) (bilinear; NaN outside the
map), and the samples across are averaged with numpy.nanmean (those outside the map left out).

Usage: pv_ref.py DIR
DIR holds cube.f32 (ny, nx, nchan little-endian float32, spectral axis fastest) and job.txt:
    first line: nx ny nchan pixel_arcsec
    then one cut per line:  NAME WIDTH_ARCSEC x1,y1;x2,y2[;...]   (0-based pixel vertices)
Writes DIR/NAME.f64 (nchan x n_offsets, offsets fastest) and DIR/NAME-pos.f64 (n_offsets x 2).
"""
import math
import sys
import warnings

import numpy as np
from scipy.ndimage import map_coordinates


def samples(verts, k):
    seg = np.diff(verts, axis=0)
    lens = np.hypot(seg[:, 0], seg[:, 1])
    keep = lens > 0
    starts, seg, lens = verts[:-1][keep], seg[keep], lens[keep]
    cum = np.concatenate([[0.0], np.cumsum(lens)])
    n_off = int(math.floor(cum[-1] + 1e-9)) + 1
    centres, across = [], []
    for s in range(n_off):
        j = min(int(np.searchsorted(cum, s, side="right")) - 1, len(lens) - 1)
        d = seg[j] / lens[j]
        p = starts[j] + min(s - cum[j], lens[j]) * d
        perp = np.array([-d[1], d[0]])
        centres.append(p)
        across.append([p + o * perp for o in range(-k, k + 1)])
    return np.array(centres), np.array(across)   # (n_off, 2), (n_off, 2k+1, 2)


def main():
    d = sys.argv[1]
    lines = [l.split() for l in open(d + "/job.txt").read().splitlines() if l.strip()]
    nx, ny, nchan = (int(x) for x in lines[0][:3])
    pix = float(lines[0][3])
    cube = np.fromfile(d + "/cube.f32", dtype="<f4").reshape(ny, nx, nchan).astype(np.float64)
    for name, width, path in lines[1:]:
        verts = np.array([[float(c) for c in v.split(",")] for v in path.split(";")])
        width = float(width)
        k = int(math.floor(width / (2.0 * pix) + 1e-9)) if width > 0 else 0
        centres, across = samples(verts, k)
        n_off = len(centres)
        xs = across[:, :, 0].ravel()
        ys = across[:, :, 1].ravel()
        pv = np.empty((nchan, n_off))
        for c in range(nchan):
            vals = map_coordinates(cube[:, :, c], [ys, xs], order=1, mode="constant",
                                   cval=np.nan)
            pv[c] = np.nanmean(vals.reshape(n_off, 2 * k + 1), axis=1)
        pv.astype("<f8").tofile(d + "/" + name + ".f64")
        centres.astype("<f8").tofile(d + "/" + name + "-pos.f64")


if __name__ == "__main__":
    warnings.simplefilter("ignore", RuntimeWarning)   # nanmean of an all-NaN column is NaN
    main()
