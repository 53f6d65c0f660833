#!/usr/bin/env python3
"""Reads a Starkiln VOTable and FITS download with astropy, warnings as errors, and prints what it
found as JSON: per column the unit and UCD (VOTable) or TUNIT (FITS) and the values, so the test
(tests/exports.test.ts) can compare them with the database rows. An outside reader: astropy from
Debian's python3-astropy, run with /usr/bin/python3.

The ECSV download (third argument) is read with Table.read(path) and no options at all, the way
a reader would: the .ecsv extension names the format.

usage: read_exports.py <file.vot> <file.fits> [<file.ecsv>]
"""
import json
import math
import sys
import warnings

warnings.simplefilter("error")

from astropy.io import fits  # noqa: E402
from astropy.io import votable  # noqa: E402
from astropy.table import Table  # noqa: E402
import astropy.units as u  # noqa: E402

CGS_FLUX = u.erg / u.s / u.cm**2


def plain(v):
    if v is None:
        return None
    if hasattr(v, "item"):
        v = v.item()
    if isinstance(v, bytes):
        v = v.decode("ascii")
    if isinstance(v, float) and math.isnan(v):
        return None
    return v


def column_values(col):
    out = []
    mask = getattr(col, "mask", None)
    for i, v in enumerate(col):
        if mask is not None and bool(mask[i]):
            out.append(None)
        else:
            out.append(plain(v))
    return out


def read_votable(path):
    vot = votable.parse(path, verify="exception")
    table = vot.get_first_table()
    fields = {f.name: {"unit": str(f.unit) if f.unit is not None else None, "ucd": f.ucd, "datatype": f.datatype} for f in table.fields}
    t = table.to_table(use_names_over_ids=True)
    infos = [{"name": i.name, "value": i.value} for i in vot.resources[0].infos]
    params = {p.name: plain(p.value) for p in table.params}
    return {
        "fields": fields,
        "units": {c: (t[c].unit.to_string("vounit") if t[c].unit is not None else None) for c in t.colnames},
        "values": {c: column_values(t[c]) for c in t.colnames},
        "infos": infos,
        "fbol_to_cgs": (1 * t["fbol_cgs"].unit).to(CGS_FLUX).value,
        "params": params,
        "nrows": len(t),
    }


def read_fits(path):
    with fits.open(path, checksum=False) as hdul:
        hdul.verify("exception")
        primary = hdul[0].header
        header = {k: primary[k] for k in ("SOFTVER", "BANDLIB", "CAMPAIGN", "CAMPID", "NROWS") if k in primary}
        comments = [str(c) for c in primary["COMMENT"]]
        ext = hdul[1]
        tunits = {ext.columns[i].name: ext.columns[i].unit for i in range(len(ext.columns))}
    t = Table.read(path, hdu=1)
    return {
        "header": header,
        "comments": comments,
        "tunits": tunits,
        "fbol_to_cgs": (1 * t["fbol_cgs"].unit).to(CGS_FLUX).value,
        "units": {c: (t[c].unit.to_string("fits") if t[c].unit is not None else None) for c in t.colnames},
        "values": {c: column_values(t[c]) for c in t.colnames},
        "nrows": len(t),
    }


def read_ecsv(path):
    t = Table.read(path)
    return {
        "fbol_to_cgs": (1 * t["fbol_cgs"].unit).to(CGS_FLUX).value,
        "units": {c: (t[c].unit.to_string("fits") if t[c].unit is not None else None) for c in t.colnames},
        "descriptions": {c: t[c].description for c in t.colnames},
        "values": {c: column_values(t[c]) for c in t.colnames},
        "meta": sorted(t.meta.keys()),
        "provenance_rows": t.meta["provenance"]["rows"],
        "batches": [{"id": b["id"], "options": b["options"]} for b in t.meta["provenance"]["batches"]],
        "nrows": len(t),
    }


if __name__ == "__main__":
    out = {"votable": read_votable(sys.argv[1]), "fits": read_fits(sys.argv[2])}
    if len(sys.argv) > 3:
        out["ecsv"] = read_ecsv(sys.argv[3])
    print(json.dumps(out))
