# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference moment maps for tests/test-momentstream.c, straight from a FITS cube file with
astropy.io.fits (the data) and astropy.wcs (the channel velocities), summed with numpy (nansum,
nanmax) from the definitions in src/core/efflux-maps.h. The cube must be in K with a VRAD axis in
the LSRK frame (no frame or unit conversion needed).

Usage: momentstream_ref.py CUBE.fits V1 V2 OUTDIR
Writes OUTDIR/m0.f64 (K km/s), OUTDIR/m1.f64 (km/s), OUTDIR/peak.f64 (K), OUTDIR/s0.f64 (sum of
T over the finite voxels of the range, K) as float64 in this machine's byte order, ny x nx, x
fastest, and prints the number of channels in the range.
"""
import sys

import astropy.units as u
import numpy as np
from astropy.io import fits
from astropy.wcs import WCS


def main():
    path, v1, v2, out = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), sys.argv[4]
    with fits.open(path) as hdul:
        hdu = hdul[0]
        data = np.asarray(hdu.data, dtype=np.float64)  # (nchan, ny, nx)
        header = hdu.header
    assert header["CTYPE3"].startswith("VRAD"), header["CTYPE3"]
    spec = WCS(header).sub([3])
    nchan = data.shape[0]
    vel = spec.pixel_to_world_values(np.arange(nchan, dtype=np.float64))
    vel = np.asarray(vel, dtype=np.float64) * spec.wcs.cunit[0].to(u.km / u.s)
    dv = vel[1] - vel[0]
    lo, hi = min(v1, v2), max(v1, v2)
    eps = max(1e-9 * abs(dv), 1e-12)
    sel = (vel >= lo - eps) & (vel <= hi + eps)
    t = data[sel]
    v = vel[sel]
    n = np.sum(np.isfinite(t), axis=0)
    s0 = np.nansum(t, axis=0)
    m0 = s0 * abs(dv)
    with np.errstate(invalid="ignore", divide="ignore"):
        m1 = np.nansum(t * v[:, None, None], axis=0) / s0
    m1[~(s0 > 0)] = np.nan
    peak = np.where(np.isfinite(t), t, -np.inf).max(axis=0)
    for a in (m0, m1, peak, s0):
        a[n == 0] = np.nan
    for name, a in (("m0", m0), ("m1", m1), ("peak", peak), ("s0", s0)):
        np.ascontiguousarray(a, dtype=np.float64).tofile(out + "/" + name + ".f64")
    print(int(np.sum(sel)))


if __name__ == "__main__":
    main()
