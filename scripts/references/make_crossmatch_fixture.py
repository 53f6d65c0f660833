#!/usr/bin/python3
"""Cross-match fixtures for `starkiln fit`, written by astropy (Debian python3-astropy).

Run with Debian's interpreter from the project root:
    /usr/bin/python3 scripts/references/make_crossmatch_fixture.py [folder]
(into fixtures/crossmatch, or the folder given: src/cli/crossmatch.test.ts regenerates them in a
temporary folder and compares byte for byte)
The photometry comes from src/cli/crossmatch-mock.ts (blackbody band means integrated through
each band by Starkiln's core, so a fit must give back T and theta); this script only writes it as a
FITS binary table and a VOTable (TABLEDATA) with the archives' own column names and types:
Gaia DR3 gaia_source (source_id int64, ra, dec, parallax, phot_*_mean_flux in e-/s) and the 2MASS
point source catalogue (j_m, j_msigcom, h_m, h_msigcom, k_m, k_msigcom as float32, ph_qual).
The stars and their numbers are invented; the .ts file also writes vizier_style.tsv.
"""
import json
import os
import subprocess
import sys

import numpy as np
from astropy.io import fits
from astropy.io.votable import from_table
from astropy.table import Table

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
OUT = os.path.join(ROOT, 'fixtures', 'crossmatch')

UNITS = {'ra': 'deg', 'dec': 'deg', 'parallax': 'mas', 'parallax_error': 'mas'}


def main(out=OUT):
    os.makedirs(out, exist_ok=True)
    made = subprocess.run(['node', '--import', 'tsx', 'src/cli/crossmatch-mock.ts', out], cwd=ROOT, check=True, capture_output=True, text=True)
    data = json.loads(made.stdout)
    rows = data['rows']
    t = Table()
    t['source_id'] = np.array([int(r['source_id']) for r in rows], dtype=np.int64)
    for name in ['ra', 'dec', 'parallax', 'parallax_error']:
        t[name] = np.array([r[name] for r in rows], dtype=np.float64)
        t[name].unit = UNITS[name]
    for band in ['g', 'bp', 'rp']:
        for suffix in ['', '_error']:
            name = f'phot_{band}_mean_flux{suffix}'
            t[name] = np.array([r[name] for r in rows], dtype=np.float64)
    for band in ['j', 'h', 'k']:
        for suffix in ['_m', '_msigcom']:
            name = band + suffix
            t[name] = np.array([r[name] for r in rows], dtype=np.float32)
            t[name].unit = 'mag'
    t['ph_qual'] = np.array([r['ph_qual'] for r in rows], dtype='S3')
    # A column a cross-match carries that is no photometry (and must be left alone).
    t['ruwe'] = np.linspace(0.9, 1.4, len(rows))
    t.meta['ORIGIN'] = 'Starkiln fixture: invented stars, scripts/references/make_crossmatch_fixture.py'
    fits_path = os.path.join(out, 'crossmatch.fits')
    t.write(fits_path, overwrite=True)
    # The Gaia archive's own spelling of the flux unit, which astropy's unit parser does not take.
    with fits.open(fits_path, mode='update') as hdul:
        h = hdul[1].header
        for i in range(1, h['TFIELDS'] + 1):
            if h[f'TTYPE{i}'].startswith('phot_'):
                h[f'TUNIT{i}'] = "'electron'.s**-1"
    vot = from_table(t)
    vot.to_xml(os.path.join(out, 'crossmatch.vot'), tabledata_format='tabledata')
    with open(os.path.join(out, 'crossmatch_truth.json'), 'w') as f:
        json.dump({'provenance': 'invented stars from src/cli/crossmatch-mock.ts crossmatchStars(); A_V = 0; '
                                 'C and U 2MASS bands are made 0.4 mag fainter on purpose',
                   'stars': data['stars']}, f, indent=1)
        f.write('\n')


if __name__ == '__main__':
    main(sys.argv[1] if len(sys.argv) > 1 else OUT)
