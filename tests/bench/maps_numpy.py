# SPDX-License-Identifier: GPL-3.0-or-later
"""numpy + astropy reference for tests/bench/bench-maps.c.

maps_numpy.py FILE V1 V2 OUT      moment 0 (K km/s) over the channels whose centre velocity lies
                                  in [V1, V2], as a plain astropy.io.fits + numpy script would do
                                  it (the caller times the whole process, imports included)
maps_numpy.py --in-memory N       numpy.nansum over N new channel ranges of an in-memory
                                  512 x 512 x 1024 float32 array, timed here
maps_numpy.py --compare A B       the two FITS maps agree (1e-5 relative, NaN at the same pixels)
"""
import sys


def moment0(path, v1, v2, out):
    import numpy as np
    from astropy.io import fits
    from astropy.wcs import WCS

    with fits.open(path) as hdul:
        header = hdul[0].header
        data = hdul[0].data                  # (nchan, ny, nx)
        scale = {"m/s": 1e-3, "km/s": 1.0}.get(header.get("CUNIT3", "m/s").strip(), 1e-3)
        k = np.arange(header["NAXIS3"])
        vel = (header["CRVAL3"] + (k + 1 - header["CRPIX3"]) * header["CDELT3"]) * scale
        dv = abs(header["CDELT3"] * scale)
        lo, hi = min(v1, v2), max(v1, v2)
        eps = 1e-9 * dv
        sel = np.nonzero((vel >= lo - eps) & (vel <= hi + eps))[0]
        block = data[sel[0]:sel[-1] + 1]
        m0 = np.nansum(block, axis=0) * dv
        m0[~np.isfinite(block).any(axis=0)] = np.nan
        sky = WCS(header).celestial.to_header()
        sky["BUNIT"] = "K km/s"
        fits.PrimaryHDU(m0.astype(np.float32), sky).writeto(out, overwrite=True)


def in_memory(n):
    import time

    import numpy as np

    rng = np.random.default_rng(2026)
    cube = rng.random((512, 512, 1024), dtype=np.float32)   # spectral axis contiguous, as ours
    times = []
    for _ in range(n):
        k0 = int(rng.integers(0, 1024 - 40))
        k1 = int(rng.integers(k0 + 1, 1024))
        t0 = time.perf_counter()
        m0 = np.nansum(cube[:, :, k0:k1 + 1], axis=2) * 0.1
        times.append((time.perf_counter() - t0) * 1e3)
        del m0
    times.sort()
    median = 0.5 * (times[n // 2 - 1] + times[n // 2]) if n % 2 == 0 else times[n // 2]
    print("numpy.nansum over a new range, in memory (same shape): best %.1f ms, median %.1f ms"
          % (times[0], median))


def compare(a, b):
    import numpy as np
    from astropy.io import fits

    x = fits.getdata(a).astype(np.float64)
    y = fits.getdata(b).astype(np.float64)
    same_nan = np.array_equal(np.isnan(x), np.isnan(y))
    ok = np.isfinite(x) & np.isfinite(y)
    rel = np.max(np.abs(x[ok] - y[ok]) / np.maximum(np.abs(y[ok]), 1e-3 * np.max(np.abs(y[ok]))))
    print("efflux-cli and numpy moment 0 maps: NaN at the same pixels: %s, largest relative "
          "difference %.2e" % (same_nan, rel))
    return same_nan and rel <= 1e-5


def main():
    if sys.argv[1] == "--in-memory":
        in_memory(int(sys.argv[2]))
    elif sys.argv[1] == "--compare":
        sys.exit(0 if compare(sys.argv[2], sys.argv[3]) else 1)
    else:
        moment0(sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), sys.argv[4])


if __name__ == "__main__":
    main()
