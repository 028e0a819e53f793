# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference values from numpy for tests/test-mvfit.c (run with Debian's python3 through
EFFLUX_PYTHON). Prints numbers with repr precision, one per line.

  mvfit_check.py polyfit FILE ORDER   FILE: lines "x y sigma"; prints the coefficients of
                                      numpy.polyfit(x, y, ORDER, w=1/sigma, cov='unscaled')
                                      lowest power first, then the covariance matrix row by row
                                      (same order)
  mvfit_check.py mt19937 LO HI N      N raw 32-bit outputs of MT19937 seeded by init_by_array
                                      [LO, HI] (numpy's legacy RandomState seeding), then N
                                      doubles of RandomState([LO, HI]).random_sample()
  mvfit_check.py percentile FILE Q..  numpy.percentile(values, Q) with the default 'linear' method
"""
import sys

import numpy as np


def main(argv):
    mode = argv[1]
    if mode == "polyfit":
        data = np.loadtxt(argv[2], ndmin=2)
        order = int(argv[3])
        coef, cov = np.polyfit(data[:, 0], data[:, 1], order, w=1.0 / data[:, 2], cov="unscaled")
        # numpy gives the highest power first: reverse to lowest first
        coef = coef[::-1]
        cov = cov[::-1, ::-1]
        for c in coef:
            print(repr(float(c)))
        for row in cov:
            for c in row:
                print(repr(float(c)))
    elif mode == "mt19937":
        lo, hi, n = int(argv[2]), int(argv[3]), int(argv[4])
        bitgen = np.random.MT19937()
        bitgen._legacy_seeding([lo, hi])
        for value in bitgen.random_raw(n):
            print(int(value))
        state = np.random.RandomState([lo, hi])
        for value in state.random_sample(n):
            print(repr(float(value)))
    elif mode == "percentile":
        values = np.loadtxt(argv[2], ndmin=1)
        for q in argv[3:]:
            print(repr(float(np.percentile(values, float(q)))))
    else:
        print("unknown mode " + mode, file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
