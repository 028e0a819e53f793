# SPDX-License-Identifier: GPL-3.0-or-later
"""Read a FITS cube written by efflux_fits_write_cube with astropy and print what the C test
compares, one "key value..." line each:

  shape NAXIS3 NAXIS2 NAXIS1
  value X Y K V        data value at 0-based pixel (X, Y), channel K, as astropy reads it
  world X Y RA DEC     ICRS degrees of 0-based pixel (X, Y) from astropy.wcs (wcslib via astropy)
  vel K V_KMS          radio velocity of channel K from the spectral WCS (astropy.wcs.WCS.sub)

Usage: fitsout_check.py FILE X,Y,K [X,Y,K ...]
"""
import sys

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.wcs import WCS


def main():
    path = sys.argv[1]
    hdu = fits.open(path)[0]
    data = hdu.data
    hdr = hdu.header
    print("shape %d %d %d" % data.shape)
    w = WCS(hdr)
    cel = w.celestial
    spec = w.sub([3])
    restfrq = hdr.get("RESTFRQ", 0.0)
    for item in sys.argv[2:]:
        x, y, k = (int(t) for t in item.split(","))
        print("value %d %d %d %.17g" % (x, y, k, data[k, y, x]))
        ra, dec = cel.wcs_pix2world([[x, y]], 0)[0]
        print("world %d %d %.17g %.17g" % (x, y, ra, dec))
        s = spec.wcs_pix2world([[k]], 0)[0][0]
        if hdr["CTYPE3"].startswith("FREQ"):
            # radio convention v = c (1 - nu / nu0), Greisen et al. 2006, via astropy.units
            v = (s * u.Hz).to(u.km / u.s, equivalencies=u.doppler_radio(restfrq * u.Hz)).value
        else:
            v = (s * u.Unit(hdr["CUNIT3"])).to(u.km / u.s).value
        print("vel %d %.17g" % (k, v))


if __name__ == "__main__":
    main()
