# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference for tests/test-reproject.c: context images and their reprojection onto a cube's grid.

Usage: reproject_ref.py DIR

DIR/target.fits is the cube written by the test (its sky grid is the target). This script writes
the source images, each with its own WCS, and for each source NAME:
  DIR/NAME.fits      the image
  DIR/NAME_map.f64   the reprojected map on the target grid (ny, nx), float64, numpy's tofile
  DIR/NAME_u.f64     the source pixel position (0-based, along the source's longitude axis) of
  DIR/NAME_v.f64     each target pixel centre, and along its latitude axis (NaN: no projection)

The reference method: astropy.wcs.WCS.pixel_to_world of the target's pixel centres (its celestial
WCS), astropy.wcs.WCS.world_to_pixel of those positions in the source's WCS (astropy converts the
frame, e.g. ICRS to galactic or FK5), then scipy.ndimage.map_coordinates(order=1, mode='constant',
cval=nan) on the source's first plane: bilinear interpolation, NaN outside.
"""
import os
import sys
import warnings

import numpy as np
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.wcs import WCS, FITSFixedWarning
import astropy.units as u
from scipy import ndimage

warnings.simplefilter("ignore", FITSFixedWarning)

out = sys.argv[1]
target = WCS(fits.getheader(os.path.join(out, "target.fits"))).celestial
tny, tnx = target.pixel_shape[1], target.pixel_shape[0]
ty, tx = np.mgrid[0:tny, 0:tnx].astype(float)
world = target.pixel_to_world(tx, ty).icrs
ra0, dec0 = world.ra.deg[tny // 2, tnx // 2], world.dec.deg[tny // 2, tnx // 2]


def smooth_image(ny, nx, seed):
    """A smooth image: an offset, two Gaussians and a gentle gradient (values 10 to about 25)."""
    rng = np.random.default_rng(seed)
    yy, xx = np.mgrid[0:ny, 0:nx].astype(float)
    img = 10.0 + 0.03 * xx - 0.02 * yy
    for _ in range(2):
        cx, cy = rng.uniform(0.3, 0.7) * nx, rng.uniform(0.3, 0.7) * ny
        s = rng.uniform(0.15, 0.25) * min(nx, ny)
        img += rng.uniform(5, 10) * np.exp(-((xx - cx) ** 2 + (yy - cy) ** 2) / (2 * s * s))
    return img


def reference(name, header, data, lng_axis):
    """Write the image and the reference maps. lng_axis: the 0-based WCS axis of longitude."""
    fits.PrimaryHDU(data=data.astype(np.float32), header=header).writeto(
        os.path.join(out, name + ".fits"), overwrite=True)
    w = WCS(header)
    cel = w.celestial
    # positions in the source's own frame (astropy's transformation from ICRS)
    p1, p2 = cel.world_to_pixel(world)
    plane = data.reshape((-1,) + data.shape[-2:])[0].astype(np.float32).astype(float)
    # map_coordinates takes (row, column) = (axis 2, axis 1) of the FITS image
    mapped = ndimage.map_coordinates(plane, [p2.ravel(), p1.ravel()], order=1, mode="constant",
                                     cval=np.nan).reshape(tny, tnx)
    # Efflux's (u, v): along the longitude axis and along the latitude axis
    uu, vv = (p1, p2) if lng_axis == 0 else (p2, p1)
    mapped.astype(np.float64).tofile(os.path.join(out, name + "_map.f64"))
    np.asarray(uu, dtype=np.float64).tofile(os.path.join(out, name + "_u.f64"))
    np.asarray(vv, dtype=np.float64).tofile(os.path.join(out, name + "_v.f64"))


# 1. TAN, ICRS, pixels 0.7" (the target's are 1"), rotated by 30 degrees, centred 5" off
h = fits.Header()
h["CTYPE1"], h["CTYPE2"] = "RA---TAN", "DEC--TAN"
h["CUNIT1"], h["CUNIT2"] = "deg", "deg"
h["CRVAL1"], h["CRVAL2"] = ra0 + 5.0 / 3600.0, dec0 - 3.0 / 3600.0
h["CRPIX1"], h["CRPIX2"] = 45.0, 38.5
h["CDELT1"], h["CDELT2"] = -0.7 / 3600.0, 0.7 / 3600.0
a = np.deg2rad(30.0)
h["PC1_1"], h["PC1_2"], h["PC2_1"], h["PC2_2"] = np.cos(a), -np.sin(a), np.sin(a), np.cos(a)
h["RADESYS"] = "ICRS"
h["BUNIT"] = "mJy/beam"
reference("tan", h, smooth_image(80, 90, 1), 0)

# 2. SIN, galactic, pixels 2", with degenerate FREQ and STOKES axes (NAXIS = 4); smaller than the
# target's field, so part of the map is NaN
gal = SkyCoord(ra0 * u.deg, dec0 * u.deg, frame="icrs").galactic
h = fits.Header()
h["CTYPE1"], h["CTYPE2"], h["CTYPE3"], h["CTYPE4"] = "GLON-SIN", "GLAT-SIN", "FREQ", "STOKES"
h["CUNIT1"], h["CUNIT2"], h["CUNIT3"] = "deg", "deg", "Hz"
h["CRVAL1"], h["CRVAL2"], h["CRVAL3"], h["CRVAL4"] = gal.l.deg, gal.b.deg, 2.3e11, 1.0
h["CRPIX1"], h["CRPIX2"], h["CRPIX3"], h["CRPIX4"] = 14.0, 12.0, 1.0, 1.0
h["CDELT1"], h["CDELT2"], h["CDELT3"], h["CDELT4"] = -2.0 / 3600.0, 2.0 / 3600.0, 1e9, 1.0
reference("gal", h, smooth_image(24, 30, 2).reshape(1, 1, 24, 30), 0)

# 3. a cube (3 planes) in FK5 J2000, SIN, latitude first (CTYPE1 = DEC--SIN): its first plane
h = fits.Header()
h["CTYPE1"], h["CTYPE2"], h["CTYPE3"] = "DEC--SIN", "RA---SIN", "VRAD"
h["CUNIT1"], h["CUNIT2"], h["CUNIT3"] = "deg", "deg", "m/s"
fk5 = SkyCoord(ra0 * u.deg, dec0 * u.deg, frame="icrs").fk5
h["CRVAL1"], h["CRVAL2"], h["CRVAL3"] = fk5.dec.deg, fk5.ra.deg, 0.0
h["CRPIX1"], h["CRPIX2"], h["CRPIX3"] = 35.0, 40.0, 1.0
h["CDELT1"], h["CDELT2"], h["CDELT3"] = 1.3 / 3600.0, -1.3 / 3600.0, 500.0
h["RADESYS"], h["EQUINOX"] = "FK5", 2000.0
planes = np.stack([smooth_image(80, 70, 3), smooth_image(80, 70, 4) + 100, np.zeros((80, 70))])
reference("cube", h, planes, 1)

# 4. refused: a TAN image 10 degrees north of the target (no overlap) and an image with no WCS
h = fits.Header()
h["CTYPE1"], h["CTYPE2"] = "RA---TAN", "DEC--TAN"
h["CRVAL1"], h["CRVAL2"] = ra0, dec0 + 10.0
h["CRPIX1"], h["CRPIX2"] = 10.0, 10.0
h["CDELT1"], h["CDELT2"] = -1.0 / 3600.0, 1.0 / 3600.0
fits.PrimaryHDU(data=np.ones((20, 20), np.float32), header=h).writeto(
    os.path.join(out, "far.fits"), overwrite=True)
fits.PrimaryHDU(data=np.ones((20, 20), np.float32)).writeto(
    os.path.join(out, "nowcs.fits"), overwrite=True)
