# SPDX-License-Identifier: GPL-3.0-or-later
"""Independent checks of Efflux figures (run by tests/test-figure.c with EFFLUX_PYTHON).

  figure_check.py svg FILE          -> JSON {"paths": N, "images": M, "width": W, "height": H}
      parsed with xml.etree (Python standard library): counts <path> and <image> elements.
  figure_check.py pdf FILE          -> JSON {"pages": N, "mediaboxes": [[w, h], ...]}
      the page objects (/Type /Page) and their /MediaBox in points (PDF 1.7, ISO 32000-1,
      section 7.7.3.3: page objects and MediaBox), read from the file's uncompressed
      object dictionaries.
  figure_check.py pixels CUBE RA DEC [RA DEC ...] -> JSON [[x, y], ...]
      0-based pixel positions of ICRS positions (degrees) through astropy.wcs on the cube's header.
"""
import json
import re
import sys
import xml.etree.ElementTree as ET


def svg(path):
    root = ET.parse(path).getroot()
    paths = images = 0
    for el in root.iter():
        tag = el.tag.rsplit('}', 1)[-1]
        if tag == 'path':
            paths += 1
        elif tag == 'image':
            images += 1

    def pt(v):
        return float(re.match(r'[0-9.]+', v).group(0))

    return {"paths": paths, "images": images, "width": pt(root.get('width')),
            "height": pt(root.get('height'))}


def pdf(path):
    data = open(path, 'rb').read()
    if not data.startswith(b'%PDF-'):
        raise SystemExit('not a PDF')
    boxes = []
    # Each page object: "<< /Type /Page" (not /Pages) ... "/MediaBox [ x0 y0 x1 y1 ]".
    for m in re.finditer(rb'/Type\s*/Page(?!s)(.*?)>>', data, re.S):
        b = re.search(rb'/MediaBox\s*\[\s*([-0-9.]+)\s+([-0-9.]+)\s+([-0-9.]+)\s+([-0-9.]+)\s*\]',
                      m.group(1))
        if b is None:
            # inherited from the page tree
            b = re.search(rb'/Type\s*/Pages.*?/MediaBox\s*\[\s*([-0-9.]+)\s+([-0-9.]+)\s+'
                          rb'([-0-9.]+)\s+([-0-9.]+)\s*\]', data, re.S)
        x0, y0, x1, y1 = (float(v) for v in b.groups())
        boxes.append([x1 - x0, y1 - y0])
    return {"pages": len(boxes), "mediaboxes": boxes}


def pixels(cube, coords):
    from astropy.io import fits
    from astropy.wcs import WCS
    w = WCS(fits.getheader(cube)).celestial
    out = []
    for i in range(0, len(coords), 2):
        x, y = w.all_world2pix(float(coords[i]), float(coords[i + 1]), 0)
        out.append([float(x), float(y)])
    return out


def main():
    what = sys.argv[1]
    if what == 'svg':
        print(json.dumps(svg(sys.argv[2])))
    elif what == 'pdf':
        print(json.dumps(pdf(sys.argv[2])))
    elif what == 'pixels':
        print(json.dumps(pixels(sys.argv[2], sys.argv[3:])))
    else:
        raise SystemExit('unknown check ' + what)


if __name__ == '__main__':
    main()
