#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Write small FITS cubes with astropy.io.fits and their expected values, computed with astropy
(astropy.wcs for the world coordinates, astropy.units spectral equivalencies for velocities,
astropy.coordinates for ICRS positions and the LSRK frame, astropy.units.brightness_temperature
for Jy/beam -> K), into OUTDIR/expect.ini (GLib key file, one group per cube).

Usage: make_cubes.py OUTDIR
Run by tests/test-cube-astropy.c with Debian's python3 (astropy 5.2, numpy 1.24).
"""

import os
import sys
import warnings

import numpy as np
from astropy import units as u
from astropy.coordinates import ICRS, SkyCoord, SpectralCoord
from astropy.io import fits
from astropy.wcs import WCS, FITSFixedWarning
from astropy.wcs.utils import pixel_to_skycoord

warnings.simplefilter("ignore", FITSFixedWarning)
warnings.simplefilter("ignore", UserWarning)

NX, NY, NCHAN = 7, 5, 6
C_KMS = 299792.458

OUT = sys.argv[1]
groups = []


def fmt_list(values):
    out = []
    for v in values:
        if isinstance(v, (float, np.floating)) and np.isnan(v):
            out.append("nan")
        else:
            out.append(repr(float(v)))
    return ";".join(out)


def logical_raw(rng, dtype, lo, hi):
    """Raw stored values in logical order [x, y, k]."""
    if np.issubdtype(dtype, np.integer):
        return rng.integers(lo, hi, size=(NX, NY, NCHAN), endpoint=False).astype(dtype)
    return rng.uniform(lo, hi, size=(NX, NY, NCHAN)).astype(dtype)


def make(name, *, order=("lng", "lat", "spec"), sky=None, spec=None, dtype=np.float32,
         bscale=None, bzero=None, blank=None, nans=False, extra_axis=None, cards=None,
         bunit="K", container="primary", beams=None, seed=1, lo=-3.0, hi=7.0,
         jy_beam=None, expect_notes=()):
    rng = np.random.default_rng(seed)
    raw = logical_raw(rng, dtype, lo, hi)
    if blank is not None:
        raw[1, 2, 3] = blank
        raw[4, 0, 0] = blank
    if nans:
        raw[2, 1, 1] = np.nan
        raw[6, 4, 5] = np.nan

    sky = dict(sky or {})
    spec = dict(spec or {})
    ctype = {"lng": sky.get("ctype1", "RA---SIN"), "lat": sky.get("ctype2", "DEC--SIN"),
             "spec": spec.get("ctype", "VRAD")}
    crval = {"lng": sky.get("crval1", 52.2630), "lat": sky.get("crval2", 31.2550),
             "spec": spec.get("crval", 5.0)}
    cdelt = {"lng": sky.get("cdelt1", -0.5 / 3600), "lat": sky.get("cdelt2", 0.5 / 3600),
             "spec": spec.get("cdelt", -0.25)}
    crpix = {"lng": sky.get("crpix1", 4.0), "lat": sky.get("crpix2", 3.0),
             "spec": spec.get("crpix", 2.5)}
    cunit = {"lng": sky.get("cunit1", "deg"), "lat": sky.get("cunit2", "deg"),
             "spec": spec.get("cunit", "km/s")}
    size = {"lng": NX, "lat": NY, "spec": NCHAN}

    axes = list(order)
    perm = [("lng", "lat", "spec").index(a) for a in axes]
    arr = np.transpose(raw, perm)                 # FITS axis order, axis 1 first
    naxis = 3
    if extra_axis is not None:
        n4 = extra_axis[1]
        planes = [arr] + [np.transpose(logical_raw(rng, dtype, lo, hi), perm) for _ in range(n4 - 1)]
        arr = np.stack(planes, axis=-1)
        naxis = 4
    data = np.ascontiguousarray(arr.T)            # numpy order: last FITS axis first

    hdr = fits.Header()
    for i, a in enumerate(axes, start=1):
        hdr["CTYPE%d" % i] = ctype[a]
        hdr["CRVAL%d" % i] = crval[a]
        hdr["CDELT%d" % i] = cdelt[a]
        hdr["CRPIX%d" % i] = crpix[a]
        if cunit[a] is not None:
            hdr["CUNIT%d" % i] = cunit[a]
    if extra_axis is not None:
        hdr["CTYPE4"] = extra_axis[0]
        hdr["CRVAL4"] = 1.0
        hdr["CDELT4"] = 1.0
        hdr["CRPIX4"] = 1.0
    if bunit is not None:
        hdr["BUNIT"] = bunit
    hdr["OBJECT"] = "test " + name
    for k, v in (cards or {}).items():
        hdr[k] = v
    if "RADESYS" not in hdr and not ctype["lng"].startswith("GLON") and "EQUINOX" not in hdr:
        hdr["RADESYS"] = "ICRS"

    path = os.path.join(OUT, name + (".fits.gz" if container == "gz" else ".fits"))
    if container == "rice":
        hdu = fits.CompImageHDU(data=data, header=hdr, compression_type="RICE_1")
    else:
        hdu = fits.ImageHDU(data=data, header=hdr) if container == "ext" else fits.PrimaryHDU(data=data, header=hdr)
    # integer scaling as stored: BSCALE/BZERO/BLANK written by hand so the raw integers stay
    if bscale is not None:
        hdu.header["BSCALE"] = bscale
    if bzero is not None:
        hdu.header["BZERO"] = bzero
    if blank is not None:
        hdu.header["BLANK"] = blank
    hdus = [fits.PrimaryHDU(), hdu] if container in ("ext", "rice") else [hdu]
    if beams is not None:
        cols = [fits.Column(name="BMAJ", format="E", unit="arcsec", array=beams[0]),
                fits.Column(name="BMIN", format="E", unit="arcsec", array=beams[1]),
                fits.Column(name="BPA", format="E", unit="deg", array=beams[2]),
                fits.Column(name="CHAN", format="J", array=np.arange(NCHAN)),
                fits.Column(name="POL", format="J", array=np.zeros(NCHAN, dtype=np.int32))]
        bt = fits.BinTableHDU.from_columns(cols)
        bt.header["EXTNAME"] = "BEAMS"
        hdus.append(bt)
    fits.HDUList(hdus).writeto(path, overwrite=True)

    # ---- expected values, read back with astropy ------------------------------------------
    with fits.open(path, do_not_scale_image_data=True) as hl:
        h = None
        for cand in hl:
            if cand.is_image and cand.header.get("NAXIS", 0) >= 3:
                h = cand
                break
        hdu_index = hl.index_of(h) + 1 if container != "rice" else 2
        rawback = np.asarray(h.data)
        header = h.header.copy()
    if container == "rice":
        # astropy.io.fits gives the decompressed image; with RICE on integers that is lossless
        with fits.open(path) as hl:
            header = hl[1].header.copy()
            rawback = np.asarray(hl[1].data)
            # CompImageHDU data come out scaled already
            bscale_e, bzero_e = 1.0, 0.0
    else:
        bscale_e = header.get("BSCALE", 1.0)
        bzero_e = header.get("BZERO", 0.0)
    full = rawback.T                                   # FITS axis order
    if extra_axis is not None:
        full = full[..., 0]
    inv = np.argsort(perm)
    log = np.transpose(full, inv)                      # logical [x, y, k]
    phys = log.astype(np.float64) * bscale_e + bzero_e
    if blank is not None and container != "rice":
        phys[log == blank] = np.nan
    phys32 = phys.astype(np.float32)

    # world coordinates: astropy.wcs (wcslib underneath, with astropy's header fixes)
    w = WCS(header)
    nax = w.wcs.naxis
    ispec = w.wcs.spec
    ilng, ilat = w.wcs.lng, w.wcs.lat
    pix = np.zeros((NCHAN, nax))
    for i in range(nax):
        pix[:, i] = w.wcs.crpix[i] - 1.0
    pix[:, ispec] = np.arange(NCHAN)
    world = w.wcs_pix2world(pix, 0)[:, ispec]
    stype = w.wcs.ctype[ispec][:4]
    q = world * u.Unit(w.wcs.cunit[ispec] or {"FREQ": "Hz", "WAVE": "m"}.get(stype, "m/s"))
    nu0 = w.wcs.restfrq if w.wcs.restfrq > 0 else (
        (w.wcs.restwav * u.m).to_value(u.Hz, u.spectral()) if w.wcs.restwav > 0 else 0.0)
    if stype == "FREQ":
        freq = q.to(u.Hz)
    elif stype == "WAVE":
        freq = q.to(u.Hz, equivalencies=u.spectral())
    elif stype == "VRAD":
        freq = q.to(u.Hz, equivalencies=u.doppler_radio(nu0 * u.Hz)) if nu0 > 0 else None
    elif stype == "VOPT":
        freq = q.to(u.Hz, equivalencies=u.doppler_optical(nu0 * u.Hz))
    elif stype == "VELO":
        freq = q.to(u.Hz, equivalencies=u.doppler_relativistic(nu0 * u.Hz))
    elif stype == "ZOPT":
        # redshift: nu = nu0 / (1 + z), through astropy's optical convention v = c z
        freq = (q.to_value(u.dimensionless_unscaled) * C_KMS * u.km / u.s).to(
            u.Hz, equivalencies=u.doppler_optical(nu0 * u.Hz))
    else:
        raise SystemExit("unhandled spectral type " + stype)

    # map centre (0-based pixel ((nx-1)/2, (ny-1)/2)) in ICRS
    # astropy's pixel_to_skycoord takes the sub-WCS (WCSSUB_LONGITUDE, WCSSUB_LATITUDE): xp is the
    # longitude-axis pixel and yp the latitude-axis pixel, whatever their order in the file
    cel = w.celestial

    def to_icrs(x, y):
        c = pixel_to_skycoord(x, y, cel, origin=0).icrs
        return c.ra.deg, c.dec.deg

    centre = to_icrs((NX - 1) / 2.0, (NY - 1) / 2.0)
    specsys = w.wcs.specsys.strip()
    if stype == "VRAD" and nu0 <= 0:
        vel = q.to_value(u.km / u.s)
        assert specsys in ("", "LSRK")
    elif specsys in ("BARYCENT", "HELIOCEN"):
        # astropy SpectralCoord: observer at rest at the barycentre, target at the map centre;
        # then the observer at rest in astropy's LSRK frame
        obs = ICRS(x=0 * u.km, y=0 * u.km, z=0 * u.km, v_x=0 * u.km / u.s, v_y=0 * u.km / u.s,
                   v_z=0 * u.km / u.s, representation_type="cartesian", differential_type="cartesian")
        tgt = SkyCoord(centre[0] * u.deg, centre[1] * u.deg, distance=1 * u.Mpc,
                       radial_velocity=0 * u.km / u.s, frame="icrs")
        sc = SpectralCoord(freq, observer=obs, target=tgt)
        sc2 = sc.with_observer_stationary_relative_to("lsrk")
        vel = sc2.to_value(u.km / u.s, doppler_convention="radio", doppler_rest=nu0 * u.Hz)
    else:
        vel = freq.to_value(u.km / u.s, equivalencies=u.doppler_radio(nu0 * u.Hz))

    g = {"file": os.path.basename(path), "hdu": hdu_index, "nx": NX, "ny": NY, "nchan": NCHAN,
         "velocity_kms": fmt_list(vel), "restfreq_hz": repr(float(nu0))}

    # Jy/beam -> K: astropy.units.brightness_temperature at each channel's sky frequency
    factor = np.ones(NCHAN)
    if jy_beam is not None:
        # the BEAMS columns are float32 ('E') in the file: use the stored values
        bm = np.asarray(beams[0], dtype=np.float32).astype(np.float64) if beams is not None else np.full(NCHAN, header["BMAJ"] * 3600)
        bn = np.asarray(beams[1], dtype=np.float32).astype(np.float64) if beams is not None else np.full(NCHAN, header["BMIN"] * 3600)
        sky_freq = freq.to_value(u.Hz)
        for k in range(NCHAN):
            omega = 2 * np.pi * (bm[k] * u.arcsec) * (bn[k] * u.arcsec) / (8 * np.log(2))
            factor[k] = (1 * u.Jy / omega).to_value(
                u.K, equivalencies=u.brightness_temperature(sky_freq[k] * u.Hz))
        factor *= jy_beam
        g["k_per_unit"] = fmt_list(factor)
    vals = []
    for y in range(NY):
        for x in range(NX):
            for k in range(NCHAN):
                v = phys32[x, y, k]
                if jy_beam is not None and np.isfinite(v):
                    v = np.float32(np.float64(v) * factor[k])
                vals.append(v)
    g["values"] = fmt_list(vals)
    g["values_rtol"] = "1e-6" if jy_beam is not None else "0"

    pts = [(0, 0), (NX - 1, 0), (0, NY - 1), (NX - 1, NY - 1), ((NX - 1) / 2, (NY - 1) / 2), (2.3, 1.7)]
    pos = []
    radec = []
    for (x, y) in pts:
        ra, dec = to_icrs(x, y)
        pos += [x, y]
        radec += [ra, dec]
    g["pixels"] = fmt_list(pos)
    g["icrs_deg"] = fmt_list(radec)
    if expect_notes:
        g["notes_contain"] = ";".join(expect_notes)
    groups.append((name, g))


os.makedirs(OUT, exist_ok=True)
F230 = 230.538e9

# every BITPIX, with BSCALE/BZERO/BLANK and NaN; projections; frames; spectral types and units
make("f32-sin-vrad-kms", nans=True)
make("f64-tan-fk5-vrad-ms", dtype=np.float64, nans=True,
     sky={"ctype1": "RA---TAN", "ctype2": "DEC--TAN"},
     spec={"crval": 5000.0, "cdelt": -250.0, "cunit": "m/s"},
     cards={"RADESYS": "FK5", "EQUINOX": 2000.0, "SPECSYS": "LSRK"},
     expect_notes=("FK5",))
make("u8-arc-freq-hz", dtype=np.uint8, lo=0, hi=255, bscale=0.1, bzero=-5.0, blank=255,
     sky={"ctype1": "RA---ARC", "ctype2": "DEC--ARC"},
     spec={"ctype": "FREQ", "crval": F230, "cdelt": 1.5e5, "cunit": "Hz"},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK"})
make("i16-ncp-freq-mhz", dtype=np.int16, lo=-30000, hi=30000, bscale=0.01, bzero=3.0, blank=-32768,
     sky={"ctype1": "RA---NCP", "ctype2": "DEC--NCP"},
     spec={"ctype": "FREQ", "crval": 115271.2018, "cdelt": -0.2, "cunit": "MHz"},
     cards={"RESTFREQ": 115.2712018e9, "SPECSYS": "LSRK"},
     expect_notes=("celfix",))
make("i32-sfl-gal-freq-ghz", dtype=np.int32, lo=-2000000, hi=2000000, bscale=1e-4, bzero=0.5,
     blank=-2147483648,
     sky={"ctype1": "GLON-SFL", "ctype2": "GLAT-SFL", "crval1": 160.2, "crval2": -20.3,
          "cdelt1": -1.0 / 3600, "cdelt2": 1.0 / 3600},
     spec={"ctype": "FREQ", "crval": 345.79599, "cdelt": 0.000488, "cunit": "GHz"},
     cards={"RESTFRQ": 345.7959899e9, "SPECSYS": "LSRK"}, expect_notes=("galactic",))
make("i64-gls-vopt", dtype=np.int64, lo=-10**9, hi=10**9, bscale=1e-8, bzero=1.0,
     sky={"ctype1": "RA---GLS", "ctype2": "DEC--GLS"},
     spec={"ctype": "VOPT", "crval": 12000.0, "cdelt": 300.0, "cunit": "m/s"},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK"}, expect_notes=("celfix",))
make("f32-car-fra", order=("spec", "lng", "lat"), nans=True,
     sky={"ctype1": "RA---CAR", "ctype2": "DEC--CAR", "crval2": 0.0, "crval1": 83.8},
     spec={"ctype": "FREQ", "crval": 1.0e11, "cdelt": 2.0e5, "cunit": "Hz", "crpix": 1.0},
     cards={"RESTFRQ": 1.0e11, "SPECSYS": "LSRK"})
make("f32-tan-dvr", order=("lat", "spec", "lng"),
     sky={"ctype1": "RA---TAN", "ctype2": "DEC--TAN", "crval2": -45.5},
     spec={"ctype": "VRAD", "crval": -3.0, "cdelt": 0.5, "cunit": "km/s"},
     cards={"SPECSYS": "LSRK"})
make("f32-stokes1", extra_axis=("STOKES", 1), cards={"SPECSYS": "LSRK"})
make("f32-stokes2", extra_axis=("STOKES", 2), cards={"SPECSYS": "LSRK"}, expect_notes=("STOKES",))
make("f32-blank4", extra_axis=("", 1), cards={"SPECSYS": "LSRK"})
make("f32-pc-rotated", sky={"ctype1": "RA---TAN", "ctype2": "DEC--TAN"},
     cards={"SPECSYS": "LSRK", "PC1_1": np.cos(np.radians(20.0)), "PC1_2": -np.sin(np.radians(20.0)),
            "PC2_1": np.sin(np.radians(20.0)), "PC2_2": np.cos(np.radians(20.0))})
make("f32-wcsaxes4", cards={"SPECSYS": "LSRK", "WCSAXES": 4, "CTYPE4": "STOKES", "CRVAL4": 1.0,
                            "CDELT4": 1.0, "CRPIX4": 1.0})
make("f32-velo-lsr", spec={"ctype": "VELO-LSR", "crval": 6000.0, "cdelt": -500.0, "cunit": "m/s"},
     cards={"VELREF": 257, "RESTFRQ": F230}, expect_notes=("spcfix",))
make("f32-felo-lsr", spec={"ctype": "FELO-LSR", "crval": 6000.0, "cdelt": -500.0, "cunit": "m/s"},
     cards={"RESTFRQ": F230}, expect_notes=("spcfix",))
make("f32-velo-rel", spec={"ctype": "VELO", "crval": 20000.0, "cdelt": 1000.0, "cunit": "m/s"},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK"})
make("f32-wave-um", spec={"ctype": "WAVE", "crval": 1300.41, "cdelt": 0.0008, "cunit": "um"},
     cards={"RESTWAV": 1300.4e-6, "SPECSYS": "LSRK"})
make("f32-vrad-nocunit", spec={"ctype": "VRAD", "crval": 7000.0, "cdelt": 200.0, "cunit": None},
     cards={"SPECSYS": "LSRK"})
make("f32-freq-barycent",
     spec={"ctype": "FREQ", "crval": F230, "cdelt": -2.4e5, "cunit": "Hz"},
     cards={"RESTFRQ": F230, "SPECSYS": "BARYCENT"}, expect_notes=("BARYCENT to LSRK",))
make("f32-fk4", sky={"ctype1": "RA---TAN", "ctype2": "DEC--TAN", "crval1": 51.5, "crval2": 31.0},
     cards={"RADESYS": "FK4", "EQUINOX": 1950.0, "SPECSYS": "LSRK"}, expect_notes=("FK4",))
make("f32-degree-unit", sky={"cunit1": "DEGREE", "cunit2": "DEGREE"}, cards={"SPECSYS": "LSRK"},
     expect_notes=("unitfix",))
make("f32-no-specsys", expect_notes=("no SPECSYS",))
make("f32-velo-hel", spec={"ctype": "VELO-HEL", "crval": 6000.0, "cdelt": -500.0, "cunit": "m/s"},
     cards={"VELREF": 258, "RESTFRQ": F230}, expect_notes=("spcfix", "BARYCENT to LSRK"))
make("f32-vrad-topocent", spec={"ctype": "VRAD", "crval": 6000.0, "cdelt": -500.0, "cunit": "m/s"},
     cards={"RESTFRQ": F230, "SPECSYS": "TOPOCENT"}, expect_notes=("TOPOCENT",))
make("f32-zopt", spec={"ctype": "ZOPT", "crval": 2.0e-5, "cdelt": 1.0e-6, "cunit": ""},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK"})
# brightness units
make("f32-k-tmb", bunit="K (Tmb)", cards={"SPECSYS": "LSRK"})
make("f32-kelvin", bunit="Kelvin", cards={"SPECSYS": "LSRK"})
make("f32-jybeam-upper", bunit="JY/BEAM", jy_beam=1.0,
     spec={"ctype": "FREQ", "crval": F230, "cdelt": 2.4e5, "cunit": "Hz"},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK", "BMAJ": 1.0 / 3600, "BMIN": 0.8 / 3600, "BPA": 30.0})
make("f32-jybeam-m1", bunit="Jy beam-1", jy_beam=1.0,
     cards={"RESTFRQ": 345.7959899e9, "SPECSYS": "LSRK", "BMAJ": 0.5 / 3600, "BMIN": 0.5 / 3600,
            "BPA": 0.0})
make("f32-mjybeam", bunit="mJy/beam", jy_beam=1e-3,
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK", "BMAJ": 0.3 / 3600, "BMIN": 0.2 / 3600, "BPA": 10.0})
make("f32-jypixel", bunit="Jy/pixel", cards={"SPECSYS": "LSRK"}, expect_notes=("Jy/pixel",))
make("f32-nobunit", bunit=None, cards={"SPECSYS": "LSRK"}, expect_notes=("no BUNIT",))
make("f32-beams-table", bunit="Jy/beam", jy_beam=1.0,
     beams=(np.linspace(1.0, 1.1, NCHAN), np.linspace(0.8, 0.85, NCHAN), np.full(NCHAN, 20.0)),
     spec={"ctype": "FREQ", "crval": F230, "cdelt": 2.4e5, "cunit": "Hz"},
     cards={"RESTFRQ": F230, "SPECSYS": "LSRK"}, expect_notes=("BEAMS",))
# containers
make("f32-gzip", container="gz", cards={"SPECSYS": "LSRK"})
make("i16-rice", container="rice", dtype=np.int16, lo=-3000, hi=3000, cards={"SPECSYS": "LSRK"})
make("f32-extension", container="ext", cards={"SPECSYS": "LSRK"}, expect_notes=("HDU 2",))

with open(os.path.join(OUT, "expect.ini"), "w") as fh:
    for name, g in groups:
        fh.write("[%s]\n" % name)
        for k, v in g.items():
            fh.write("%s=%s\n" % (k, v))
        fh.write("\n")
print("wrote %d cubes" % len(groups))
