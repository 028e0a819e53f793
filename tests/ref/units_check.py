# SPDX-License-Identifier: GPL-3.0-or-later
"""Units and constants from astropy (astropy.constants, astropy.units) for
tests/test-units-astropy.c, run with Debian's python3 through EFFLUX_PYTHON.

Arguments are quantity names; for each one the script prints "NAME VALUE" (repr precision) in cgs.
A name "jyb2k:FREQ_GHZ:BMAJ_ARCSEC:BMIN_ARCSEC" gives the Rayleigh-Jeans brightness temperature
(K) of 1 Jy/beam for a Gaussian beam of those FWHMs, from astropy's u.brightness_temperature
equivalency with beam_area = 2 pi bmaj bmin / (8 ln 2)."""
import sys

import numpy as np
from astropy import constants as const
from astropy import units as u

QUANTITIES = {
    "h": lambda: const.h.cgs.value,
    "k": lambda: const.k_B.cgs.value,
    "c": lambda: const.c.cgs.value,
    "G": lambda: const.G.cgs.value,
    "msun": lambda: const.M_sun.cgs.value,
    "lsun": lambda: const.L_sun.cgs.value,
    "au": lambda: const.au.cgs.value,
    "pc": lambda: const.pc.cgs.value,
    "yr": lambda: (1 * u.yr).to(u.s).value,
    "arcsec": lambda: (1 * u.arcsec).to(u.rad).value,
    # astropy has no hydrogen-atom mass: 1.00784 atomic mass units (the IUPAC atomic weight of
    # hydrogen, lower bound of the interval [1.00784, 1.00811]); compare also m_p + m_e
    "m_h": lambda: (1.00784 * u.u).cgs.value,
    "m_p_plus_m_e": lambda: (const.m_p + const.m_e).cgs.value,
    "erg_per_msun_km2_s2": lambda: (1 * u.Msun * u.km**2 / u.s**2).to(u.erg).value,
    "dyn_per_msun_km_s_yr": lambda: (1 * u.Msun * u.km / u.s / u.yr).to(u.dyn).value,
    "lsun_per_erg_s": lambda: (1 * u.erg / u.s).to(u.Lsun).value,
}


def jyb2k(freq_ghz, bmaj, bmin):
    omega = (2 * np.pi * (bmaj * u.arcsec) * (bmin * u.arcsec) / (8 * np.log(2))).to(u.sr)
    equiv = u.brightness_temperature(freq_ghz * u.GHz, beam_area=omega)
    return (1 * u.Jy / u.beam).to(u.K, equivalencies=equiv).value


def main(argv):
    for name in argv[1:]:
        if name.startswith("jyb2k:"):
            _, f, a, b = name.split(":")
            value = jyb2k(float(f), float(a), float(b))
        elif name in QUANTITIES:
            value = QUANTITIES[name]()
        else:
            print("unknown quantity " + name, file=sys.stderr)
            return 2
        print(name, repr(float(value)))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
