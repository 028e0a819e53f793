# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference values for tests/test-render.c, computed independently of the C code.

  render_ref.py cubehelix START ROT HUE GAMMA   256 lines "R G B" (bytes), Green (2011) formula
  render_ref.py lab FILE                        L* a* b* of each "R G B" byte triple in FILE
  render_ref.py stretch                         astropy.visualization stretches of fixed inputs
  render_ref.py percentile FILE P1 P2 ...       numpy.nanpercentile of a raw float32 file
  render_ref.py gnomonic RA0 DEC0 RA DEC        xi, eta (arcsec) through astropy.wcs (TAN)
"""
import sys

import numpy as np


def cubehelix(start, rot, hue, gamma):
    # Green, D. A. 2011, Bull. Astr. Soc. India 39, 289, eq. 2 (written out here from the paper's
    # definition: grey level lambda^gamma plus a deviation of amplitude h l (1 - l) / 2 along a
    # helix of angle phi = 2 pi (s / 3 + r lambda)).
    lam = np.linspace(0.0, 1.0, 256)
    l = lam ** gamma
    a = hue * l * (1.0 - l) / 2.0
    phi = 2.0 * np.pi * (start / 3.0 + rot * lam)
    m = np.array([[-0.14861, 1.78277], [-0.29227, -0.90649], [1.97294, 0.0]])
    rgb = l[:, None] + a[:, None] * (np.cos(phi)[:, None] * m[:, 0] + np.sin(phi)[:, None] * m[:, 1])
    rgb = np.clip(rgb, 0.0, 1.0)
    for r, g, b in np.rint(rgb * 255.0).astype(int):
        print(r, g, b)


def srgb_to_lab(rgb8):
    # IEC 61966-2-1 (sRGB) decoding and matrix, CIE 15:2004 L*a*b* with the D65 white.
    c = np.asarray(rgb8, dtype=float) / 255.0
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124564, 0.3575761, 0.1804375],
                  [0.2126729, 0.7151522, 0.0721750],
                  [0.0193339, 0.1191920, 0.9503041]])
    xyz = lin @ m.T / np.array([0.95047, 1.0, 1.08883])
    d = 6.0 / 29.0
    f = np.where(xyz > d ** 3, np.cbrt(xyz), xyz / (3 * d * d) + 4.0 / 29.0)
    L = 116.0 * f[:, 1] - 16.0
    a = 500.0 * (f[:, 0] - f[:, 1])
    b = 200.0 * (f[:, 1] - f[:, 2])
    return L, a, b


def main():
    cmd = sys.argv[1]
    if cmd == 'cubehelix':
        cubehelix(*map(float, sys.argv[2:6]))
    elif cmd == 'lab':
        rgb = np.loadtxt(sys.argv[2], dtype=float).reshape(-1, 3)
        L, a, b = srgb_to_lab(rgb)
        for row in zip(L, a, b):
            print('%.6f %.6f %.6f' % row)
    elif cmd == 'stretch':
        from astropy.visualization import (AsinhStretch, LinearStretch, LogStretch,
                                           SqrtStretch)
        x = np.array([0.0, 1e-4, 0.001, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 1.0])
        for name, s in (('linear', LinearStretch()), ('sqrt', SqrtStretch()),
                        ('log', LogStretch(a=1000.0)), ('asinh', AsinhStretch(a=0.1))):
            print(name, ' '.join('%.17g %.17g' % (xi, yi) for xi, yi in zip(x, s(x, clip=True))))
    elif cmd == 'percentile':
        data = np.fromfile(sys.argv[2], dtype='<f4')
        ps = [float(p) for p in sys.argv[3:]]
        print(' '.join('%.9g' % v for v in np.nanpercentile(data, ps)))
    elif cmd == 'gnomonic':
        from astropy.wcs import WCS
        ra0, dec0, ra, dec = map(float, sys.argv[2:6])
        w = WCS(naxis=2)
        w.wcs.ctype = ['RA---TAN', 'DEC--TAN']
        w.wcs.crval = [ra0, dec0]
        w.wcs.crpix = [0.0, 0.0]
        w.wcs.cdelt = [-1.0 / 3600.0, 1.0 / 3600.0]
        px, py = w.wcs_world2pix([[ra, dec]], 1)[0]  # FITS 1-based, like CRPIX
        # pixel offsets from CRPIX with CDELT1 = -1" are -xi and eta in arcsec
        print('%.12g %.12g' % (-(px - 0.0), py - 0.0))
    else:
        sys.exit('unknown command ' + cmd)


main()
