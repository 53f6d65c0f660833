// Derives Starkiln's starter band library (src/core/bands/starter-library.json) from the published
// passband files in ../shared/data/passbands (speclite ECSV files, BSD-3-Clause; sedpy .par files,
// MIT). The curve nodes are kept exactly (a change of format, not a resample); WISE wavelengths are
// converted from µm to Å by a decimal shift of the printed value. Pivot wavelengths are computed with
// the project's own integrator (src/core/passband.ts).
//
// Run: npx tsx scripts/references/derive_bands.ts   (rewrites the JSON; commit it with a new
// STARTER_LIBRARY_VERSION whenever a curve or zero-point changes).
import { createHash } from 'node:crypto';
import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { pivotWavelength } from '../../src/core/passband';
import type { Band, ZeroPoint } from '../../src/core/types';

export const STARTER_LIBRARY_VERSION = 'starter-1';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const sourceDir = path.resolve(root, '../shared/data/passbands');
const outFile = path.resolve(root, 'src/core/bands/starter-library.json');

type Licence = 'speclite' | 'sedpy';

const LICENCE_NOTICE: Record<Licence, string> = {
  speclite:
    'Curve file from speclite, Copyright (c) 2015-2025, Speclite Developers; redistributed under the BSD 3-Clause licence (notice reproduced in LICENSES/speclite-BSD-3-Clause.txt and in this library\'s sourceLicences.speclite).',
  sedpy:
    'Curve file from sedpy, Copyright (c) 2014-2017 Benjamin D. Johnson & contributors; used under the MIT licence (notice reproduced in LICENSES/sedpy-MIT.txt and in this library\'s sourceLicences.sedpy).',
};

interface Spec {
  key: string;
  file: string;
  label: string;
  system: string;
  magnitudeSystem: Band['magnitudeSystem'];
  convention: Band['convention'];
  zeroPoint: ZeroPoint | null;
  citation: string;
  licence: Licence;
  conversion: string;
}

const BESSELL_CITE =
  'Bessell, M. S. 1990, PASP, 102, 1181, "UBVRI passbands" (doi:10.1086/132749): reference Johnson/Cousins curve as tabulated (energy-type, peak 1); file bessell-%.ecsv from speclite.';
const BCP98 = 'Bessell, Castelli & Plez 1998, A&A, 333, 231, Table A2 (Vega-based F_λ of magnitude 0; uncertainty not tabulated)';
const bessellZp = (f11: number): ZeroPoint => ({ fLambdaCgs: f11 * 1e-11, relErr: 0, source: BCP98 });

const TWOMASS_CITE =
  'Cohen, M., Wheaton, W. A., & Megeath, S. T. 2003, AJ, 126, 1090 (2MASS relative spectral responses, photon-counting, peak 1); 2MASS: Skrutskie, M. F. et al. 2006, AJ, 131, 1163; file twomass-%.ecsv from speclite.';
// Cohen et al. 2003 Table 1, quoted in W cm⁻² µm⁻¹ (× 1e3 → erg s⁻¹ cm⁻² Å⁻¹) with its 1σ.
const twomassZp = (f: number, err: number): ZeroPoint => ({
  fLambdaCgs: f * 1e3,
  relErr: err / f,
  source: 'Cohen, Wheaton & Megeath 2003, AJ, 126, 1090, Table 1 (F_λ of magnitude 0 with its 1σ)',
});

const GAIA_CITE =
  'Riello, M. et al. 2021, A&A, 649, A3 (Gaia EDR3/DR3 photometric passbands, photon-counting; https://www.cosmos.esa.int/web/gaia/edr3-passbands); file gaiadr3-%.ecsv from speclite.';
// m_AB = m_Vega + (ZP_AB − ZP_Vega), Riello et al. 2021 (docs/science.md 3).
const gaiaZp = (zpAb: number, zpVega: number): ZeroPoint => ({
  fnuJy: 3631,
  relErr: 0,
  catalogueOffsetMag: Math.round((zpAb - zpVega) * 1e4) / 1e4,
  source: `Gaia DR3 Vega magnitudes converted to AB with ZP_AB − ZP_Vega = ${zpAb.toFixed(4)} − ${zpVega.toFixed(4)} (Riello et al. 2021, A&A, 649, A3); AB: Oke & Gunn 1983; ZP uncertainty not recorded`,
});

const SDSS_CITE =
  'Doi, M. et al. 2010, AJ, 139, 1628, "Photometric Response Functions of the SDSS Imager" (doi:10.1088/0004-6256/139/4/1628), Table 4: filter × atmosphere at airmass 1.3, photon-counting; file sdss2010-%.ecsv from speclite.';
const sdssZp = (offset: number): ZeroPoint => ({
  fnuJy: 3631,
  relErr: 0,
  catalogueOffsetMag: offset,
  source:
    offset === 0
      ? 'SDSS magnitudes taken as AB (Oke & Gunn 1983; SDSS flux calibration notes, from memory)'
      : `SDSS magnitudes are near-AB; catalogue offset ${offset > 0 ? '+' : '−'}${Math.abs(offset)} mag to AB (SDSS flux calibration notes, from memory); AB: Oke & Gunn 1983`,
});

const WISE_CITE =
  'Wright, E. L. et al. 2010, AJ, 140, 1868 (doi:10.1088/0004-6256/140/6/1868), Fig. 6: weighted mean relative spectral response per photon; zero-points Jarrett, T. H. et al. 2011, ApJ, 735, 112; file wise2010-%.ecsv from speclite.';
// Jarrett et al. 2011 isophotal F_ν,0 for F_ν ∝ ν⁻² and λ_iso (docs/science.md 3); the 1σ values
// (4.582, 2.516, 0.450, 0.123 Jy) are from memory of the same table.
const wiseZp = (fnu: number, err: number, isoUm: number): ZeroPoint => ({
  fnuJy: fnu,
  relErr: err / fnu,
  isophotalWavelengthAngstrom: Math.round(isoUm * 1e4 * 1e6) / 1e6,
  source: `Jarrett et al. 2011, ApJ, 735, 112: isophotal F_ν,0 = ${fnu} Jy at λ_iso = ${isoUm} µm for F_ν ∝ ν⁻² (1σ ${err} Jy, from memory)`,
});

const HIP_CITE =
  'Bessell, M. S. 2000, PASP, 112, 961, Table 3 (Tycho BT, VT and Hipparcos Hp passbands, printed as λ·R); transcribed by B. Johnson (2016) for sedpy as the per-photon response R (divided by λ); file hipparcos_%.par from sedpy.';

const GALEX_CITE =
  'Morrissey, P. et al. 2007, ApJS, 173, 682 (GALEX calibration and effective areas, photon-counting); file galex-%.ecsv from speclite.';
const galexZp: ZeroPoint = { fnuJy: 3631, relErr: 0, source: 'GALEX magnitudes are AB (Morrissey et al. 2007; Oke & Gunn 1983)' };

const SPECS: Spec[] = [
  ...(
    [
      ['U', 417.5],
      ['B', 632.0],
      ['V', 363.1],
      ['R', 217.7],
      ['I', 112.6],
    ] as const
  ).map(
    ([k, f]): Spec => ({
      key: k,
      file: `bessell-${k}.ecsv`,
      label: `Bessell ${k}`,
      system: 'Johnson–Cousins (Bessell 1990)',
      magnitudeSystem: 'vega',
      convention: 'energy',
      zeroPoint: bessellZp(f),
      citation: BESSELL_CITE.replace('%', k),
      licence: 'speclite',
      conversion: 'none; the curve is energy-type S(λ) as printed (the file description quotes Bessell 1990), so band means weight by S, not S·λ',
    }),
  ),
  ...(
    [
      ['J', 3.129e-13, 5.464e-15],
      ['H', 1.133e-13, 2.212e-15],
      ['Ks', 4.283e-14, 8.053e-16],
    ] as const
  ).map(
    ([k, f, e]): Spec => ({
      key: k,
      file: `twomass-${k}.ecsv`,
      label: `2MASS ${k}`,
      system: '2MASS',
      magnitudeSystem: 'vega',
      convention: 'photon',
      zeroPoint: twomassZp(f, e),
      citation: TWOMASS_CITE.replace('%', k),
      licence: 'speclite',
      conversion: 'none',
    }),
  ),
  ...(
    [
      ['G', 25.801, 25.6874],
      ['BP', 25.354, 25.3385],
      ['RP', 25.104, 24.7479],
    ] as const
  ).map(
    ([k, ab, vega]): Spec => ({
      key: k,
      file: `gaiadr3-${k}.ecsv`,
      label: `Gaia DR3 ${k}`,
      system: 'Gaia DR3',
      magnitudeSystem: 'ab',
      convention: 'photon',
      zeroPoint: gaiaZp(ab, vega),
      citation: GAIA_CITE.replace('%', k),
      licence: 'speclite',
      conversion: 'none',
    }),
  ),
  ...(
    [
      ['u', -0.04],
      ['g', 0],
      ['r', 0],
      ['i', 0],
      ['z', 0.02],
    ] as const
  ).map(
    ([k, off]): Spec => ({
      key: k,
      file: `sdss2010-${k}.ecsv`,
      label: `SDSS ${k}`,
      system: 'SDSS (airmass 1.3)',
      magnitudeSystem: 'ab',
      convention: 'photon',
      zeroPoint: sdssZp(off),
      citation: SDSS_CITE.replace('%', k),
      licence: 'speclite',
      conversion: 'none',
    }),
  ),
  ...(
    [
      ['W1', 309.54, 4.582, 3.3526],
      ['W2', 171.787, 2.516, 4.6028],
      ['W3', 31.674, 0.45, 11.5608],
      ['W4', 8.363, 0.123, 22.0883],
    ] as const
  ).map(
    ([k, f, e, iso]): Spec => ({
      key: k,
      file: `wise2010-${k}.ecsv`,
      label: `WISE ${k}`,
      system: 'WISE',
      magnitudeSystem: 'vega',
      convention: 'photon',
      zeroPoint: wiseZp(f, e, iso),
      citation: WISE_CITE.replace('%', k),
      licence: 'speclite',
      conversion: 'wavelengths converted from µm to Å (decimal shift of the printed values)',
    }),
  ),
  ...(
    [
      ['BT', 'B', 'Tycho BT'],
      ['VT', 'V', 'Tycho VT'],
      ['Hp', 'H', 'Hipparcos Hp'],
    ] as const
  ).map(
    ([k, f, label]): Spec => ({
      key: k,
      file: `hipparcos_${f}.par`,
      label,
      system: k === 'Hp' ? 'Hipparcos' : 'Tycho',
      magnitudeSystem: 'vega',
      convention: 'photon',
      zeroPoint: null,
      citation: HIP_CITE.replace('%', f),
      licence: 'sedpy',
      conversion:
        'none by us; the file holds the per-photon response R after its transcriber divided Bessell (2000) λ·R by λ. No zero-point with a found source yet: magnitudes are rejected, flux in Jy works',
    }),
  ),
  ...(
    [
      ['FUV', 'fuv'],
      ['NUV', 'nuv'],
    ] as const
  ).map(
    ([k, f]): Spec => ({
      key: k,
      file: `galex-${f}.ecsv`,
      label: `GALEX ${k}`,
      system: 'GALEX',
      magnitudeSystem: 'ab',
      convention: 'photon',
      zeroPoint: galexZp,
      citation: GALEX_CITE.replace('%', f),
      licence: 'speclite',
      conversion: 'none',
    }),
  ),
];

/** Multiplies a printed decimal by 10^shift without binary rounding (µm → Å is shift 4). */
function shiftDecimal(text: string, shift: number): number {
  const m = /^([+-]?)(\d*)\.?(\d*)(?:[eE]([+-]?\d+))?$/.exec(text.trim());
  if (!m) throw new Error(`not a number: ${text}`);
  const exp = (m[4] ? Number(m[4]) : 0) + shift;
  return Number(`${m[1]}${m[2] || '0'}.${m[3] || '0'}e${exp}`);
}

interface Curve {
  wavelengthAngstrom: number[];
  response: number[];
}

function readCurve(file: string): Curve {
  const text = readFileSync(path.join(sourceDir, file), 'utf8');
  const lines = text.split(/\r?\n/);
  let unitShift = 0;
  if (file.endsWith('.ecsv')) {
    const unitLine = lines.find((l) => l.startsWith('#') && /name: wavelength/.test(l));
    const unit = unitLine ? /unit: (\w+)/.exec(unitLine)?.[1] : undefined;
    if (unit === 'micron') unitShift = 4;
    else if (unit !== 'Angstrom') {
      // The galex files serialise the unit in the meta block instead.
      if (!/unit: !astropy.units.Unit \{unit: Angstrom\}/.test(text)) throw new Error(`${file}: wavelength unit not recognised`);
    }
  }
  const wl: number[] = [];
  const resp: number[] = [];
  let sawHeader = !file.endsWith('.ecsv');
  lines.forEach((raw, i) => {
    const line = raw.trim();
    if (line === '' || line.startsWith('#')) return;
    if (!sawHeader) {
      if (!/^wavelength\s+response$/.test(line)) throw new Error(`${file}:${i + 1}: expected the column header`);
      sawHeader = true;
      return;
    }
    const parts = line.split(/\s+/);
    if (parts.length !== 2) throw new Error(`${file}:${i + 1}: expected two columns`);
    const w = shiftDecimal(parts[0], unitShift);
    const r = Number(parts[1]);
    if (!Number.isFinite(w) || !Number.isFinite(r)) throw new Error(`${file}:${i + 1}: not a number`);
    wl.push(w);
    resp.push(r);
  });
  return { wavelengthAngstrom: wl, response: resp };
}

function sha256(file: string): string {
  return createHash('sha256').update(readFileSync(path.join(sourceDir, file))).digest('hex');
}

function main(): void {
  const bands = SPECS.map((s) => {
    const curve = readCurve(s.file);
    const pivot = pivotWavelength({ ...curve, convention: s.convention, key: s.key });
    return {
      key: s.key,
      label: s.label,
      system: s.system,
      magnitudeSystem: s.magnitudeSystem,
      zeroPoint: s.zeroPoint,
      convention: s.convention,
      pivotAngstrom: pivot,
      version: 1,
      citation: s.citation,
      licence: LICENCE_NOTICE[s.licence],
      derivedFrom: { file: s.file, sha256: sha256(s.file), conversion: s.conversion },
      wavelengthAngstrom: curve.wavelengthAngstrom,
      response: curve.response,
    };
  });
  const library = {
    format: 'starkiln-band-library',
    formatVersion: 1,
    version: STARTER_LIBRARY_VERSION,
    description:
      'Starter band library of Starkiln: published passband curves with their magnitude systems and zero-points. Curve nodes are exactly those of the source files (wavelength in Å, relative response as published, linear between nodes).',
    generatedBy: 'scripts/references/derive_bands.ts',
    sourceLicences: {
      speclite: readFileSync(path.join(sourceDir, 'LICENSE-speclite.rst'), 'utf8'),
      sedpy: readFileSync(path.join(sourceDir, 'LICENSE-sedpy.txt'), 'utf8'),
    },
    bands,
  };
  // One band per line keeps diffs of a single curve readable.
  const body = bands.map((b) => '    ' + JSON.stringify(b)).join(',\n');
  const head = JSON.stringify({ ...library, bands: [] }, null, 2).replace(/"bands": \[\]\n\}$/, '"bands": [\n');
  writeFileSync(outFile, `${head}${body}\n  ]\n}\n`);
  console.log(`wrote ${path.relative(root, outFile)}: ${bands.length} bands, version ${STARTER_LIBRARY_VERSION}`);
}

main();
