# SPDX-License-Identifier: GPL-3.0-or-later
"""Independent check of efflux-cli export (tests/test-export.c).

  export_check.py masks2d MASKS.fits CUBE.fits DOSSIER
  export_check.py masks3d MASKS.fits CUBE.fits DOSSIER
  export_check.py stcs FILE.stcs DOSSIER

Masks are read with astropy.io.fits and their coordinates with astropy.wcs.WCS: the mask's sky
WCS must give the same positions as the cube's own (astropy reading the cube), the pixels set
must be exactly those whose centre lies inside the dossier's polygon taken to pixels by astropy
(even-odd rule, numpy), and in 3-D the planes set must be those whose VRAD centre (astropy) lies
in the lobe's velocity range. STC-S lines are parsed by a regular expression after the IVOA note
"STC-S: Space-Time Coordinate (STC) Metadata Linear String Implementation"; the vertices must be
the dossier's (same order or reversed) and the outline counter-clockwise as seen from inside the
sphere with RA increasing to the left (IVOA STC 1.30 schema documentation of Polygon).
Prints one line per lobe; exits 1 with a message on the first mismatch."""
import configparser
import re
import sys

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS


def fail(msg):
    print("MISMATCH: " + msg)
    sys.exit(1)


def read_lobes(path):
    cp = configparser.ConfigParser(interpolation=None, comment_prefixes=("#",), delimiters=("=",))
    cp.optionxform = str
    with open(path) as fh:
        cp.read_file(fh)
    lobes = []
    for sec in cp.sections():
        if not sec.startswith("Lobe "):
            continue
        verts = [tuple(float(x) for x in p.split(",")) for p in cp[sec]["polygon"].split(";")]
        v1, v2 = (float(x) for x in cp[sec]["velocity-kms"].split(";"))
        lobes.append((sec[5:], cp[sec]["kind"], np.array(verts), min(v1, v2), max(v1, v2)))
    return lobes


def inside(px, py, xs, ys):
    """Even-odd rule for points (xs, ys) against the polygon (px, py)."""
    res = np.zeros(xs.shape, bool)
    n = len(px)
    for i in range(n):
        x1, y1, x2, y2 = px[i], py[i], px[(i + 1) % n], py[(i + 1) % n]
        cond = (y1 <= ys) != (y2 <= ys)
        with np.errstate(divide="ignore", invalid="ignore"):
            xc = x1 + (ys - y1) * (x2 - x1) / (y2 - y1)
        res ^= cond & (xs < xc)
    return res


def masks(kind, mpath, cpath, dpath):
    lobes = read_lobes(dpath)
    cube_hdr = fits.getheader(cpath)
    cube_wcs = WCS(cube_hdr)
    hdul = fits.open(mpath)
    if hdul[0].header["NLOBES"] != len(lobes) or len(hdul) != len(lobes) + 1:
        fail("expected %d lobe extensions" % len(lobes))
    for i, (name, lkind, verts, v1, v2) in enumerate(lobes):
        h = hdul[i + 1]
        if h.header["EXTNAME"] != name or h.header["LOBEKIND"] != lkind:
            fail("extension %d is %s, expected %s" % (i + 1, h.header["EXTNAME"], name))
        data = h.data
        w = WCS(h.header)
        ny, nx = data.shape[-2:]
        if (nx, ny) != (cube_hdr["NAXIS1"], cube_hdr["NAXIS2"]):
            fail("%s: map size %dx%d" % (name, nx, ny))
        # sky WCS: the same positions as the cube's at the corners and the centre
        xs = np.array([0, nx - 1, 0, nx - 1, nx / 2.0])
        ys = np.array([0, 0, ny - 1, ny - 1, ny / 2.0])
        a = w.celestial.pixel_to_world_values(xs, ys)
        b = cube_wcs.celestial.pixel_to_world_values(xs, ys)
        if not (np.allclose(a[0], b[0], rtol=0, atol=1e-11) and np.allclose(a[1], b[1], rtol=0, atol=1e-11)):
            fail("%s: the sky WCS differs from the cube's" % name)
        # pixels inside, from the dossier polygon taken to pixels by astropy
        px, py = cube_wcs.celestial.world_to_pixel_values(verts[:, 0], verts[:, 1])
        yy, xx = np.mgrid[0:ny, 0:nx]
        want = inside(np.asarray(px), np.asarray(py), xx.astype(float), yy.astype(float))
        if kind == "masks2d":
            if data.ndim != 2:
                fail("%s: expected a 2-D mask" % name)
            if not np.array_equal(data.astype(bool), want) or set(np.unique(data)) - {0, 1}:
                fail("%s: %d pixels set, %d expected" % (name, int(data.sum()), int(want.sum())))
            print("%s %d" % (name, int(data.sum())))
        else:
            if data.ndim != 3:
                fail("%s: expected a 3-D mask" % name)
            nchan = data.shape[0]
            if nchan != cube_hdr["NAXIS3"]:
                fail("%s: %d channels" % (name, nchan))
            spec = w.spectral
            cube_spec = cube_wcs.spectral
            vel = spec.pixel_to_world_values(np.arange(nchan))
            vel_cube = cube_spec.pixel_to_world_values(np.arange(nchan))
            if spec.wcs.ctype[0] != "VRAD" or not np.allclose(vel, vel_cube, rtol=0, atol=1e-6):
                fail("%s: the velocity axis differs from the cube's" % name)
            kms = vel / 1000.0 if spec.wcs.cunit[0] == "m / s" else vel
            chans = (kms >= v1 - 1e-9) & (kms <= v2 + 1e-9)
            for k in range(nchan):
                plane = data[k].astype(bool)
                if chans[k] and not np.array_equal(plane, want):
                    fail("%s: plane %d is not the 2-D mask" % (name, k))
                if not chans[k] and plane.any():
                    fail("%s: plane %d (%.3f km/s) outside %g..%g is set" % (name, k, kms[k], v1, v2))
            print("%s %d %d" % (name, int(data.sum()), int(chans.sum())))


POLY = re.compile(r"^Polygon\s+ICRS\s+TOPOCENTER((?:\s+[-+]?[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?)+)\s*$")


def stcs(spath, dpath):
    lobes = read_lobes(dpath)
    with open(spath) as fh:
        lines = [l.rstrip("\n") for l in fh if not l.startswith("#") and l.strip()]
    if len(lines) != len(lobes):
        fail("%d polygons for %d lobes" % (len(lines), len(lobes)))
    for line, (name, _, verts, _, _) in zip(lines, lobes):
        m = POLY.match(line)
        if m is None:
            fail("not an STC-S polygon: " + line)
        nums = np.array([float(x) for x in m.group(1).split()])
        if len(nums) % 2:
            fail("odd number of coordinates")
        got = nums.reshape(-1, 2)
        same = len(got) == len(verts) and np.allclose(got, verts, rtol=0, atol=6e-11)
        rev = len(got) == len(verts) and np.allclose(got, verts[::-1], rtol=0, atol=6e-11)
        if not (same or rev):
            fail("%s: vertices differ from the dossier's" % name)
        # counter-clockwise seen from inside, RA to the left: x = -dRA cos(dec), y = dDec
        x = -(got[:, 0] - got[0, 0]) * np.cos(np.radians(got[0, 1]))
        y = got[:, 1] - got[0, 1]
        area = 0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)
        if not area > 0:
            fail("%s: not counter-clockwise" % name)
        print("%s %d %s" % (name, len(got), "same" if same else "reversed"))


if __name__ == "__main__":
    if sys.argv[1] in ("masks2d", "masks3d"):
        masks(sys.argv[1], sys.argv[2], sys.argv[3], sys.argv[4])
    elif sys.argv[1] == "stcs":
        stcs(sys.argv[2], sys.argv[3])
    else:
        fail("unknown mode " + sys.argv[1])
