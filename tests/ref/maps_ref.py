# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference moment maps and spectra for tests/test-maps.c, computed with numpy (numpy.nansum,
numpy.nanmax, numpy.nanmean) straight from the definitions in src/core/efflux-maps.h.

Usage: maps_ref.py DIR
DIR holds cube.f32 (ny, nx, nchan little-endian float32, spectral axis fastest), vel.f64 (nchan
channel centres, km/s), rms.f32 (nchan), mask.u8 (ny * nx) and job.txt:
    first line: nx ny nchan dv
    then one job per line:  NAME map ORDER V1 V2 CLIP     (ORDER 0, 1, 2 or peak)
                            NAME spectrum mean|sum
Writes DIR/NAME.f64 (little-endian float64) for each job.
"""
import sys

import numpy as np


def moment(cube, vel, rms, dv, order, v1, v2, clip):
    lo, hi = min(v1, v2), max(v1, v2)
    eps = max(1e-9 * abs(dv), 1e-12)
    sel = (vel >= lo - eps) & (vel <= hi + eps)
    t = cube[:, :, sel]
    v = vel[sel]
    if clip > 0:
        # kept when T >= clip x rms; NaN compares False and stays out
        with np.errstate(invalid="ignore"):
            t = np.where(t >= clip * rms[sel], t, np.nan)
    n = np.sum(np.isfinite(t), axis=2)
    s0 = np.nansum(t, axis=2)
    with np.errstate(invalid="ignore", divide="ignore"):
        if order == "0":
            out = s0 * abs(dv)
        elif order == "peak":
            filled = np.where(np.isfinite(t), t, -np.inf)
            out = filled.max(axis=2)
        else:
            m1 = np.nansum(t * v, axis=2) / s0
            m1[~(s0 > 0)] = np.nan
            if order == "1":
                out = m1
            else:
                var = np.nansum(t * (v - m1[:, :, None]) ** 2, axis=2) / s0
                out = np.sqrt(var)
                out[~(s0 > 0)] = np.nan
    out = np.asarray(out, dtype=np.float64)
    out[n == 0] = np.nan
    return out


def main():
    d = sys.argv[1]
    lines = [l.split() for l in open(d + "/job.txt").read().splitlines() if l.strip()]
    nx, ny, nchan = (int(x) for x in lines[0][:3])
    dv = float(lines[0][3])
    cube = np.fromfile(d + "/cube.f32", dtype="<f4").reshape(ny, nx, nchan).astype(np.float64)
    vel = np.fromfile(d + "/vel.f64", dtype="<f8")
    rms = np.fromfile(d + "/rms.f32", dtype="<f4").astype(np.float64)
    mask = np.fromfile(d + "/mask.u8", dtype=np.uint8).reshape(ny, nx) != 0
    for job in lines[1:]:
        name, kind = job[0], job[1]
        if kind == "map":
            out = moment(cube, vel, rms, dv, job[2], float(job[3]), float(job[4]), float(job[5]))
        else:
            spectra = cube[mask]          # (pixels inside, nchan)
            with np.errstate(invalid="ignore"):
                if job[2] == "mean":
                    out = np.nanmean(spectra, axis=0) if spectra.size else np.full(nchan, np.nan)
                else:
                    out = np.nansum(spectra, axis=0)
                    out[np.sum(np.isfinite(spectra), axis=0) == 0] = np.nan
        np.asarray(out, dtype="<f8").tofile(d + "/" + name + ".f64")


if __name__ == "__main__":
    import warnings
    warnings.simplefilter("ignore", RuntimeWarning)
    main()
