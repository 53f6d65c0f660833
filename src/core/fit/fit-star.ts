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
  EXCLUDE_REJECTED,
  EXCLUDE_USER,
  FitEngine,
  STATUS_FEW_BANDS,
  STATUS_OK,
  type EngineSettings,
} from './engine';
import { FLAG_BITS, flagCodes, type FlagCode } from './flags';
import { mulberry32, normalDeviate } from './random';
import { bandStanding, defaultPhotosphere, effectiveModelVersion } from '../photosphere';
import {
  bandCalibrated,
  bandScatter,
  inClassRange,
  lnCorrection,
  teffTermSigma,
  type LumClass,
  type PhotosphereData,
} from '../photosphere/model';
import { radiusRsunFromTheta, PLX_SNR_MIN } from './derived';
import { asymmetricIntervals, resolveDistance, type DistanceUsed, type Interval68 } from './distance';
import { findRejections, rejectionDetail, REJECT_FALSE_RATE, type RejectedSet } from './rejection';

export type { LumClass } from '../photosphere/model';
/** Where a fit's luminosity class came from. */
export type LumClassSource = 'parallax' | 'input' | 'batch' | 'assumed';

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
  /** The older sequential clipping of the worst band (off by default; ignored while `reject` is on). */
  clip: boolean;
  /**
   * Robust rejection of one or two bands inconsistent with the others, on the residuals of the
   * calibrated fit (rejection.ts, decision 0027). On by default; a Planck-only fit never rejects.
   */
  reject: boolean;
  /** The rejection's false-rejection rate per star with correct errors (α of the Bonferroni test). */
  rejectFalseRate: number;
  monteCarlo?: { samples: number; seed: number };
  /** Extra fractional Teff error for the blackbody approximation of a Planck-only fit (BLACKBODY_MODEL_ERROR_FRACTION). */
  modelErrorFraction?: number;
  /** Fit a blackbody only: teff_* = tbb_*, no photosphere model. */
  planckOnly: boolean;
  /** Luminosity class for stars without their own: 'auto' (from the parallax radius; dwarf without one) or a fixed class. */
  lumClass: 'auto' | LumClass;
  /**
   * Gaia DR3 parallax zero-point Z in mas, subtracted (ϖ − Z) from parallaxes whose origin is Gaia
   * DR3; 0 = none. Default −0.017 (Lindegren et al. 2021 quasar median, from memory; decision 0028).
   */
  gaiaParallaxZeroPointMas: number;
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
  reject: true,
  rejectFalseRate: REJECT_FALSE_RATE,
  planckOnly: false,
  lumClass: 'auto' as const,
  gaiaParallaxZeroPointMas: -0.017,
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
  if (!['auto', 'dwarf', 'giant'].includes(o.lumClass)) throw new Error(`luminosity class must be auto, dwarf or giant, got "${o.lumClass}"`);
  if (typeof o.reject !== 'boolean') throw new Error('reject must be true or false');
  if (!(o.rejectFalseRate > 0 && o.rejectFalseRate < 0.5)) throw new Error(`the rejection's false-rejection rate must lie between 0 and 0.5, got ${o.rejectFalseRate}`);
  if (typeof o.planckOnly !== 'boolean') throw new Error('planckOnly must be true or false');
  if (!(Number.isFinite(o.gaiaParallaxZeroPointMas) && Math.abs(o.gaiaParallaxZeroPointMas) < 1)) throw new Error(`the Gaia parallax zero-point must be a number of mas within ±1, got ${o.gaiaParallaxZeroPointMas}`);
  if (o.monteCarlo && !(Number.isInteger(o.monteCarlo.samples) && o.monteCarlo.samples >= 10)) {
    throw new Error(`Monte Carlo needs an integer number of samples ≥ 10, got ${o.monteCarlo.samples}`);
  }
  return o;
}

/** The photosphere model's tables and engines for one band library, law and R_V (one per thread). */
export interface PhotosphereRuntime {
  data: PhotosphereData;
  tables: Record<LumClass, FitTables>;
  engines: Record<LumClass, FitEngine>;
  /**
   * Whether the model describes a band of this library: its definition is the one calibrated, or
   * differs only by the zero-point (the correction is then shifted, src/core/photosphere/standing.ts).
   */
  usable(key: string): boolean;
  /** The model version in effect with this library (decision 0026): "kp-1", or "kp-1+v3" after a zero-point change. */
  version: string;
}

export interface FitModel {
  library: BandLibrary;
  ext: ExtinctionSpec;
  tables: FitTables;
  engine: FitEngine;
  options: FitOptions;
  /** null: Planck only (no model data given). */
  photosphere: PhotosphereRuntime | null;
}

/**
 * photosphere: the model data (default: the committed photosphere-v1.json; null = none, Planck only).
 * The model's correction multiplies the (reddened) Planck band mean of every band whose definition
 * (band version) is the one it was calibrated with; other bands keep the Planck value (band_uncalibrated).
 */
export function prepareFitModel(library: BandLibrary, options: Partial<FitOptions> = {}, photosphere?: PhotosphereData | null): FitModel {
  const resolved = resolveFitOptions(options);
  const ext: ExtinctionSpec = { law: resolved.law, rv: resolved.rv };
  const bandOf = (key: string) => {
    const band = getBand(library, key);
    if (!band) throw new Error(`band ${key} is not in band library ${library.version}`);
    return band;
  };
  const tables = new FitTables((key, teffK, avMag) => planckBandMean(bandOf(key), teffK, avMag, ext));
  const data = photosphere === undefined ? defaultPhotosphere() : photosphere;
  let runtime: PhotosphereRuntime | null = null;
  if (data) {
    const standings = new Map<string, { usable: boolean; lnShift: number }>();
    const standing = (key: string) => {
      let s = standings.get(key);
      if (!s) {
        const b = bandStanding(data, library, key);
        s = { usable: b.state === 'as-calibrated' || b.state === 'zero-point-changed', lnShift: b.lnShift };
        standings.set(key, s);
      }
      return s;
    };
    const usable = (key: string): boolean => standing(key).usable;
    const classTables = (cls: LumClass) =>
      new FitTables((key, teffK, avMag) => {
        const base = planckBandMean(bandOf(key), teffK, avMag, ext);
        const s = standing(key);
        return s.usable ? base * Math.exp(lnCorrection(data, cls, key, Math.log(teffK)) + s.lnShift) : base;
      });
    const t = { dwarf: classTables('dwarf'), giant: classTables('giant') };
    const engines = { dwarf: new FitEngine(t.dwarf), giant: new FitEngine(t.giant) };
    engines.dwarf.denseCoarse = engines.giant.denseCoarse = true;
    runtime = { data, tables: t, engines, usable, version: effectiveModelVersion(data, library) };
  }
  return { library, ext, tables, engine: new FitEngine(tables), options: resolved, photosphere: runtime };
}

/** A band's index, the same in the Planck tables and every photosphere table (bands are added in step). */
export function bandIndexAll(model: FitModel, key: string): number {
  const i = model.tables.bandIndex(key);
  if (model.photosphere) {
    // Bring every photosphere table up to the Planck table's bands, in its order (callers may have
    // added bands to model.tables directly).
    for (const t of Object.values(model.photosphere.tables)) {
      while (t.bandCount < model.tables.bandCount) t.bandIndex(model.tables.bandKeys[t.bandCount]);
      if (t.getBandIndex(key) !== i) throw new Error(`band ${key}: table indices diverged`);
    }
  }
  return i;
}

export interface StarInput {
  id: string;
  bandFluxes: BandFlux[];
  parallaxMas?: number | null;
  parallaxErrMas?: number | null;
  /** The star's own A_V (mag); else options.avMag. Ignored when A_V is fitted. */
  avMag?: number | null;
  /** The star's own luminosity class (input column lum_class); else options.lumClass. */
  lumClass?: LumClass | null;
  /** [Fe/H] in dex (input column feh): recorded; far from solar it raises feh_far. */
  fehDex?: number | null;
  /** Where the parallax comes from: Gaia DR3 parallaxes get options.gaiaParallaxZeroPointMas. */
  parallaxOrigin?: 'gaia_dr3' | 'hipparcos' | 'other' | null;
  /** A given distance (pc) with its 68 % interval: used instead of 1/parallax (src/core/fit/distance.ts). */
  distancePc?: number | null;
  distanceLoPc?: number | null;
  distanceHiPc?: number | null;
  /** Raises possible_companion (the input's Gaia RUWE rule, src/core/input/survey-rules.ts). */
  possibleCompanion?: boolean;
  /** Values the input rules left out, listed first among the fit's excluded bands with their reason. */
  leftOut?: { bandKey: string; reason: InputExclusionReason; detail: string }[];
}

/** Why the input rules left a value out (src/core/input/survey-rules.ts LeftOutReason). */
export type InputExclusionReason = 'quality_letter' | 'saturated' | 'catalogue_flag' | 'bp_rp_excess';

/** A band the fit did not use, with why; `detail` says more for the input rules' reasons. */
export interface Excluded {
  band: string;
  reason: ExclusionReason;
  detail?: string;
}

/** The pure Planck fit kept beside the calibrated one (never widened by any model term). */
export interface PlanckFit {
  teffK: number | null;
  teffErrK: number | null;
  teffErrFormalK: number | null;
  teffLowerK: number | null;
  chi2Red: number | null;
  /** Planck model band means s·φ (erg s⁻¹ cm⁻² Å⁻¹) for every band of the star. */
  modelFluxes: Record<string, number>;
  flags: FlagCode[];
  thetaMas: number | null;
  radiusRsun: number | null;
  avMag: number | null;
}

export type ExclusionReason = 'excluded_by_option' | 'long_wavelength' | 'clipped' | 'rejected' | 'no_valid_error' | InputExclusionReason;

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
  excluded: Excluded[];
  /** The robust rejection's tests that rejected bands (empty when none was rejected); null when it was off. */
  rejection: { falseRate: number; sets: RejectedSet[] } | null;
  /** Formal covariance (not scaled) of (teffK, s[, avMag]). */
  covariance: { params: string[]; matrix: number[][] };
  /**
   * The Teff–θ covariance of the reported errors (χ²_ν scaling and model term included), K·mas, and
   * its correlation coefficient; null for a lower bound.
   */
  teffTheta: { covKMas: number; corr: number } | null;
  /** The pure Planck fit (tbb_* columns); with planckOnly its numbers equal the ones above. */
  planck: PlanckFit;
  /** The photosphere model used (name, version); null for a Planck-only fit. */
  photosphere: { name: string; version: string } | null;
  lumClass: LumClass | null;
  lumClassSource: LumClassSource | null;
  fehDex: number | null;
  /** Fractional model scatter added in quadrature to each fitted band's error (calibrated fit). */
  modelScatter?: Record<string, number>;
  /** The calibration term σ(ln T) added along the T–θ degeneracy (calibrated fit), 0 for Planck only. */
  teffModelTermLn: number;
  /** The distance R and L rest on, and where it came from (null: no usable parallax or distance). */
  distance: DistanceUsed | null;
  /** 68 % intervals of R and L from the distance's own ends and the fit's errors (null ends: unbounded or not given). */
  radiusIntervalRsun: Interval68 | null;
  lumIntervalLsun: Interval68 | null;
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
  excluded: Excluded[];
}

export interface Entry {
  bandKey: string;
  bandIndex: number;
  flux: number;
  sigma: number;
  upper: boolean;
  exclude: number;
  /** The reason in words of a rejected band. */
  detail?: string;
}

function reasonOf(code: number): ExclusionReason {
  return code === EXCLUDE_USER ? 'excluded_by_option' : code === EXCLUDE_LONG ? 'long_wavelength' : code === EXCLUDE_REJECTED ? 'rejected' : 'clipped';
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
    // Robust rejection replaces the sequential clipping whenever a calibrated fit can run it.
    clip: opts.clip && !(opts.reject && !opts.planckOnly),
    modelErrorFraction: opts.modelErrorFraction ?? 0,
  };
}

/**
 * A star's band fluxes as engine entries: floor applied (applyFloor), roles set (excluded by option,
 * long-wavelength diagnostic), bands without a usable error listed as excluded.
 */
export function starEntries(model: FitModel, star: StarInput, opts: FitOptions): { entries: Entry[]; excluded: Excluded[] } {
  const excluded: Excluded[] = (star.leftOut ?? []).map((l) => ({ band: l.bandKey, reason: l.reason, detail: l.detail }));
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
      bandIndex: bandIndexAll(model, bf.bandKey),
      flux: floored.fluxCgs,
      sigma: floored.errCgs,
      upper: bf.upperLimit,
      exclude,
    });
  }
  return { entries, excluded };
}

function failureOf(engine: FitEngine, status: number, star: StarInput, opts: FitOptions, excluded: FitFailure['excluded']): FitFailure {
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

/** The result fields an engine's last run gives (Planck or photosphere engine alike). */
function resultOf(
  engine: FitEngine,
  entries: Entry[],
  excluded: FitResult['excluded'],
  star: StarInput,
  opts: FitOptions,
): Omit<FitResult, 'planck' | 'photosphere' | 'lumClass' | 'lumClassSource' | 'fehDex' | 'teffModelTermLn' | 'distance' | 'radiusIntervalRsun' | 'lumIntervalLsun' | 'rejection'> {
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
  return {
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
    flags: flagCodes(engine.flags | (star.possibleCompanion ? FLAG_BITS.possible_companion : 0)),
    excluded: [...excluded, ...excludedOf(engine, entries)],
    covariance: { params, matrix },
    teffTheta: lowerBound || !Number.isFinite(d.corrTeffTheta) ? null : { covKMas: d.corrTeffTheta * d.teffErrK * d.thetaErrMas, corr: d.corrTeffTheta },
  };
}

function excludedOf(engine: FitEngine, entries: Entry[]): FitResult['excluded'] {
  const out: FitResult['excluded'] = [];
  for (let k = engine.nFit; k < engine.n; k++) {
    const e = entries[engine.order[k]];
    out.push(e.detail ? { band: e.bandKey, reason: reasonOf(engine.exclude[k]), detail: e.detail } : { band: e.bandKey, reason: reasonOf(engine.exclude[k]) });
  }
  return out;
}

/** Luminosity class: the star's own, a fixed batch class, the parallax radius of the Planck fit, or dwarf. */
export function chooseLumClass(
  data: PhotosphereData,
  star: StarInput,
  opts: FitOptions,
  planckThetaMas: number,
  plx: number,
  plxErr: number,
): { cls: LumClass; source: LumClassSource } {
  if (star.lumClass === 'dwarf' || star.lumClass === 'giant') return { cls: star.lumClass, source: 'input' };
  if (opts.lumClass !== 'auto') return { cls: opts.lumClass, source: 'batch' };
  const goodPlx = Number.isFinite(plx) && plx > 0 && (!(plxErr > 0) || plx / plxErr >= PLX_SNR_MIN);
  if (goodPlx && Number.isFinite(planckThetaMas)) {
    const r = radiusRsunFromTheta(planckThetaMas, plx);
    return { cls: r > data.giantRadiusRsun ? 'giant' : 'dwarf', source: 'parallax' };
  }
  return { cls: 'dwarf', source: 'assumed' };
}

function scatterOf(rt: PhotosphereRuntime, cls: LumClass, entries: Entry[], teffK: number, out: Float64Array): void {
  for (let i = 0; i < entries.length; i++) {
    const key = entries[i].bandKey;
    out[i] = rt.usable(key) ? bandScatter(rt.data, cls, key, teffK) : rt.data.uncalibratedScatter;
  }
}

function withScatter(entries: Entry[], scatter: Float64Array): Entry[] {
  return entries.map((e, i) => {
    const m = scatter[i] * Math.abs(e.flux);
    return { ...e, sigma: Math.sqrt(e.sigma * e.sigma + m * m) };
  });
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
  // A given distance, or the parallax with the Gaia DR3 zero-point when it is one (distance.ts).
  const dist = resolveDistance(star, opts.gaiaParallaxZeroPointMas);
  const plx = finiteOrNaN(dist.parallaxMas);
  const plxErr = finiteOrNaN(dist.parallaxErrMas);
  const feh = finiteOrNaN(star.fehDex);
  const rt = opts.planckOnly ? null : model.photosphere;
  // 1. The pure Planck fit, always, never widened by a model term.
  const engine = model.engine;
  const planckRun = (ents: Entry[]): { status: number; res: ReturnType<typeof resultOf> | null } => {
    loadEngine(engine, ents);
    const status = engine.run({ ...settings, modelErrorFraction: 0 }, av, plx, plxErr);
    return { status, res: status === STATUS_OK ? resultOf(engine, ents, excluded, star, opts) : null };
  };
  let pr = planckRun(entries);
  if (pr.status !== STATUS_OK) return failureOf(engine, pr.status, star, opts, [...excluded, ...excludedOf(engine, entries)]);
  let planckRes = pr.res!;
  if (!rt) {
    const planck = planckOf(planckRes);
    // Planck only: teff_* = tbb_*; the optional blackbody model-error term widens teff_* alone.
    const mef = opts.modelErrorFraction ?? 0;
    let res = planckRes;
    if (mef > 0) {
      engine.deriveWithModelTerm(mef * mef);
      engine.flags |= FLAG_BITS.model_error_added;
      res = resultOf(engine, entries, excluded, star, opts);
    }
    const result: FitResult = { ...res, planck, photosphere: null, lumClass: null, lumClassSource: null, fehDex: nullable(feh), teffModelTermLn: mef, rejection: null, ...distanceFields(res, dist.used) };
    if (opts.monteCarlo && result.teffK !== null) result.monteCarlo = monteCarlo(engine, entries, settings, av, plx, plxErr, opts.monteCarlo, mef, engine.beta);
    return result;
  }
  // 2. The photosphere fit, with the class's per-band model scatter in quadrature.
  const data = rt.data;
  const scatter = new Float64Array(entries.length);
  const scatter2 = new Float64Array(entries.length);
  let calEntries: Entry[] = entries;
  const calRun = (cls: LumClass, ents: Entry[], tStart: number): number => {
    const pe = rt.engines[cls];
    scatterOf(rt, cls, ents, tStart, scatter);
    calEntries = withScatter(ents, scatter);
    loadEngine(pe, calEntries);
    let st = pe.run({ ...settings, modelErrorFraction: 0 }, av, plx, plxErr);
    if (st === STATUS_OK) {
      // The scatter belongs to the fitted temperature: refit once if it sits in another scatter bin.
      scatterOf(rt, cls, ents, Math.exp(pe.u), scatter2);
      if (scatter2.some((v, i) => v !== scatter[i])) {
        scatter.set(scatter2);
        calEntries = withScatter(ents, scatter);
        loadEngine(pe, calEntries);
        st = pe.run({ ...settings, modelErrorFraction: 0 }, av, plx, plxErr);
      }
    }
    return st;
  };
  let { cls, source } = chooseLumClass(data, star, opts, finiteOrNaN(planckRes.thetaMas), plx, plxErr);
  let st = calRun(cls, entries, planckRes.teffK ?? planckRes.teffLowerK ?? 5772);
  let rejection: FitResult['rejection'] = null;
  if (st === STATUS_OK && opts.reject) {
    // 2b. Robust rejection on the calibrated fit's residuals (rejection.ts), then both fits again
    // without the rejected bands (the Planck fit beside it uses the same bands; the class is chosen anew).
    const pe = rt.engines[cls];
    const base = calEntries;
    const trial = (out: number[]): number => {
      loadEngine(pe, base.map((e, i) => (out.includes(i) ? { ...e, exclude: EXCLUDE_REJECTED } : e)));
      return pe.run({ ...settings, modelErrorFraction: 0 }, av, plx, plxErr);
    };
    const withPivot = base.map((e) => ({ ...e, pivotAngstrom: getBand(model.library, e.bandKey)!.pivotAngstrom }));
    const found = findRejections(pe, withPivot, opts.fitAv ? 3 : 2, trial, opts.rejectFalseRate);
    rejection = { falseRate: opts.rejectFalseRate, sets: found.sets };
    if (found.indices.length > 0) {
      const detailOf = new Map<string, string>();
      for (const set of found.sets) for (const b of set.bands) detailOf.set(b, rejectionDetail(set, b, opts.rejectFalseRate));
      const kept = entries.map((e, i) => (found.indices.includes(i) ? { ...e, exclude: EXCLUDE_REJECTED, detail: detailOf.get(e.bandKey) } : e));
      pr = planckRun(kept);
      if (pr.status !== STATUS_OK) return failureOf(engine, pr.status, star, opts, [...excluded, ...excludedOf(engine, kept)]);
      planckRes = pr.res!;
      ({ cls, source } = chooseLumClass(data, star, opts, finiteOrNaN(planckRes.thetaMas), plx, plxErr));
      st = calRun(cls, kept, planckRes.teffK ?? planckRes.teffLowerK ?? 5772);
    }
  }
  const pe = rt.engines[cls];
  if (st !== STATUS_OK) return failureOf(pe, st, star, opts, [...excluded, ...excludedOf(pe, calEntries)]);
  const planck = planckOf(planckRes);
  if (rejection && rejection.sets.length > 0) pe.flags |= FLAG_BITS.rejected;
  const tCal = Math.exp(pe.u);
  // 3. The calibration term in σ(ln T), along the T–θ degeneracy; grown outside the calibrated range.
  const sigmaM = teffTermSigma(data, cls, tCal);
  let varM = sigmaM * sigmaM;
  if (!inClassRange(data, cls, tCal)) {
    pe.flags |= FLAG_BITS.outside_calibration;
    const diff = planck.teffK !== null ? Math.log(tCal / planck.teffK) : 0;
    varM += diff * diff;
  }
  pe.deriveWithModelTerm(varM);
  if (source === 'batch' || source === 'assumed') pe.flags |= FLAG_BITS.class_assumed;
  if (Number.isFinite(feh) && Math.abs(feh) > data.fehLimitDex) pe.flags |= FLAG_BITS.feh_far;
  for (let k = 0; k < pe.nDet; k++) {
    const key = calEntries[pe.order[k]].bandKey;
    if (!rt.usable(key) || !bandCalibrated(data, cls, key, tCal)) {
      pe.flags |= FLAG_BITS.band_uncalibrated;
      break;
    }
  }
  const res = resultOf(pe, calEntries, excluded, star, opts);
  const modelScatter: Record<string, number> = {};
  entries.forEach((e, i) => (modelScatter[e.bandKey] = scatter[i]));
  const result: FitResult = {
    ...res,
    planck,
    photosphere: { name: data.name, version: rt.version },
    lumClass: cls,
    lumClassSource: source,
    fehDex: nullable(feh),
    modelScatter,
    teffModelTermLn: Math.sqrt(varM),
    ...distanceFields(res, dist.used),
    rejection,
  };
  if (opts.monteCarlo && result.teffK !== null) result.monteCarlo = monteCarlo(pe, calEntries, settings, av, plx, plxErr, opts.monteCarlo, Math.sqrt(varM), pe.beta);
  return result;
}

/**
 * The distance record and the asymmetric R and L intervals (distance.ts). For a given distance the
 * parallax flags do not apply (plx_weak speaks of 1/ϖ): they are dropped.
 */
function distanceFields(
  res: Pick<FitResult, 'radiusRsun' | 'lumLsun' | 'thetaMas' | 'thetaErrMas' | 'fbolCgs' | 'fbolErrCgs' | 'flags'>,
  used: DistanceUsed | null,
): Pick<FitResult, 'distance' | 'radiusIntervalRsun' | 'lumIntervalLsun'> {
  if (used?.source === 'input_distance') {
    const i = res.flags.indexOf('plx_weak');
    if (i >= 0) res.flags.splice(i, 1);
  }
  if (!used || res.radiusRsun === null || res.lumLsun === null || res.thetaMas === null || res.fbolCgs === null) {
    return { distance: used, radiusIntervalRsun: null, lumIntervalLsun: null };
  }
  const sTheta = (res.thetaErrMas ?? NaN) / res.thetaMas;
  const sF = (res.fbolErrCgs ?? NaN) / res.fbolCgs;
  const iv = asymmetricIntervals(used, res.radiusRsun, res.lumLsun, sTheta, sF);
  return { distance: used, radiusIntervalRsun: iv.radiusRsun, lumIntervalLsun: iv.lumLsun };
}

function planckOf(r: ReturnType<typeof resultOf>): PlanckFit {
  return {
    teffK: r.teffK,
    teffErrK: r.teffErrK,
    teffErrFormalK: r.teffErrFormalK,
    teffLowerK: r.teffLowerK,
    chi2Red: r.chi2Red,
    modelFluxes: r.modelFluxes,
    flags: r.flags,
    thetaMas: r.thetaMas,
    radiusRsun: r.radiusRsun,
    avMag: r.avMag,
  };
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
 * Resamples the photometry (Gaussian, σ with the floor and any model scatter; limits kept) and the
 * parallax with a fixed-seed generator, refitting the band set of the main fit each time (clipped bands
 * stay out, no further clipping). A model term σ_m in ln T is drawn too and moved along the T–θ
 * degeneracy (ln s shifts by β times the draw), as in the linear errors.
 */
function monteCarlo(
  engine: FitEngine,
  entriesIn: Entry[],
  settingsIn: EngineSettings,
  av: number,
  plx: number,
  plxErr: number,
  mc: { samples: number; seed: number },
  modelSigmaLnT: number,
  beta: number,
): NonNullable<FitResult['monteCarlo']> {
  // Freeze the main fit's band roles (clipped bands become excluded) before the engine is reused.
  const entries: Entry[] = entriesIn.map((e) => ({ ...e }));
  for (let k = 0; k < engine.n; k++) if (engine.exclude[k] === EXCLUDE_CLIPPED) entries[engine.order[k]].exclude = EXCLUDE_USER;
  const settings: EngineSettings = { ...settingsIn, clip: false, modelErrorFraction: 0 };
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
    const eps = modelSigmaLnT > 0 ? modelSigmaLnT * normalDeviate(rand) : 0;
    loadEngine(engine, entries, fluxes);
    if (engine.run(settings, av, p, 0) !== STATUS_OK || (engine.flags & FLAG_BITS.temp_lower_bound) !== 0) {
      failures++;
      continue;
    }
    const shiftT = Math.exp(eps);
    const shiftTheta = Math.exp(0.5 * beta * eps);
    teff.push(engine.derived.teffK * shiftT);
    theta.push(engine.derived.thetaMas * shiftTheta);
    if (Number.isFinite(engine.derived.radiusRsun)) {
      const r = engine.derived.radiusRsun * shiftTheta;
      radius.push(r);
      lum.push(engine.derived.lumLsun * shiftTheta * shiftTheta * shiftT ** 4);
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
