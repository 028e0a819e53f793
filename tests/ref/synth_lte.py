# SPDX-License-Identifier: GPL-3.0-or-later
"""Independent LTE radiative transfer of one voxel, for tests/test-synth.c.

Given a linear rotor's line data and a column density spread evenly over one channel, print the
optical depth and the brightness:

  tau = N / [ (8 pi nu^3 / (c^3 A_ul g_u)) Q(Tex) exp(E_u / Tex) / (exp(h nu / k Tex) - 1) ] / dv
  T   = (J(Tex) - J(Tbg)) (1 - exp(-tau)),   J(T) = (h nu / k) / (exp(h nu / k T) - 1)

(Mangum & Shirley 2015, PASP 127, 266, their column density equation written as an opacity
integral; REFERENCES.md 1.2-1.4), with Q the exact rigid-rotor sum and the constants of
astropy.constants (CODATA 2018).

Usage: synth_lte.py FREQ_HZ A_UL EU_K G_U B_HZ TEX_K TBG_K N_CM2 DV_KMS
Prints: "tau VALUE" and "t VALUE".
"""
import sys

import numpy as np
from astropy import constants as const

h = const.h.cgs.value
k = const.k_B.cgs.value
c = const.c.cgs.value


def main():
    nu, a_ul, eu, g_u, b, tex, tbg, n, dv = (float(x) for x in sys.argv[1:10])
    j = np.arange(0, 400)
    q = np.sum((2 * j + 1) * np.exp(-h * b * j * (j + 1) / (k * tex)))
    per_tau = 8 * np.pi * nu**3 / (c**3 * a_ul * g_u) * q * np.exp(eu / tex) / np.expm1(h * nu / (k * tex))
    tau = n / (per_tau * dv * 1e5)
    t0 = h * nu / k
    jnu = lambda t: t0 / np.expm1(t0 / t)
    t = (jnu(tex) - jnu(tbg)) * -np.expm1(-tau)
    print("tau %.17g" % tau)
    print("t %.17g" % t)


if __name__ == "__main__":
    main()
