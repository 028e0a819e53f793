# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference values for tests/test-measure.c, from scipy and astropy (Debian's python3).

  measure_ref.py mask NX NY X1,Y1;X2,Y2;...
      pixel indices y * NX + x (0-based centres) inside the convex polygon, one per line, from
      scipy.spatial.Delaunay(vertices).find_simplex (independent of Efflux's scanline fill)
  measure_ref.py separation NX NY PIXEL_ARCSEC RA0 DEC0 XS YS XP YP
      the angular distance (arcsec) between the 0-based pixel positions (XS, YS) and (XP, YP) of a
      TAN grid built like efflux_cube_new_simple, from astropy.wcs and SkyCoord.separation
"""
import sys

import numpy as np


def mask(nx, ny, text):
    from scipy.spatial import Delaunay
    pts = np.array([[float(c) for c in v.split(",")] for v in text.split(";")])
    y, x = np.mgrid[0:ny, 0:nx]
    centres = np.column_stack([x.ravel(), y.ravel()]).astype(float)
    inside = Delaunay(pts).find_simplex(centres) >= 0
    for i in np.flatnonzero(inside):
        print(i)


def separation(nx, ny, pix, ra0, dec0, xs, ys, xp, yp):
    from astropy.wcs import WCS
    from astropy.coordinates import SkyCoord
    import astropy.units as u
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.cunit = ["deg", "deg"]
    w.wcs.crpix = [(nx + 1) / 2.0, (ny + 1) / 2.0]
    w.wcs.cdelt = [-pix / 3600.0, pix / 3600.0]
    w.wcs.crval = [ra0, dec0]
    w.wcs.radesys = "ICRS"
    a = w.pixel_to_world(xs, ys)
    b = w.pixel_to_world(xp, yp)
    print("%.12g %.12f %.12f" % (a.separation(b).to(u.arcsec).value, a.ra.deg, a.dec.deg))


def main(argv):
    if argv[1] == "mask":
        mask(int(argv[2]), int(argv[3]), argv[4])
    elif argv[1] == "separation":
        separation(int(argv[2]), int(argv[3]), *[float(v) for v in argv[4:11]])
    else:
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
