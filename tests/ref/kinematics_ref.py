# SPDX-License-Identifier: GPL-3.0-or-later
# Reference for tests/test-kinematics.c, written independently with astropy.units (astropy's pc is
# IAU 2015 B2, its yr the Julian year): for each line "slope_kms_per_pc inclination_deg" on the
# command line pairs, print the Hubble-law age t0 = 1 / (tan i x dv/dx) in yr
# (REFERENCES.md 1.10), then for each "slope_kms_per_arcsec distance_pc" the slope in km/s/pc.
import sys

import numpy as np
from astropy import units as u

args = sys.argv[1:]
mode = None
for a in args:
    if a in ("age", "slope"):
        mode = a
        continue
    x, y = (float(t) for t in a.split(","))
    if mode == "age":
        rate = x * u.km / u.s / u.pc
        t0 = (1.0 / (np.tan(np.radians(y)) * rate)).to(u.yr)
        print("%.17g" % t0.value)
    else:
        # the length 1 arcsec spans at distance y: y pc x (1 arcsec in radians)
        length = (y * u.pc) * (1.0 * u.arcsec).to(u.rad).value
        print("%.17g" % (x * u.km / u.s / length).to(u.km / u.s / u.pc).value)
