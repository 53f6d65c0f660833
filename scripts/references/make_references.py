#!/usr/bin/python3
"""Reference numbers for Starkiln's science core, computed with independent general-purpose
libraries (Debian's python3-synphot, python3-astropy, python3-extinction, python3-numpy).

Writes (under --out, default <project>/fixtures):
  synphot/blackbody-band-means.json  band means of a blackbody of R_sun at 10 pc through every
                                     starter band curve, for several temperatures and A_V (F99, R_V 3.1),
                                     plus synphot pivot wavelengths
  extinction/laws.json               A_lambda/A_V of F99, CCM89 and O'Donnell 94 on a dense grid and
                                     several R_V, straight from python3-extinction

The curves are read from the ORIGINAL published files in ../shared/data/passbands (not from the
project's derived library), so the comparison also checks the derivation. The integrals use a fine
explicit wavelength grid (every curve node plus sub-steps no wider than 1e-4 lambda), so synphot's
trapezoid sums approximate the continuous integral of the linearly interpolated curve to ~1e-8.

Run: /usr/bin/python3 scripts/references/make_references.py [--out DIR]   (npm run references)
"""
import argparse
import datetime
import json
import math
import os
import platform
import sys

import numpy as np
import astropy
import astropy.units as u
from astropy import constants as const
from astropy.table import Table
import scipy
import synphot
from synphot import SourceSpectrum, SpectralElement, Observation, units
from synphot.models import BlackBody1D, Empirical1D
import extinction

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
PASSBANDS = os.path.abspath(os.path.join(ROOT, '..', 'shared', 'data', 'passbands'))

# key, file, convention ('energy' curves are divided by lambda because synphot assumes per-photon)
BANDS = [
    ('U', 'bessell-U.ecsv', 'energy'), ('B', 'bessell-B.ecsv', 'energy'), ('V', 'bessell-V.ecsv', 'energy'),
    ('R', 'bessell-R.ecsv', 'energy'), ('I', 'bessell-I.ecsv', 'energy'),
    ('J', 'twomass-J.ecsv', 'photon'), ('H', 'twomass-H.ecsv', 'photon'), ('Ks', 'twomass-Ks.ecsv', 'photon'),
    ('G', 'gaiadr3-G.ecsv', 'photon'), ('BP', 'gaiadr3-BP.ecsv', 'photon'), ('RP', 'gaiadr3-RP.ecsv', 'photon'),
    ('u', 'sdss2010-u.ecsv', 'photon'), ('g', 'sdss2010-g.ecsv', 'photon'), ('r', 'sdss2010-r.ecsv', 'photon'),
    ('i', 'sdss2010-i.ecsv', 'photon'), ('z', 'sdss2010-z.ecsv', 'photon'),
    ('W1', 'wise2010-W1.ecsv', 'photon'), ('W2', 'wise2010-W2.ecsv', 'photon'),
    ('W3', 'wise2010-W3.ecsv', 'photon'), ('W4', 'wise2010-W4.ecsv', 'photon'),
    ('BT', 'hipparcos_B.par', 'photon'), ('VT', 'hipparcos_V.par', 'photon'), ('Hp', 'hipparcos_H.par', 'photon'),
    ('FUV', 'galex-fuv.ecsv', 'photon'), ('NUV', 'galex-nuv.ecsv', 'photon'),
]
TEMPERATURES_K = [3000.0, 4000.0, 5772.0, 8000.0, 12000.0, 25000.0]
AV_MAG = [0.0, 1.0, 3.0]
RV = 3.1
MAX_STEP_FRACTION = 1e-4
RV_LIST = [2.5, 3.1, 4.0, 5.5]


def read_curve(name):
    path = os.path.join(PASSBANDS, name)
    if name.endswith('.par'):
        data = np.loadtxt(path, comments='#')
        return data[:, 0].astype(float), data[:, 1].astype(float)
    t = Table.read(path, format='ascii.ecsv')
    wl = t['wavelength']
    unit = wl.unit if wl.unit is not None else u.AA
    return (np.asarray(wl) * unit).to_value(u.AA), np.asarray(t['response'], dtype=float)


def fine_grid(wl):
    parts = []
    for a, b in zip(wl[:-1], wl[1:]):
        n = max(1, int(math.ceil((b - a) / (MAX_STEP_FRACTION * a))))
        parts.append(a + (b - a) * np.arange(n) / n)
    parts.append(np.array([wl[-1]]))
    return np.concatenate(parts)


def band_means():
    scale = math.pi * (const.R_sun / (10 * u.pc)).decompose().value ** 2  # pi sr x (R/d)^2
    out = []
    for key, name, convention in BANDS:
        wl, resp = read_curve(name)
        # synphot's own pivot() on the curve as published (per-photon: S/lambda at the nodes)
        r_nodes = resp / wl if convention == 'energy' else resp
        bp_nodes = SpectralElement(Empirical1D, points=wl, lookup_table=r_nodes)
        grid = fine_grid(wl)
        r_lin = np.interp(grid, wl, resp)
        r_fine = r_lin / grid if convention == 'energy' else r_lin
        bp = SpectralElement(Empirical1D, points=grid, lookup_table=r_fine)
        entry = {
            'key': key,
            'file': name,
            'convention': convention,
            'pivotAngstromNodes': float(bp_nodes.pivot().to_value(u.AA)),
            'pivotAngstromFine': float(bp.pivot(wavelengths=grid).to_value(u.AA)),
            'gridPoints': int(grid.size),
            'means': [],
        }
        for teff in TEMPERATURES_K:
            # BlackBody1D's own waveset stops at 11 lambda_max, which misses infrared bands of hot
            # stars; so the model is sampled on the band's grid and handed to synphot as a table.
            bb_photlam = BlackBody1D(temperature=teff)(grid) * scale
            for av in AV_MAG:
                trans = 10 ** (-0.4 * extinction.fitzpatrick99(grid, av, RV)) if av else np.ones_like(grid)
                sp = SourceSpectrum(Empirical1D, points=grid, lookup_table=bb_photlam * trans * units.PHOTLAM)
                obs = Observation(sp, bp)
                flam = obs.effstim(flux_unit='flam', wavelengths=grid).value
                abmag = obs.effstim(flux_unit=u.ABmag, wavelengths=grid).value
                entry['means'].append({'teffK': teff, 'avMag': av, 'flambdaCgs': float(flam), 'abMag': float(abmag)})
        out.append(entry)
        print(f'{key}: pivot {entry["pivotAngstromFine"]:.2f} A, {grid.size} grid points', file=sys.stderr)
    return out


def extinction_tables():
    grid = np.geomspace(1000.0, 300000.0, 801)
    checks = np.array([4400.0, 5500.0, 7000.0, 12500.0, 16500.0, 22000.0, 5494.5,
                       # branch edges of the laws (x = 1.1, 3.3, 8 um^-1; F99 knots and UV switch)
                       1e4 / 1.1, 1e4 / 3.3, 1250.0, 2700.0, 2600.0, 26500.0, 12200.0, 6000.0, 5470.0, 4670.0, 4110.0,
                       910.0, 1150.0, 33333.0, 60000.0])
    wave = np.concatenate([grid, checks])
    laws = {'f99': extinction.fitzpatrick99, 'ccm89': extinction.ccm89, 'od94': extinction.odonnell94}
    tables = {}
    for law, fn in laws.items():
        tables[law] = [[float(v) for v in fn(wave, 1.0, rv)] for rv in RV_LIST]
    # ratio[law][j][i]: law at wavelengthAngstrom[i] for rv[j]
    return {'wavelengthAngstrom': [float(w) for w in wave], 'rv': RV_LIST, 'ratio': tables}


def provenance(method):
    return {
        'generatedBy': 'scripts/references/make_references.py',
        'date': datetime.date.today().isoformat(),
        'python': platform.python_version(),
        'packages': {
            'numpy': np.__version__, 'scipy': scipy.__version__, 'astropy': astropy.__version__,
            'synphot': synphot.__version__, 'extinction': extinction.__version__,
        },
        'constants': {'R_sun_m': const.R_sun.value, 'pc_m': u.pc.to(u.m), 'h': const.h.value, 'c': const.c.value,
                      'k_B': const.k_B.value, 'astropyConstants': astropy.physical_constants.get()},
        'method': method,
    }


def write(path, obj):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, 'w') as f:
        json.dump(obj, f, indent=1)
        f.write('\n')
    print(f'wrote {path}', file=sys.stderr)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--out', default=os.path.join(ROOT, 'fixtures'))
    args = ap.parse_args()
    write(os.path.join(args.out, 'synphot', 'blackbody-band-means.json'), {
        'provenance': provenance(
            'synphot Observation(SourceSpectrum(Empirical1D: BlackBody1D(T)(grid) * pi * (R_sun / 10 pc)^2 * '
            '10^(-0.4 extinction.fitzpatrick99(grid, A_V, 3.1))), SpectralElement(Empirical1D on grid)).effstim(flam and '
            'ABmag, wavelengths=grid); grid = every curve node plus equal sub-steps no wider than 1e-4 lambda; the '
            'curve is linear between the published nodes; energy-type (Bessell) curves divided by lambda. '
            'pivotAngstromNodes: SpectralElement on the published nodes (.pivot()); pivotAngstromFine: on the grid.'),
        'scale': 'pi sr * (R_sun / 10 pc)^2; fluxes in erg s^-1 cm^-2 A^-1',
        'temperaturesK': TEMPERATURES_K,
        'avMag': AV_MAG,
        'extinction': {'law': 'f99', 'rv': RV},
        'bands': band_means(),
    })
    write(os.path.join(args.out, 'extinction', 'laws.json'), {
        'provenance': provenance('extinction.fitzpatrick99 / ccm89 / odonnell94 (wave in Angstrom, a_v = 1, r_v) '
                                 'evaluated on 801 log-spaced wavelengths 1000-300000 A plus check and branch-edge '
                                 'wavelengths; values are A_lambda/A_V.'),
        **extinction_tables(),
    })


if __name__ == '__main__':
    main()
