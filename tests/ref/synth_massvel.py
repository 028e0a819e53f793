# SPDX-License-Identifier: GPL-3.0-or-later
"""Mass per channel of a Hubble-law lobe with dM/dV = A V^-gamma between vmin and vmax (true
speeds), seen at inclination i: the channel [v - dv/2, v + dv/2] holds the gas whose line-of-sight
velocity vsys -/+ V cos i falls in it. Integrated numerically with scipy.integrate.quad, as an
independent check of the closed form used by efflux-synth.

Usage: synth_massvel.py MASS VMIN VMAX GAMMA INCL_DEG VSYS VSTART DV NCHAN RED(0|1)
Prints one line "v m" per channel holding mass (v = channel centre, km/s; m in Msun).
"""
import sys

import numpy as np
from scipy.integrate import quad


def main():
    mass, vmin, vmax, gamma, incl, vsys, vstart, dv = (float(x) for x in sys.argv[1:9])
    nchan = int(sys.argv[9])
    red = sys.argv[10] == "1"
    cosi = np.cos(np.radians(incl))
    f = lambda v: v ** (-gamma)
    norm = mass / quad(f, vmin, vmax, epsabs=0, epsrel=1e-13, limit=200)[0]
    for k in range(nchan):
        vc = vstart + k * dv
        lo, hi = vc - abs(dv) / 2, vc + abs(dv) / 2
        # line-of-sight offsets from vsys on this lobe's side
        u = (lo - vsys, hi - vsys) if red else (vsys - hi, vsys - lo)
        a = max(max(u[0], 0.0) / cosi, vmin)
        b = min(u[1] / cosi, vmax)
        if b <= a:
            continue
        m = norm * quad(f, a, b, epsabs=0, epsrel=1e-13, limit=200)[0]
        print("%.17g %.17g" % (vc, m))


if __name__ == "__main__":
    main()
