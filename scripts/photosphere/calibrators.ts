// The calibrating stars of the photosphere model, read from ../shared/data (never copied into the repo):
//
// 1. The mean dwarf sequence: Pecaut & Mamajek 2013, ApJS 208, 9, Table 5, as updated by E. Mamajek
//    (EEM_dwarf_UBVIJHK_colors_Teff.txt, version 2024.05.15; see ../shared/data/dwarf-sequence/README.md).
//    One star per spectral type at 10 pc: V = M_V and the colours give B, Rc, Ic, Gaia DR2 G/BP/RP,
//    2MASS J/H/Ks and WISE W1/W2/W3; Teff and R/R☉ are the reference values (θ = 2R/10 pc). The Gaia
//    colours are DR2: they are measured through the DR2 curves (gaiadr2-*, revised DR2 passbands) and
//    the correction found is used for the DR3 bands of the same name (decision 0022).
// 2. The Gaia FGK benchmark stars v3 (Soubiran et al. 2024, A&A 682, A145; gbs_v3_dev_half.fits, MIT
//    licence beside it): fundamental Teff, interferometric limb-darkened θ_LD, log g, [Fe/H]; Gaia DR3
//    G/BP/RP and the 2MASS bands of quality A. WISE is not used for them: every one is far brighter
//    than the W1/W2 saturation limits (about 8 and 7 mag; Wright et al. 2010, from memory).
//    Luminosity class: log g < 3.5 → giant, else dwarf (subgiants go with the dwarfs; decision 0022).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { readFitsTable } from '../../src/core/input/fits-file';
import { GAIA_BRIGHT_CORRECTION_RANGE, gaiaBrightCorrection } from '../../src/core/input/survey-rules';
import { requireBand, starterBandLibrary, type BandLibrary } from '../../src/core/bands';
import { measurementToBandFlux, planckBandMean, pivotWavelength } from '../../src/core/photometry';
import { MAS_PER_RAD, PARSEC_M, SOLAR_RADIUS_M } from '../../src/core/constants';
import type { Band, BandFlux, ZeroPoint } from '../../src/core/types';
import type { CalibPoint } from '../../src/core/photosphere/calibrate';
import type { LumClass } from '../../src/core/photosphere/model';

export const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const dataDir = path.resolve(root, '../shared/data');
export const SEQUENCE_FILE = path.join(dataDir, 'dwarf-sequence/EEM_dwarf_UBVIJHK_colors_Teff.txt');
export const BENCHMARK_FILE = path.join(dataDir, 'benchmark/gbs_v3_dev_half.fits');

export const SEQUENCE_CITATION =
  'Pecaut & Mamajek 2013, ApJS 208, 9, Table 5, as updated by E. Mamajek ("A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence", EEM_dwarf_UBVIJHK_colors_Teff.txt, version 2024.05.15, github.com/emamajek/SpectralType); parts of the A/F/G rows from Pecaut, Mamajek & Bubar 2012, ApJ 756, 154. Mean values for solar-metallicity dwarfs, not individual stars.';
export const BENCHMARK_CITATION =
  'Gaia FGK benchmark stars v3: Soubiran, C. et al. 2024, A&A 682, A145 (fundamental Teff from θ_LD and F_bol; gbs_v3_dev_half.fits joined with Gaia DR3, 2MASS and AllWISE photometry; table file under the MIT licence, Copyright (c) 2024 Sven Buder).';

/** 2.5/ln 10: σ_m = 1.0857 σ_F/F (common practice). */
const MAG_PER_LN = 2.5 / Math.LN10;
const EXT = { law: 'f99' as const, rv: 3.1 };

// Gaia DR2 with the revised passbands (Evans et al. 2018, A&A 616, A4; the cosmos.esa.int
// iow_20180316 curves): ZP_AB − ZP_Vega = 25.7934 − 25.6914, 25.3806 − 25.3488, 25.1161 − 24.7627
// (values from memory of the DR2 documentation).
const DR2_AB_MINUS_VEGA: Record<string, number> = { G: 0.102, BP: 0.0318, RP: 0.3534 };

function readEcsvCurve(file: string): { wl: number[]; r: number[] } {
  const wl: number[] = [];
  const r: number[] = [];
  let header = false;
  for (const raw of readFileSync(file, 'utf8').split(/\r?\n/)) {
    const line = raw.trim();
    if (!line || line.startsWith('#')) continue;
    if (!header) {
      header = true;
      continue;
    }
    const [a, b] = line.split(/\s+/).map(Number);
    wl.push(a);
    r.push(b);
  }
  return { wl, r };
}

/** Gaia DR2 G/BP/RP as bands (photon-counting curves, AB with the DR2 offsets). */
export function gaiaDr2Bands(): Record<string, Band> {
  const out: Record<string, Band> = {};
  for (const key of ['G', 'BP', 'RP']) {
    const { wl, r } = readEcsvCurve(path.join(dataDir, `passbands/gaiadr2-${key}.ecsv`));
    const zp: ZeroPoint = { fnuJy: 3631, relErr: 0, catalogueOffsetMag: DR2_AB_MINUS_VEGA[key], source: 'Gaia DR2 (revised passbands), Evans et al. 2018' };
    const band: Band = {
      key, label: `Gaia DR2 ${key}`, system: 'Gaia DR2', magnitudeSystem: 'vega', zeroPoint: zp, convention: 'photon',
      wavelengthAngstrom: wl, response: r, pivotAngstrom: 0, version: 1, citation: 'Evans et al. 2018 (gaiadr2 curves)', licence: 'speclite',
    };
    band.pivotAngstrom = pivotWavelength(band);
    out[key] = band;
  }
  return out;
}

export interface Calibrator {
  star: string;
  source: 'sequence' | 'benchmark';
  cls: LumClass;
  teffK: number;
  teffErrK: number;
  /** Angular diameter (mas) and its 1σ. */
  thetaMas: number;
  thetaErrMas: number;
  fehDex: number | null;
  logg: number | null;
  /** Photometry as the fit takes it (library bands; the sequence's Gaia values in DR3 keys are its DR2 values). */
  fluxes: BandFlux[];
  /** The band objects the fluxes were measured through (DR2 curves for the sequence's Gaia bands). */
  bandsUsed: Record<string, Band>;
  /** The same magnitudes as a user would give them to the fit: through the library bands (Gaia as DR3). */
  inputFluxes: BandFlux[];
  parallaxMas: number;
  parallaxErrMas: number;
}

export interface SequenceRow {
  spt: string;
  teffK: number;
  radiusRsun: number;
  mags: Record<string, number>;
}

/** The mean dwarf sequence, one row per dwarf type with Teff, R and at least four magnitudes at 10 pc. */
export function readSequence(file = SEQUENCE_FILE): SequenceRow[] {
  const lines = readFileSync(file, 'utf8').split(/\r?\n/);
  const h = lines.findIndex((l) => l.startsWith('#SpT'));
  const cols = lines[h].slice(1).trim().split(/\s+/);
  const rows: SequenceRow[] = [];
  for (const l of lines.slice(h + 1)) {
    if (!l.trim() || l.startsWith('#')) break;
    const v = l.trim().split(/\s+/);
    if (v.length < cols.length - 1) continue;
    const d = Object.fromEntries(cols.map((c, i) => [c, v[i]]));
    const f = (k: string): number | null => {
      const x = (d[k] ?? '...').replace(/:$/, '');
      const n = Number(x);
      return x === '' || !Number.isFinite(n) || /^\.+$/.test(x) ? null : n;
    };
    const T = f('Teff');
    const Mv = f('Mv');
    const R = f('R_Rsun');
    if (T === null || Mv === null || R === null || !d.SpT.endsWith('V')) continue;
    const m: Record<string, number> = { V: Mv };
    const bv = f('B-V'), vr = f('V-Rc'), vi = f('V-Ic'), gv = f('G-V'), grp = f('G-Rp'), bprp = f('Bp-Rp');
    if (bv !== null) m.B = Mv + bv;
    if (vr !== null) m.R = Mv - vr;
    if (vi !== null) m.I = Mv - vi;
    if (gv !== null) {
      m.G = Mv + gv;
      if (grp !== null) {
        m.RP = m.G - grp;
        if (bprp !== null) m.BP = m.RP + bprp;
      }
    }
    const vk = f('V-Ks');
    if (vk !== null) {
      m.Ks = Mv - vk;
      const hk = f('H-Ks') ?? f('H-K');
      const jh = f('J-H');
      if (hk !== null) {
        m.H = m.Ks + hk;
        if (jh !== null) m.J = m.H + jh;
      }
      const kw1 = f('Ks-W1');
      if (kw1 !== null) {
        m.W1 = m.Ks - kw1;
        const w12 = f('W1-W2'), w13 = f('W1-W3');
        if (w12 !== null) m.W2 = m.W1 - w12;
        if (w13 !== null) m.W3 = m.W1 - w13;
      }
    }
    if (Object.keys(m).length < 4) continue;
    rows.push({ spt: d.SpT, teffK: T, radiusRsun: R, mags: m });
  }
  return rows;
}

/** 0.02 mag for every mean-sequence magnitude (as ../shared/tools/dwarf_sequence_csv.py). */
export const SEQUENCE_MAG_ERR = 0.02;

export function sequenceCalibrators(lib: BandLibrary = starterBandLibrary()): Calibrator[] {
  const dr2 = gaiaDr2Bands();
  const theta = (R: number) => ((2 * R * SOLAR_RADIUS_M) / (10 * PARSEC_M)) * MAS_PER_RAD;
  return readSequence().map((row) => {
    const fluxes: BandFlux[] = [];
    const inputFluxes: BandFlux[] = [];
    const bandsUsed: Record<string, Band> = {};
    for (const [key, mag] of Object.entries(row.mags)) {
      const band = dr2[key] ?? requireBand(lib, key);
      bandsUsed[key] = band;
      fluxes.push(measurementToBandFlux(band, { bandKey: key, mag, magErr: SEQUENCE_MAG_ERR }));
      inputFluxes.push(measurementToBandFlux(requireBand(lib, key), { bandKey: key, mag, magErr: SEQUENCE_MAG_ERR }));
    }
    return {
      star: row.spt, source: 'sequence', cls: 'dwarf', teffK: row.teffK, teffErrK: 0, thetaMas: theta(row.radiusRsun), thetaErrMas: 0,
      fehDex: 0, logg: null, fluxes, bandsUsed, inputFluxes, parallaxMas: 100, parallaxErrMas: 0.1,
    } satisfies Calibrator;
  });
}

export function benchmarkCalibrators(lib: BandLibrary = starterBandLibrary()): Calibrator[] {
  const t = readFitsTable(new Uint8Array(readFileSync(BENCHMARK_FILE)), { source: 'gbs_v3_dev_half.fits' });
  const col = (n: string) => t.getFloat64(n);
  const hip = t.getColumn('hip');
  const [teff, eteff, theta, etheta, logg, feh, plx, eplx] = ['teff', 'e_teff', 'theta_ld', 'e_theta_ld', 'logg', 'fe_h', 'parallax', 'parallax_error'].map(col);
  const qual = t.getColumn('ph_qual_tmass');
  const gaia = (['G', 'BP', 'RP'] as const).map((k) => {
    const f = k === 'G' ? 'phot_g_mean' : k === 'BP' ? 'phot_bp_mean' : 'phot_rp_mean';
    return [k, col(`${f}_mag`), col(`${f}_flux`), col(`${f}_flux_error`)] as const;
  });
  const tmass = ([['J', 'j_m', 'j_msigcom'], ['H', 'h_m', 'h_msigcom'], ['Ks', 'ks_m', 'ks_msigcom']] as const).map(([k, m, e]) => [k, col(m), col(e)] as const);
  const out: Calibrator[] = [];
  for (let i = 0; i < t.rowCount; i++) {
    if (!(teff[i] > 0) || !(theta[i] > 0)) continue;
    const fluxes: BandFlux[] = [];
    const bandsUsed: Record<string, Band> = {};
    const raw = { G: gaia[0][1][i], RP: gaia[2][1][i] };
    for (const [key, mag, fl, fe] of gaia) {
      if (!Number.isFinite(mag[i]) || !(fl[i] > 0) || !(fe[i] > 0)) continue;
      // G brighter than 3.5 mag: too few calibrators of Gaia's own bright-star relation there to use
      // it for calibration (the six such giants here sit 0.15–0.35 above the others in G − RP).
      if (key === 'G' && mag[i] < GAIA_G_BRIGHT_LIMIT) continue;
      // Gaia's bright-star (saturation) corrections, as the column mapping applies them to a survey's
      // own Gaia columns (src/core/input/survey-rules.ts); brighter than their range the value is out.
      const on = raw[GAIA_BRIGHT_CORRECTION_RANGE[key].on];
      const shift = Number.isFinite(on) ? gaiaBrightCorrection(key, on) : 0;
      if (shift === undefined) continue;
      bandsUsed[key] = requireBand(lib, key);
      fluxes.push(measurementToBandFlux(bandsUsed[key], { bandKey: key, mag: mag[i] + shift, magErr: (MAG_PER_LN * fe[i]) / fl[i] }));
    }
    const q = typeof qual[i] === 'string' ? (qual[i] as string) : '';
    tmass.forEach(([key, mag, err], j) => {
      if (q[j] !== 'A' || !Number.isFinite(mag[i]) || !(err[i] > 0)) return;
      bandsUsed[key] = requireBand(lib, key);
      fluxes.push(measurementToBandFlux(bandsUsed[key], { bandKey: key, mag: mag[i], magErr: err[i] }));
    });
    if (fluxes.length === 0) continue;
    out.push({
      star: String(hip[i]).trim(), source: 'benchmark', cls: logg[i] < 3.5 ? 'giant' : 'dwarf', teffK: teff[i], teffErrK: eteff[i],
      thetaMas: theta[i], thetaErrMas: Number.isFinite(etheta[i]) ? etheta[i] : 0, fehDex: Number.isFinite(feh[i]) ? feh[i] : null,
      logg: Number.isFinite(logg[i]) ? logg[i] : null, fluxes, bandsUsed, inputFluxes: fluxes, parallaxMas: plx[i], parallaxErrMas: eplx[i],
    });
  }
  return out;
}

/** Gaia G values brighter than this are left out of the calibration (saturation; Riello et al. 2021, from memory). */
export const GAIA_G_BRIGHT_LIMIT = 3.5;

/** |[Fe/H]| above which a benchmark star is kept out of the calibration (it is for near-solar stars). */
export const CALIBRATION_FEH_LIMIT = 0.5;

/** Calibration points d = ln(F_obs / F_blackbody) with σ(d) for calibrators (see calibrate.ts). */
export function calibPoints(cals: Calibrator[]): CalibPoint[] {
  const pts: CalibPoint[] = [];
  for (const c of cals) {
    if (c.source === 'benchmark' && (c.fehDex === null || Math.abs(c.fehDex) > CALIBRATION_FEH_LIMIT)) continue;
    const half = c.thetaMas / MAS_PER_RAD / 2;
    const s = half * half;
    const relT = c.teffErrK / c.teffK;
    const relTheta = c.thetaErrMas / c.thetaMas;
    // One σ per star for all its bands (the rms over its bands): the reference Teff and θ errors move
    // every band of a star together, and band-dependent weights would turn that common error into
    // spurious colour offsets between the per-band curves.
    const starPts: CalibPoint[] = [];
    for (const f of c.fluxes) {
      const band = c.bandsUsed[f.bandKey];
      const phi = planckBandMean(band, c.teffK, 0, EXT);
      const dT = 1e-3;
      const k = Math.log(planckBandMean(band, c.teffK * (1 + dT), 0, EXT) / planckBandMean(band, c.teffK * (1 - dT), 0, EXT)) / (2 * dT);
      const phot = f.errCgs / f.fluxCgs;
      const sigma = Math.sqrt(phot * phot + (k * relT) ** 2 + (2 * relTheta) ** 2);
      starPts.push({ star: `${c.source}:${c.star}`, source: c.source, cls: c.cls, band: f.bandKey, lnT: Math.log(c.teffK), d: Math.log(f.fluxCgs / (s * phi)), sigma });
    }
    const rms = Math.sqrt(starPts.reduce((a, p) => a + p.sigma * p.sigma, 0) / starPts.length);
    for (const p of starPts) pts.push({ ...p, sigma: rms });
  }
  return pts;
}
