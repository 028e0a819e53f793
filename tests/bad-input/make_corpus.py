#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Write the bad-input corpus of tests/bad-input/cases.txt into a folder.

    make_corpus.py OUT_DIR SOURCE_ROOT

Standard library only. FITS files are written card by card (FITS Standard 4.0: 80-character
cards, 2880-byte blocks, big-endian data), so each file breaks exactly one thing on purpose. The
good files beside them (good.fits, good.efflux, good.recipe) are accepted by efflux-cli; the test
checks that too, so a refusal is due to the flaw and not to something else."""

import os
import random
import struct
import sys

out, root = sys.argv[1], sys.argv[2]


def card(key, value=None):
    if value is None:
        return key.ljust(80)[:80]
    return (key.ljust(8) + '= ' + value).ljust(80)[:80]


def header(cards, end=True):
    text = ''.join(card(*c) if isinstance(c, tuple) else card(c) for c in cards)
    if end:
        text += card('END')
    text += ' ' * (-len(text) % 2880)
    return text.encode('ascii')


NX, NY, NCH = 8, 7, 12


def good_cards(**change):
    c = [
        ('SIMPLE', '                   T'), ('BITPIX', '                 -32'), ('NAXIS', '                   3'),
        ('NAXIS1', str(NX).rjust(20)), ('NAXIS2', str(NY).rjust(20)), ('NAXIS3', str(NCH).rjust(20)),
        ('CTYPE1', "'RA---TAN'"), ('CRVAL1', '               83.80'), ('CRPIX1', '                 4.5'),
        ('CDELT1', '            -0.00025'), ('CUNIT1', "'deg'"),
        ('CTYPE2', "'DEC--TAN'"), ('CRVAL2', '               -5.40'), ('CRPIX2', '                 4.0'),
        ('CDELT2', '             0.00025'), ('CUNIT2', "'deg'"),
        ('CTYPE3', "'VRAD'"), ('CRVAL3', '             -5000.0'), ('CRPIX3', '                 1.0'),
        ('CDELT3', '              1000.0'), ('CUNIT3', "'m/s'"),
        ('RESTFRQ', '         230.538E+09'), ('SPECSYS', "'LSRK'"), ('BUNIT', "'K'"),
        ('BMAJ', '              0.0004'), ('BMIN', '              0.0004'), ('BPA', '                 0.0'),
    ]
    out = []
    for k, v in c:
        if k in change:
            if change[k] is None:
                continue
            v = change[k]
        out.append((k, v))
    for k, v in change.items():
        if k not in dict(c) and v is not None:
            out.append((k, v))
    return out


def data(values=None, fmt='>f', n=NX * NY * NCH):
    if values is None:
        rnd = random.Random(7)
        values = [rnd.gauss(0.0, 0.1) for _ in range(n)]
    raw = struct.pack('>%d%s' % (len(values), fmt[1]), *values)
    return raw + b'\0' * (-len(raw) % 2880)


def write(name, content, mode='wb'):
    path = os.path.join(out, name)
    with open(path, mode) as f:
        f.write(content)


def fits(name, **change):
    write(name, header(good_cards(**change)) + data())


os.makedirs(out, exist_ok=True)
rnd = random.Random(2026)

# --- FITS files ----------------------------------------------------------------------------------
fits('good.fits')
write('empty.fits', b'')
write('random.fits', bytes(rnd.getrandbits(8) for _ in range(5760)))
write('text.fits', b'this is not a FITS file\n')
write('no-end.fits', header(good_cards(), end=False))
write('truncated-data.fits', header(good_cards()) + data()[:1000])
write('header-only.fits', header(good_cards()))
fits('two-axes.fits', NAXIS='                   2', NAXIS3=None, CTYPE3=None, CRVAL3=None, CRPIX3=None,
     CDELT3=None, CUNIT3=None)
fits('naxis3-zero.fits', NAXIS3='                   0')
fits('huge-claim.fits', NAXIS1='              400000', NAXIS2='              400000', NAXIS3='              100000')
fits('cdelt3-zero.fits', CDELT3='                 0.0')
fits('cdelt1-zero.fits', CDELT1='                 0.0')
fits('cdelt3-text.fits', CDELT3="'fast'")
fits('crval3-nan.fits', CRVAL3='                 NAN')
fits('crpix1-inf.fits', CRPIX1='                 INF')
fits('bitpix-17.fits', BITPIX='                  17')
# control characters in a card's value (found by fuzz-fits): quoted by CFITSIO in its message
fits('bitpix-control.fits', BITPIX='              \n\t\x0e')
fits('ctype3-unclosed.fits', CTYPE3="'VRAD")
fits('ctype3-unknown.fits', CTYPE3="'WXYZ'")
fits('jybeam-no-beam.fits', BUNIT="'Jy/beam'", BMAJ=None, BMIN=None, BPA=None)
fits('freq-no-restfrq.fits', CTYPE3="'FREQ'", CRVAL3='          230.538E+09', CDELT3='             -1.0E+06',
     CUNIT3="'Hz'", RESTFRQ=None)
write('all-nan.fits', header(good_cards()) + data([float('nan')] * (NX * NY * NCH)))
write('gzip-garbage.fits', b'\x1f\x8b\x08\x00' + bytes(rnd.getrandbits(8) for _ in range(3000)))
# a gzip trailer whose ISIZE (RFC 1952) claims 4 GiB from 129 bytes (found by fuzz-fits: CFITSIO
# allocated it whole)
write('gzip-isize.fits', b'\x1f\x8b' + b'\xff' * 127)
write('gzip-short.fits', b'\x1f\x8b\x08\x00')
os.makedirs(os.path.join(out, 'folder.fits'), exist_ok=True)
fits('unreadable.fits')
os.chmod(os.path.join(out, 'unreadable.fits'), 0)
# an output folder nobody may write in (root may: the test skips the case then)
os.makedirs(os.path.join(out, 'readonly'), exist_ok=True)
os.chmod(os.path.join(out, 'readonly'), 0o555)

# --- dossiers -------------------------------------------------------------------------------------
# the lobe outline: a square of 4 x 4 pixels around the map centre (pixel 4.5, 4 is 83.8, -5.4)
SQUARE = '83.8005,-5.4005;83.7995,-5.4005;83.7995,-5.3995;83.8005,-5.3995'


def dossier(name, cube='good.fits', drop=(), **change):
    groups = [
        ('Source', [('name', 'Bad input'), ('ra-deg', '83.8'), ('dec-deg', '-5.4'), ('distance-pc', '400'),
                    ('vsys-kms', '0'), ('inclination-mode', 'none')]),
        ('Assumptions', [('tex-k', '30'), ('co-abundance', '1e-4'), ('opacity', 'none'), ('mc-samples', '0')]),
        ('Cube co', [('path', cube), ('line', '12CO 2-1'), ('role', 'tracer'), ('beam-efficiency', '1'),
                     ('rms-k', '0.1')]),
        ('Lobe blue', [('kind', 'blue'), ('cube', 'co'), ('polygon', SQUARE), ('velocity-kms', '-5;-1')]),
    ]
    text = ''
    for g, keys in groups:
        text += '[%s]\n' % g
        for k, v in keys:
            key = g + '/' + k
            if key in drop:
                continue
            v = change.get(key.replace(' ', '_').replace('/', '__').replace('-', '_'), v)
            text += '%s=%s\n' % (k, v)
        text += '\n'
    write(name, text, 'w')


dossier('good.efflux')
write('empty.efflux', b'')
write('random.efflux', bytes(rnd.getrandbits(8) for _ in range(2000)))
dossier('no-distance.efflux', drop=('Source/distance-pc',))
dossier('distance-negative.efflux', Source__distance_pc='-5')
dossier('distance-nan.efflux', Source__distance_pc='nan')
dossier('distance-inf.efflux', Source__distance_pc='inf')
dossier('vsys-text.efflux', Source__vsys_kms='fast')
dossier('velocity-one.efflux', Lobe_blue__velocity_kms='-4')
dossier('polygon-two.efflux', Lobe_blue__polygon='83.8005,-5.4005;83.7995,-5.3995')
dossier('polygon-crossing.efflux',
        Lobe_blue__polygon='83.8005,-5.4005;83.7995,-5.3995;83.7995,-5.4005;83.8005,-5.3995')
dossier('polygon-point.efflux', Lobe_blue__polygon='83.8,-5.4;83.8,-5.4;83.8,-5.4')
dossier('polygon-nan.efflux', Lobe_blue__polygon='83.8005,-5.4005;nan,-5.4005;83.7995,-5.3995')
dossier('polygon-outside.efflux', Lobe_blue__polygon='10.0005,40.0;9.9995,40.0;10.0,40.001')
dossier('lobe-unknown-cube.efflux', Lobe_blue__cube='nosuchcube')
dossier('cube-missing-file.efflux', cube='nothere.fits')
dossier('cube-huge-claim.efflux', cube='huge-claim.fits')
dossier('cube-truncated.efflux', cube='truncated-data.fits')
dossier('kind-purple.efflux', Lobe_blue__kind='purple')
dossier('incl-range-missing.efflux', Source__inclination_mode='range')
dossier('tex-zero.efflux', Assumptions__tex_k='0')
dossier('beam-eff-zero.efflux', Cube_co__beam_efficiency='0')
dossier('abundance-negative.efflux', Assumptions__co_abundance='-1e-4')
dossier('mc-samples-huge.efflux', Assumptions__mc_samples='1000000000000')
dossier('rms-inf.efflux', Cube_co__rms_k='inf')

# --- recipes --------------------------------------------------------------------------------------
with open(os.path.join(root, 'sample-data', 'demo.recipe')) as f:
    demo = f.read()
# a small grid so that the good recipe is quick
small = demo.replace('nx=96', 'nx=16').replace('ny=96', 'ny=16').replace('pixel-arcsec=0.5', 'pixel-arcsec=3')
write('good.recipe', small, 'w')
write('empty.recipe', b'')
write('random.recipe', bytes(rnd.getrandbits(8) for _ in range(1500)))
write('nx-zero.recipe', small.replace('nx=16', 'nx=0'), 'w')
write('grid-huge.recipe', small.replace('nx=16', 'nx=200000').replace('ny=16', 'ny=200000').replace('nchan=100', 'nchan=100000'), 'w')
write('dv-zero.recipe', small.replace('dv-kms=0.5', 'dv-kms=0'), 'w')
write('distance-text.recipe', small.replace('distance-pc=350', 'distance-pc=far'), 'w')
write('gamma-nan.recipe', small.replace('gamma=1.8', 'gamma=nan'), 'w')
