#!/usr/bin/python3
"""Curve files for the band-library upload tests, and synphot's pivot wavelength for each.

Writes (under --out, default <project>/fixtures/bands):
  lanternfield-z.ecsv     an invented per-photon band: a top hat with sloped edges and a ripple,
                          ECSV with the wavelength in nm
  lanternfield-y.txt      an invented energy-type band (S(lambda), Bessell-style): a smooth bump,
                          two-column text with the wavelength in micron
  lanternfield-b.csv      an invented per-photon band: a skewed bump, CSV with a header, in Angstrom
  pivots.json             synphot pivot() of each curve, with provenance

These curves are our own (no published instrument). synphot assumes a per-photon throughput, so the
energy-type curve is divided by lambda before it is given to synphot (docs/science.md, "Band means").
Each pivot is computed twice: on the file's nodes alone (synphot's trapezoids) and on a fine grid
where the curve is linear between the nodes (what Starkiln integrates); the tests compare with the
fine-grid value and also check the node value is within 2 A.

Run: /usr/bin/python3 scripts/references/make_uploaded_curve_fixture.py [--out DIR]
"""
import argparse
import datetime
import json
import math
import os
import platform

import numpy as np
import astropy
import astropy.units as u
import synphot
from synphot import SpectralElement
from synphot.models import Empirical1D

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
MAX_STEP_FRACTION = 1e-4


def fine_grid(wl):
    parts = []
    for a, b in zip(wl[:-1], wl[1:]):
        n = max(1, int(math.ceil((b - a) / (MAX_STEP_FRACTION * a))))
        parts.append(a + (b - a) * np.arange(n) / n)
    parts.append(np.array([wl[-1]]))
    return np.concatenate(parts)


def synphot_pivots(wl_aa, resp, convention):
    """(pivot on the nodes, pivot on the fine grid) in Angstrom."""
    def per_photon(w, r):
        return r / w if convention == 'energy' else r

    nodes = SpectralElement(Empirical1D, points=wl_aa * u.AA, lookup_table=per_photon(wl_aa, resp))
    grid = fine_grid(wl_aa)
    r_grid = np.interp(grid, wl_aa, resp)
    fine = SpectralElement(Empirical1D, points=grid * u.AA, lookup_table=per_photon(grid, r_grid))
    return float(nodes.pivot().to_value(u.AA)), float(fine.pivot(wavelengths=grid * u.AA).to_value(u.AA))


def curve_z():
    # nm; a flat top from 870 to 950 nm with sloped edges and a 5 % ripple.
    wl_nm = np.arange(820.0, 1000.0 + 0.1, 5.0)
    resp = np.interp(wl_nm, [820, 860, 875, 945, 960, 1000], [0.0, 0.0, 1.0, 1.0, 0.0, 0.0])
    resp = resp * (1 + 0.05 * np.sin((wl_nm - 820) / 12.0))
    resp = np.clip(np.round(resp, 5), 0, None)
    return wl_nm, resp


def curve_y():
    # micron; S(lambda) = a smooth asymmetric bump peaking near 1.03 micron.
    wl_um = np.round(np.arange(0.94, 1.14 + 1e-9, 0.005), 4)
    x = (wl_um - 1.03) / np.where(wl_um < 1.03, 0.03, 0.045)
    resp = np.round(np.exp(-0.5 * x ** 2) - np.exp(-0.5 * ((0.94 - 1.03) / 0.03) ** 2), 6)
    resp = np.clip(resp, 0, None)
    return wl_um, resp


def curve_b():
    # Angstrom; a skewed bump 3800-5000 A.
    wl = np.arange(3800.0, 5000.0 + 0.1, 20.0)
    t = (wl - 3800.0) / 1200.0
    resp = np.round(np.sin(math.pi * t) ** 2 * (0.6 + 0.4 * t), 5)
    return wl, resp


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument('--out', default=os.path.join(ROOT, 'fixtures', 'bands'))
    args = parser.parse_args()
    os.makedirs(args.out, exist_ok=True)

    wl_nm, rz = curve_z()
    with open(os.path.join(args.out, 'lanternfield-z.ecsv'), 'w') as f:
        f.write('# %ECSV 1.0\n# ---\n# datatype:\n# - {name: wavelength, unit: nm, datatype: float64}\n'
                '# - {name: response, datatype: float64}\n# meta: !!omap\n'
                "# - {description: 'Invented per-photon test band of the Lanternfield Survey (not a real instrument).'}\n"
                '# schema: astropy-2.0\nwavelength response\n')
        for w, r in zip(wl_nm, rz):
            f.write(f'{w:.1f} {r:.5f}\n')

    wl_um, ry = curve_y()
    with open(os.path.join(args.out, 'lanternfield-y.txt'), 'w') as f:
        f.write('# Invented energy-type test band of the Lanternfield Survey (not a real instrument).\n'
                '# columns: wavelength [micron], relative energy response S(lambda)\n')
        for w, r in zip(wl_um, ry):
            f.write(f'{w:.4f}\t{r:.6f}\n')

    wl_b, rb = curve_b()
    with open(os.path.join(args.out, 'lanternfield-b.csv'), 'w') as f:
        f.write('wavelength_angstrom,transmission\n')
        for w, r in zip(wl_b, rb):
            f.write(f'{w:.1f},{r:.5f}\n')

    curves = [
        ('lanternfield-z.ecsv', 'nm', 'photon', wl_nm * 10.0, rz),
        ('lanternfield-y.txt', 'um', 'energy', wl_um * 1e4, ry),
        ('lanternfield-b.csv', 'angstrom', 'photon', wl_b, rb),
    ]
    out = {
        'provenance': {
            'script': 'scripts/references/make_uploaded_curve_fixture.py',
            'date': datetime.date.today().isoformat(),
            'python': platform.python_version(),
            'synphot': synphot.__version__,
            'astropy': astropy.__version__,
            'numpy': np.__version__,
            'method': 'synphot SpectralElement(Empirical1D).pivot(); energy-type curves divided by lambda first '
                      '(synphot assumes per-photon); pivotAngstromFine on a grid of every node plus sub-steps '
                      f'<= {MAX_STEP_FRACTION} lambda with the curve linear between nodes.',
            'curves': 'invented for these tests; no published instrument',
        },
        'curves': [],
    }
    for name, unit, convention, wl_aa, resp in curves:
        nodes, fine = synphot_pivots(np.asarray(wl_aa, float), np.asarray(resp, float), convention)
        out['curves'].append({
            'file': name, 'wavelengthUnit': unit, 'convention': convention, 'nodes': int(len(wl_aa)),
            'pivotAngstromNodes': nodes, 'pivotAngstromFine': fine,
        })
    with open(os.path.join(args.out, 'pivots.json'), 'w') as f:
        json.dump(out, f, indent=2)
        f.write('\n')


if __name__ == '__main__':
    main()
