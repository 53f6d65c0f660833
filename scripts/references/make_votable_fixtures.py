#!/usr/bin/python3
"""VOTable fixtures written by astropy (Debian python3-astropy) for Starkiln's VOTable reader and intake.

Run with Debian's interpreter: /usr/bin/python3 scripts/references/make_votable_fixtures.py [folder]
Writes fixtures/votable/*.vot (and fixtures/intake/wide_table.fits, the same invented stars as a FITS
binary table, for the intake tests; given a folder, everything goes there instead, which is how
src/core/input/votable.test.ts checks that the committed files regenerate byte for byte) and, beside each, astropy's own reading of it (*.astropy.json:
column names, units, UCDs and every cell as text, null where astropy masks it). All star names and
numbers are invented (the "Ember Reach" survey of the demo scenario), not measurements.
"""
import json
import os
import sys
import warnings

import numpy as np
from astropy.io.votable import from_table, parse
from astropy.table import MaskedColumn, Table

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
OUT = os.path.join(ROOT, 'fixtures', 'votable')


def wide_table():
    t = Table()
    t['id'] = ['ember-11', 'ember-12', 'ember-13', 'ember-14']
    t['RA_ICRS'] = [12.5, 200.125, 359.9, 45.0]
    t['RA_ICRS'].unit = 'deg'
    t['DE_ICRS'] = [-33.1, 45.5, 0.0, 12.25]
    t['DE_ICRS'].unit = 'deg'
    t['Plx'] = [21.3, 4.02, 1.5, 9.75]
    t['Plx'].unit = 'mas'
    t['e_Plx'] = [0.04, 0.03, 0.1, 0.05]
    t['e_Plx'].unit = 'mas'
    t['Vmag'] = MaskedColumn([8.91, 11.40, 0.0, 10.2], mask=[False, False, True, False], unit='mag')
    t['e_Vmag'] = MaskedColumn([0.02, 0.03, 0.0, 0.025], mask=[False, False, True, False], unit='mag')
    t['Jmag'] = [7.9, 10.1, 12.3, 9.0]
    t['Jmag'].unit = 'mag'
    t['e_Jmag'] = [0.02, 0.022, 0.03, 0.021]
    t['e_Jmag'].unit = 'mag'
    t['Qflg'] = ['AAA', 'ABC', 'AAU', 'BAA']
    t['W1mag'] = [7.1, 9.3, 11.5, 8.2]
    t['W1mag'].unit = 'mag'
    t['e_W1mag'] = [0.03, 0.02, 0.04, 0.03]
    t['e_W1mag'].unit = 'mag'
    return t


def dump(path):
    with warnings.catch_warnings():
        warnings.simplefilter('ignore')
        vot = parse(path)
    table = vot.get_first_table()
    arr = table.array
    cols = []
    for f in table.fields:
        cols.append({'name': f.name, 'unit': str(f.unit) if f.unit is not None else None, 'ucd': f.ucd, 'datatype': f.datatype})
    rows = []
    for r in range(len(arr)):
        row = []
        for f in table.fields:
            v = arr[f.name][r]
            masked = bool(np.ma.getmaskarray(arr[f.name])[r])
            row.append(None if masked else (v if isinstance(v, str) else repr(v.item() if hasattr(v, 'item') else v)))
        rows.append(row)
    with open(path.replace('.vot', '.astropy.json'), 'w') as fh:
        json.dump({'astropy': __import__('astropy').__version__, 'columns': cols, 'rows': rows}, fh, indent=1)
        fh.write('\n')


def main(out=OUT, intake=os.path.join(ROOT, 'fixtures', 'intake')):
    os.makedirs(out, exist_ok=True)
    t = wide_table()
    vot = from_table(t)
    f = vot.get_first_table()
    f.get_field_by_id('RA_ICRS').ucd = 'pos.eq.ra;meta.main'
    f.get_field_by_id('DE_ICRS').ucd = 'pos.eq.dec;meta.main'
    f.get_field_by_id('Vmag').ucd = 'phot.mag;em.opt.V'
    p = os.path.join(out, 'wide_tabledata.vot')
    vot.to_xml(p, tabledata_format='tabledata')
    dump(p)
    p2 = os.path.join(out, 'wide_binary2.vot')
    vot2 = from_table(t)
    vot2.to_xml(p2, tabledata_format='binary2')
    dump(p2)
    os.makedirs(intake, exist_ok=True)
    t.write(os.path.join(intake, 'wide_table.fits'), format='fits', overwrite=True)
    # XML that is well-formed but not a VOTable.
    with open(os.path.join(out, 'not_a_votable.xml'), 'w') as fh:
        fh.write('<?xml version="1.0" encoding="UTF-8"?>\n<catalogue>\n  <star id="ember-11"><V>8.91</V></star>\n</catalogue>\n')


if __name__ == '__main__':
    if len(sys.argv) > 1:
        main(sys.argv[1], sys.argv[1])
    else:
        main()
