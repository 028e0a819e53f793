# SPDX-License-Identifier: GPL-3.0-or-later
"""Reads the tables `efflux-cli measure` wrote, with astropy and the standard library, and checks
them against the csv (full precision) and the dossiers' assumptions.

usage: tables_check.py STEM VERSION SOURCES
  STEM.csv, STEM.ecsv, STEM.votable, STEM.json: one measurement in four formats
  VERSION: the Efflux version the tables must record
  SOURCES: number of sources in the table

Readers (outside Efflux): astropy.table.Table.read (formats 'csv', 'ascii.ecsv', 'votable'),
astropy.io.votable.parse with verify='exception' (VOTable schema rules as astropy knows them),
astropy.io.votable.ucd.check_ucd with the UCD1+ controlled vocabulary astropy ships, astropy.units,
Python's csv and json modules. Prints 'ok ...' lines; exits 1 with a message on the first failure.
"""
import csv
import json
import math
import sys
import warnings

import astropy.units as u
from astropy.io.votable import parse
from astropy.io.votable.ucd import check_ucd
from astropy.table import Table

stem, version, n_sources = sys.argv[1], sys.argv[2], int(sys.argv[3])

# The unit each column must carry (CONTRACT.md section 3 units; ours for the extras).
MSUN_KMS = u.Msun * u.km / u.s
BASE_UNITS = {
    "mass_msun": u.Msun, "momentum_msun_kms": MSUN_KMS, "energy_erg": u.erg,
    "vmax_kms": u.km / u.s, "rmax_au": u.AU, "tdyn_yr": u.yr, "mdot_msun_yr": u.Msun / u.yr,
    "force_msun_kms_yr": MSUN_KMS / u.yr, "lmech_lsun": u.Lsun, "inclination_deg": u.deg,
    "pm_kms": u.km / u.s, "age_pm_yr": u.yr, "mv_break_kms": u.km / u.s,
    "hidden_mass_msun": u.Msun,
}
TEXT = {"source", "lobe", "kind", "opacity"}


def fail(msg):
    print("FAIL: " + msg)
    sys.exit(1)


def expected_unit(name):
    for suffix in ("_err", "_p16", "_p50", "_p84"):
        if name.endswith(suffix) and name[: -len(suffix)] in BASE_UNITS:
            return BASE_UNITS[name[: -len(suffix)]]
    return BASE_UNITS.get(name)


def close(a, b):
    if a is None or b is None:
        return a is None and b is None
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return abs(a - b) <= 1e-12 * max(abs(a), abs(b))


# ---- csv: Python's csv module and astropy's csv reader both read it -----------------------------
with open(stem + ".csv", newline="") as f:
    rows = list(csv.reader(f))
header, data = rows[0], rows[1:]
meta_at = header.index("efflux_version")
columns = header[:meta_at]
if columns[:14] != ["source", "lobe", "kind", "voxels", "mass_msun", "momentum_msun_kms", "energy_erg",
                    "vmax_kms", "rmax_au", "tdyn_yr", "mdot_msun_yr", "force_msun_kms_yr", "lmech_lsun",
                    "inclination_deg"]:
    fail("csv: the CONTRACT.md columns are not first, in order: %r" % columns[:14])
if len(set(header)) != len(header):
    fail("csv: duplicate column names")
if any(r[meta_at] != version for r in data):
    fail("csv: efflux_version is not %s on every row" % version)
ref = []        # per row: {column: float or str or None}
for r in data:
    d = {}
    for name, cell in zip(columns, r):
        if name in TEXT:
            d[name] = cell
        else:
            d[name] = float(cell) if cell != "" else None
    ref.append(d)
n_total = sum(1 for d in ref if d["lobe"] == "total")
if n_total != n_sources:
    fail("csv: %d total rows, expected %d" % (n_total, n_sources))
t_csv = Table.read(stem + ".csv", format="csv")
if t_csv.colnames != header or len(t_csv) != len(data):
    fail("astropy csv: %d columns / %d rows, expected %d / %d" % (len(t_csv.colnames), len(t_csv), len(header), len(data)))
print("ok csv: %d rows, %d columns, %d sources; astropy's csv reader agrees" % (len(data), len(columns), n_sources))

# assumptions per source, from the csv's assumed_* columns
assumed = {}
for r in data:
    key = int(r[meta_at + 1])
    assumed[key] = {h[len("assumed_"):]: c for h, c in zip(header, r) if h.startswith("assumed_")}
    assumed[key]["__dossier"] = r[meta_at + 3]
    assumed[key]["__notes"] = r[meta_at + 4].split(" | ") if r[meta_at + 4] else []


def check_table(t, what):
    if t.colnames != columns:
        fail("%s: columns differ from the csv" % what)
    if len(t) != len(ref):
        fail("%s: %d rows, the csv %d" % (what, len(t), len(ref)))
    for name in columns:
        col = t[name]
        want = expected_unit(name)
        if want is not None:
            if col.unit is None or u.Unit(col.unit) != want:
                fail("%s: column %s has unit %r, expected %s" % (what, name, col.unit, want))
        elif name not in TEXT and name != "voxels" and not name.startswith("mv_gamma") and col.unit is not None:
            fail("%s: column %s should have no unit, has %r" % (what, name, col.unit))
        if not col.description:
            fail("%s: column %s has no description" % (what, name))
        for i, d in enumerate(ref):
            masked = hasattr(col, "mask") and bool(col.mask[i])
            if name in TEXT:
                got = "" if masked else str(col[i])
                if got != d[name]:
                    fail("%s: row %d column %s: %r, csv %r" % (what, i + 1, name, got, d[name]))
            else:
                got = None if masked else float(col[i])
                if got is not None and math.isnan(got):
                    got = None
                if not close(got, d[name]):
                    fail("%s: row %d column %s: %r, csv %r (1e-12 relative)" % (what, i + 1, name, got, d[name]))


# ---- ECSV ------------------------------------------------------------------------------------------
t = Table.read(stem + ".ecsv", format="ascii.ecsv")
check_table(t, "ecsv")
if t.meta.get("efflux_version") != version:
    fail("ecsv: meta efflux_version %r" % t.meta.get("efflux_version"))
srcs = t.meta["sources"]
if len(srcs) != n_sources:
    fail("ecsv: %d sources in meta" % len(srcs))
for s in srcs:
    a = assumed[s["sample_index"]]
    if s["dossier"] != a["__dossier"]:
        fail("ecsv: source %s dossier %r" % (s["source"], s["dossier"]))
    if list(s["notes"]) != a["__notes"]:
        fail("ecsv: source %s notes %r, csv %r" % (s["source"], s["notes"], a["__notes"]))
    for k, v in s["assumptions"].items():
        c = a[k]
        if isinstance(v, str):
            ok = v == c
        else:
            ok = close(float(v), float(c) if c != "" else math.nan)
        if not ok:
            fail("ecsv: %s assumption %s = %r, csv %r" % (s["source"], k, v, c))
if u.Unit(t.meta["assumption_units"]["distance_pc"]) != u.pc:
    fail("ecsv: the unit of distance_pc")
for name in columns:
    ucd = t[name].meta.get("ucd")
    if not ucd or not check_ucd(ucd, check_controlled_vocabulary=True):
        fail("ecsv: column %s: UCD %r is not valid UCD1+" % (name, ucd))
if not any(a["__notes"] for a in assumed.values()):
    fail("no source has a note: the notes are not checked")
print("ok ecsv: astropy.table.Table.read gives the csv values (1e-12), units, descriptions, "
      "UCDs and the assumptions of %d sources" % n_sources)

# ---- VOTable ---------------------------------------------------------------------------------------
with warnings.catch_warnings():
    # 'erg' is a deprecated VOUnit (the CGS unit every outflow paper uses); astropy warns, reads it
    warnings.filterwarnings("ignore", message=".*erg.*deprecated.*")
    vot = parse(stem + ".votable", verify="exception")
    t = Table.read(stem + ".votable", format="votable")
if vot.version != "1.4":
    fail("votable: version %r" % vot.version)
check_table(t, "votable")
infos = {i.name: i.value for i in vot.resources[0].infos}
if infos.get("efflux_version") != version:
    fail("votable: INFO efflux_version %r" % infos.get("efflux_version"))
table = vot.get_first_table()
for f in table.fields:
    if not f.ucd or not check_ucd(f.ucd, check_controlled_vocabulary=True):
        fail("votable: FIELD %s: UCD %r" % (f.name, f.ucd))
groups = [g for g in table.groups if g.name == "assumptions"]
if len(groups) != n_sources:
    fail("votable: %d assumption groups" % len(groups))
for g in groups:
    params = {p.name: p for p in g.entries}
    a = assumed[int(params["sample_index"].value)]
    for k, c in a.items():
        if k.startswith("__"):
            continue
        p = params[k]
        if p.ucd and not check_ucd(p.ucd, check_controlled_vocabulary=True):
            fail("votable: PARAM %s: UCD %r" % (k, p.ucd))
        if p.datatype == "char":
            ok = str(p.value) == c
        else:
            v = float(p.value)
            ok = close(v if not math.isnan(v) else None, float(c) if c != "" else None)
        if not ok:
            fail("votable: PARAM %s = %r, csv %r" % (k, p.value, c))
    if u.Unit(params["distance_pc"].unit) != u.pc or u.Unit(params["vsys_kms"].unit) != u.km / u.s:
        fail("votable: PARAM units")
print("ok votable: VOTable 1.4 valid for astropy (verify='exception'), the csv values (1e-12), "
      "units, UCD1+ words, INFO version and %d assumption groups" % n_sources)

# ---- JSON ------------------------------------------------------------------------------------------
with open(stem + ".json") as f:
    j = json.load(f)
if j["columns"] != columns or len(j["rows"]) != len(ref):
    fail("json: columns or rows differ from the csv")
for i, (row, d) in enumerate(zip(j["rows"], ref)):
    for name, v in zip(columns, row):
        want = d[name]
        if name in TEXT:
            if (v or "") != want:
                fail("json: row %d %s %r" % (i + 1, name, v))
        elif not close(None if v is None else float(v), want):
            fail("json: row %d %s %r, csv %r" % (i + 1, name, v, want))
if j["metadata"]["efflux_version"] != version or len(j["metadata"]["sources"]) != n_sources:
    fail("json: metadata")
print("ok json: the csv values exactly, version and sources")
