// The fit's public API, called by the CLI, the worker and the server (keep these names stable):
//
//   prepareFitModel(library, options?) → FitModel
//       Tables for one (band library version, extinction law, R_V). Bands are added lazily the first
//       time a star uses them, A_V planes the first time an A_V needs them; build once, reuse for
//       every star of a batch (per thread).
//   fitStar(model, star, options?) → FitResult | FitFailure
//       One star from its band fluxes (BandFlux, before the floor: the floor is applied here).
//   resolveFitOptions(partial) → FitOptions with the documented defaults.
//   FLAG_EXPLANATIONS (flags.ts) explains every code in FitResult.flags.
//
// Catalogue-scale batches use fitPacked() (batch.ts), the same engine over typed arrays.

import type { BandFlux, ExtinctionLawKey, ExtinctionSpec } from '../types';
import type { BandLibrary } from '../bands';
import { getBand } from '../bands';
import { applyFloor, planckBandMean } from '../photometry';
import { FitTables } from './grid';
import {
  EXCLUDE_CLIPPED,
  EXCLUDE_LONG,
  EXCLUDE_NONE,
  EXCLUDE_USER,
  FitEngine,
  STATUS_FEW_BANDS,
  STATUS_OK,
  type EngineSettings,
} from './engine';
import { FLAG_BITS, flagCodes, type FlagCode } from './flags';
import { mulberry32, normalDeviate } from './random';

/** Bands whose pivot lies beyond this are excess diagnostics, not fit inputs, by default (docs/science.md §8). */
export const LONG_BAND_PIVOT_ANGSTROM = 50000;

export interface FitOptions {
  law: ExtinctionLawKey;
  rv: number;
  /** A_V for stars without their own value, mag. */
  avMag: number;
  fitAv: boolean;
  avBoundsMag: [number, number];
  /** Systematic floor as a fraction of the flux, added in quadrature (0 = none). */
  floorFraction: number;
  excludeBands: string[];
  /** Fit bands beyond ~5 µm too instead of treating them as excess diagnostics. */
  includeLongBands: boolean;
  clip: boolean;
  monteCarlo?: { samples: number; seed: number };
  /** Extra fractional Teff error for the blackbody approximation (see README: BLACKBODY_MODEL_ERROR_FRACTION). */
  modelErrorFraction?: number;
}

export const DEFAULT_FIT_OPTIONS: Readonly<FitOptions> = Object.freeze({
  law: 'f99',
  rv: 3.1,
  avMag: 0,
  fitAv: false,
  avBoundsMag: [0, 10] as [number, number],
  floorFraction: 0.02,
  excludeBands: [] as string[],
  includeLongBands: false,
  clip: false,
});

export function resolveFitOptions(partial: Partial<FitOptions> = {}): FitOptions {
  const o: FitOptions = { ...DEFAULT_FIT_OPTIONS, avBoundsMag: [...DEFAULT_FIT_OPTIONS.avBoundsMag], excludeBands: [], ...partial };
  if (!['f99', 'ccm89', 'od94'].includes(o.law)) throw new Error(`unknown extinction law "${o.law}"; use f99, ccm89 or od94`);
  if (!(Number.isFinite(o.rv) && o.rv > 0)) throw new Error(`R_V must be a positive number, got ${o.rv}`);
  if (!Number.isFinite(o.avMag)) throw new Error(`A_V must be a finite number of magnitudes, got ${o.avMag}`);
  const [lo, hi] = o.avBoundsMag;
  if (!(Number.isFinite(lo) && Number.isFinite(hi) && lo < hi)) throw new Error(`A_V bounds must be two numbers, lower < upper; got ${lo}, ${hi}`);
  if (!(Number.isFinite(o.floorFraction) && o.floorFraction >= 0)) throw new Error(`systematic floor must be a fraction ≥ 0, got ${o.floorFraction}`);
  if (o.modelErrorFraction !== undefined && !(o.modelErrorFraction >= 0)) throw new Error(`model error fraction must be ≥ 0, got ${o.modelErrorFraction}`);
  if (o.monteCarlo && !(Number.isInteger(o.monteCarlo.samples) && o.monteCarlo.samples >= 10)) {
    throw new Error(`Monte Carlo needs an integer number of samples ≥ 10, got ${o.monteCarlo.samples}`);
  }
  return o;
}

export interface FitModel {
  library: BandLibrary;
  ext: ExtinctionSpec;
  tables: FitTables;
  engine: FitEngine;
  options: FitOptions;
}

export function prepareFitModel(library: BandLibrary, options: Partial<FitOptions> = {}): FitModel {
  const resolved = resolveFitOptions(options);
  const ext: ExtinctionSpec = { law: resolved.law, rv: resolved.rv };
  const tables = new FitTables((key, teffK, avMag) => {
    const band = getBand(library, key);
    if (!band) throw new Error(`band ${key} is not in band library ${library.version}`);
    return planckBandMean(band, teffK, avMag, ext);
  });
  return { library, ext, tables, engine: new FitEngine(tables), options: resolved };
}

export interface StarInput {
  id: string;
  bandFluxes: BandFlux[];
  parallaxMas?: number | null;
  parallaxErrMas?: number | null;
  /** The star's own A_V (mag); else options.avMag. Ignored when A_V is fitted. */
  avMag?: number | null;
}

export type ExclusionReason = 'excluded_by_option' | 'long_wavelength' | 'clipped' | 'no_valid_error';

export interface Interval {
  p16: number;
  p50: number;
  p84: number;
}

export interface FitResult {
  ok: true;
  id: string;
  /** null when only a lower bound exists (flag temp_lower_bound). */
  teffK: number | null;
  /** Reported 1σ: formal × max(1, √χ²_ν), plus the model-error term when switched on. */
  teffErrK: number | null;
  teffErrFormalK: number | null;
  teffLowerK: number | null;
  thetaMas: number | null;
  thetaErrMas: number | null;
  radiusRsun: number | null;
  radiusErrRsun: number | null;
  lumLsun: number | null;
  lumErrLsun: number | null;
  fbolCgs: number | null;
  fbolErrCgs: number | null;
  avMag: number;
  avErrMag: number | null;
  avFitted: boolean;
  chi2: number;
  chi2Red: number | null;
  /** Fitted detections (upper limits not counted). */
  nBands: number;
  bandsUsed: string[];
  /** (data − model)/σ (σ with the floor) for every band of the star, excluded ones included. */
  residualsSigma: Record<string, number>;
  /** Model band means s·φ in erg s⁻¹ cm⁻² Å⁻¹ for every band of the star. */
  modelFluxes: Record<string, number>;
  irExcessSigma: number | null;
  flags: FlagCode[];
  excluded: { band: string; reason: ExclusionReason }[];
  /** Formal covariance (not scaled) of (teffK, s[, avMag]). */
  covariance: { params: string[]; matrix: number[][] };
  monteCarlo?: {
    samples: number;
    seed: number;
    failures: number;
    teffK: Interval;
    thetaMas: Interval;
    radiusRsun: Interval | null;
    lumLsun: Interval | null;
  };
}

export interface FitFailure {
  ok: false;
  id: string;
  reason: 'few_bands' | 'no_convergence';
  message: string;
  excluded: { band: string; reason: ExclusionReason }[];
}

export interface Entry {
  bandKey: string;
  bandIndex: number;
  flux: number;
  sigma: number;
  upper: boolean;
  exclude: number;
}

function reasonOf(code: number): ExclusionReason {
  return code === EXCLUDE_USER ? 'excluded_by_option' : code === EXCLUDE_LONG ? 'long_wavelength' : 'clipped';
}

function finiteOrNaN(v: number | null | undefined): number {
  return typeof v === 'number' && Number.isFinite(v) ? v : NaN;
}

function nullable(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

function loadEngine(engine: FitEngine, entries: Entry[], fluxes?: Float64Array): void {
  engine.begin();
  for (let i = 0; i < entries.length; i++) {
    const e = entries[i];
    if (!engine.add(e.bandIndex, fluxes ? fluxes[i] : e.flux, e.sigma, e.upper, e.exclude)) {
      throw new Error(`a star may have at most ${engine.maxBands} band measurements`);
    }
  }
}

/** Options → engine settings. */
export function engineSettings(opts: FitOptions): EngineSettings {
  return {
    fitAv: opts.fitAv,
    avMinMag: opts.avBoundsMag[0],
    avMaxMag: opts.avBoundsMag[1],
    clip: opts.clip,
    modelErrorFraction: opts.modelErrorFraction ?? 0,
  };
}

/**
 * A star's band fluxes as engine entries: floor applied (applyFloor), roles set (excluded by option,
 * long-wavelength diagnostic), bands without a usable error listed as excluded.
 */
export function starEntries(model: FitModel, star: StarInput, opts: FitOptions): { entries: Entry[]; excluded: { band: string; reason: ExclusionReason }[] } {
  const excluded: { band: string; reason: ExclusionReason }[] = [];
  const entries: Entry[] = [];
  const excludeList = opts.excludeBands;
  for (const bf of star.bandFluxes) {
    const band = getBand(model.library, bf.bandKey);
    if (!band) throw new Error(`star ${star.id}: band ${bf.bandKey} is not in band library ${model.library.version}`);
    let raw = bf;
    // An upper limit without an error is read as a 3σ limit (common practice for quoted limits).
    if (bf.upperLimit && !(bf.errCgs > 0)) raw = { ...bf, errCgs: Math.abs(bf.fluxCgs) / 3 };
    const floored = applyFloor(raw, opts.floorFraction);
    if (!Number.isFinite(floored.fluxCgs) || !(floored.errCgs > 0) || !Number.isFinite(floored.errCgs)) {
      excluded.push({ band: bf.bandKey, reason: 'no_valid_error' });
      continue;
    }
    let exclude = EXCLUDE_NONE;
    if (excludeList.length > 0 && excludeList.includes(bf.bandKey)) exclude = EXCLUDE_USER;
    else if (!opts.includeLongBands && band.pivotAngstrom > LONG_BAND_PIVOT_ANGSTROM) exclude = EXCLUDE_LONG;
    entries.push({
      bandKey: bf.bandKey,
      bandIndex: model.tables.bandIndex(bf.bandKey),
      flux: floored.fluxCgs,
      sigma: floored.errCgs,
      upper: bf.upperLimit,
      exclude,
    });
  }
  return { entries, excluded };
}

export function fitStar(model: FitModel, star: StarInput, options?: Partial<FitOptions>): FitResult | FitFailure {
  const opts = options ? resolveFitOptions({ ...model.options, ...options }) : model.options;
  if (opts.law !== model.ext.law || opts.rv !== model.ext.rv) {
    throw new Error(`fit model was prepared for ${model.ext.law} with R_V = ${model.ext.rv}; prepare another model for ${opts.law}, R_V = ${opts.rv}`);
  }
  const { entries, excluded } = starEntries(model, star, opts);
  const settings = engineSettings(opts);
  const avMag = finiteOrNaN(star.avMag);
  const av = Number.isFinite(avMag) ? avMag : opts.avMag;
  const plx = finiteOrNaN(star.parallaxMas);
  const plxErr = finiteOrNaN(star.parallaxErrMas);
  const engine = model.engine;
  loadEngine(engine, entries);
  const status = engine.run(settings, av, plx, plxErr);
  for (let k = engine.nFit; k < engine.n; k++) excluded.push({ band: entries[engine.order[k]].bandKey, reason: reasonOf(engine.exclude[k]) });
  if (status !== STATUS_OK) {
    const minDet = opts.fitAv ? 3 : 2;
    if (status === STATUS_FEW_BANDS) {
      return {
        ok: false,
        id: star.id,
        reason: 'few_bands',
        message: `star ${star.id}: ${engine.nDet} usable detection(s) in the fit; at least ${minDet} are needed${opts.fitAv ? ' when A_V is fitted' : ''}`,
        excluded,
      };
    }
    return { ok: false, id: star.id, reason: 'no_convergence', message: `star ${star.id}: the fit did not converge to a finite result`, excluded };
  }
  const d = engine.derived;
  const lowerBound = (engine.flags & FLAG_BITS.temp_lower_bound) !== 0;
  const residualsSigma: Record<string, number> = {};
  const modelFluxes: Record<string, number> = {};
  const bandsUsed: string[] = [];
  for (let k = 0; k < engine.n; k++) {
    const key = entries[engine.order[k]].bandKey;
    residualsSigma[key] = engine.residual[k];
    modelFluxes[key] = engine.s * engine.phi[k];
    if (k < engine.nDet) bandsUsed.push(key);
  }
  const T = d.teffK;
  const s = engine.s;
  const c = engine.cov;
  const params = engine.avFree ? ['teffK', 's', 'avMag'] : ['teffK', 's'];
  const scaleOf = [T, s, 1];
  const matrix: number[][] = [];
  for (let i = 0; i < params.length; i++) {
    const row: number[] = [];
    for (let j = 0; j < params.length; j++) row.push(c[i * 3 + j] * scaleOf[i] * scaleOf[j]);
    matrix.push(row);
  }
  const result: FitResult = {
    ok: true,
    id: star.id,
    teffK: lowerBound ? null : T,
    teffErrK: lowerBound ? null : d.teffErrK,
    teffErrFormalK: lowerBound ? null : d.teffErrFormalK,
    teffLowerK: lowerBound ? engine.teffLowerK : null,
    thetaMas: lowerBound ? null : d.thetaMas,
    thetaErrMas: lowerBound ? null : d.thetaErrMas,
    radiusRsun: lowerBound ? null : nullable(d.radiusRsun),
    radiusErrRsun: lowerBound ? null : nullable(d.radiusErrRsun),
    lumLsun: lowerBound ? null : nullable(d.lumLsun),
    lumErrLsun: lowerBound ? null : nullable(d.lumErrLsun),
    fbolCgs: lowerBound ? null : d.fbolCgs,
    fbolErrCgs: lowerBound ? null : d.fbolErrCgs,
    avMag: engine.avMag,
    avErrMag: nullable(d.avErrMag),
    avFitted: opts.fitAv,
    chi2: engine.chi2,
    chi2Red: nullable(engine.chi2Red),
    nBands: engine.nDet,
    bandsUsed,
    residualsSigma,
    modelFluxes,
    irExcessSigma: nullable(engine.irExcessSigma),
    flags: flagCodes(engine.flags),
    excluded,
    covariance: { params, matrix },
  };
  if (opts.monteCarlo && !lowerBound) result.monteCarlo = monteCarlo(model, entries, engine, settings, av, plx, plxErr, opts.monteCarlo);
  return result;
}

function percentiles(values: number[]): Interval {
  const v = values.slice().sort((a, b) => a - b);
  const at = (q: number): number => {
    const x = q * (v.length - 1);
    const i = Math.floor(x);
    const f = x - i;
    return i + 1 < v.length ? v[i] * (1 - f) + v[i + 1] * f : v[i];
  };
  return { p16: at(0.16), p50: at(0.5), p84: at(0.84) };
}

/**
 * Resamples the photometry (Gaussian, σ with the floor; limits kept) and the parallax with a fixed-seed
 * generator, refitting the band set of the main fit each time (clipped bands stay out, no further clipping).
 */
function monteCarlo(
  model: FitModel,
  entriesIn: Entry[],
  engine: FitEngine,
  settingsIn: EngineSettings,
  av: number,
  plx: number,
  plxErr: number,
  mc: { samples: number; seed: number },
): NonNullable<FitResult['monteCarlo']> {
  // Freeze the main fit's band roles (clipped bands become excluded) before the engine is reused.
  const entries: Entry[] = entriesIn.map((e) => ({ ...e }));
  for (let k = 0; k < engine.n; k++) if (engine.exclude[k] === EXCLUDE_CLIPPED) entries[engine.order[k]].exclude = EXCLUDE_USER;
  const settings: EngineSettings = { ...settingsIn, clip: false };
  const rand = mulberry32(mc.seed);
  const fluxes = new Float64Array(entries.length);
  const teff: number[] = [];
  const theta: number[] = [];
  const radius: number[] = [];
  const lum: number[] = [];
  let failures = 0;
  const hasPlx = Number.isFinite(plx) && plx > 0;
  for (let i = 0; i < mc.samples; i++) {
    for (let k = 0; k < entries.length; k++) {
      const e = entries[k];
      fluxes[k] = e.upper ? e.flux : e.flux + e.sigma * normalDeviate(rand);
    }
    const p = hasPlx && plxErr > 0 ? plx + plxErr * normalDeviate(rand) : plx;
    loadEngine(model.engine, entries, fluxes);
    if (engine.run(settings, av, p, 0) !== STATUS_OK || (engine.flags & FLAG_BITS.temp_lower_bound) !== 0) {
      failures++;
      continue;
    }
    teff.push(engine.derived.teffK);
    theta.push(engine.derived.thetaMas);
    if (Number.isFinite(engine.derived.radiusRsun)) {
      radius.push(engine.derived.radiusRsun);
      lum.push(engine.derived.lumLsun);
    }
  }
  const enough = (a: number[]): boolean => a.length >= Math.max(10, 0.5 * mc.samples);
  const nanInterval: Interval = { p16: NaN, p50: NaN, p84: NaN };
  return {
    samples: mc.samples,
    seed: mc.seed,
    failures,
    teffK: teff.length ? percentiles(teff) : nanInterval,
    thetaMas: theta.length ? percentiles(theta) : nanInterval,
    radiusRsun: enough(radius) ? percentiles(radius) : null,
    lumLsun: enough(lum) ? percentiles(lum) : null,
  };
}
