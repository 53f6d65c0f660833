// The `fit-chunk` job: a chunk of stars of one batch (docs/decisions/0017-chunked-fit-jobs.md).
// Workers run a chunk with one read of its stars and measurements, one fit model per (options, band
// library version) reused for every chunk, and one transaction that completes the job and writes
// its results. (`fit-star` jobs, one star each, were enqueued before chunks existed; they run as
// chunks of one star.)
//
// Outcomes per star: a fit, or a fit that cannot be made for a reason of the data (too few usable
// bands, no convergence) — both are results (fit_results.ok true/false). An unexpected error (a band
// missing from the library, a star deleted) fails the chunk's attempt: the results of the other
// stars are written in the same transaction and the queue retries the chunk with backoff; a retry
// fits only the stars still without a result. After its last attempt the chunk is dead and each of
// its stars without a result gets a failure result naming the error. Either way every star of a
// batch ends with exactly one result (fit_results is unique on batch and star).
import type Database from 'better-sqlite3';
import type { AppDatabase } from '../db/client';
import { PARALLAX_ORIGINS } from '../db/schema';
import { getBand, type BandLibrary } from '../core/bands';
import { extrapolatedBandKeys } from '../core/extinction';
import { fitStar, prepareFitModel, type FitFailure, type FitModel, type FitOptions, type FitResult, type StarInput } from '../core/fit';
import { measurementToBandFlux } from '../core/photometry';
import type { Band, BandFlux } from '../core/types';
import { findLibrary } from './band-library';
import type { ClaimedJob, JobFailure, NewJob } from './queue';

export const FIT_CHUNK_JOB = 'fit-chunk';
/** One star per job, as enqueued before chunks; still run (as a chunk of one). */
export const FIT_STAR_JOB = 'fit-star';

/** Stars per fit job unless FIT_CHUNK_STARS says otherwise (measured: docs/decisions/0017-chunked-fit-jobs.md). */
export const DEFAULT_FIT_CHUNK_STARS = 1000;

export function isFitJob(kind: string): boolean {
  return kind === FIT_CHUNK_JOB || kind === FIT_STAR_JOB;
}

/** The stars of a fit job, in the order they were enqueued. */
export function jobStarIds(job: { payload: Record<string, unknown> }): number[] {
  const ids = job.payload.starIds;
  return Array.isArray(ids) ? ids.map(Number) : [Number(job.payload.starId)];
}

/**
 * A batch's stars as fit jobs of `chunkStars` stars each, in the given order. The idempotency key
 * (`fit-chunk:<batch>:<first star>`) makes enqueueing the same chunks twice a no-op.
 */
export function fitChunkJobs(batchId: string, starIds: number[], chunkStars = DEFAULT_FIT_CHUNK_STARS, priority = 0): NewJob[] {
  const size = Math.max(1, Math.floor(chunkStars));
  const jobs: NewJob[] = [];
  for (let i = 0; i < starIds.length; i += size) {
    const ids = starIds.slice(i, i + size);
    jobs.push({ kind: FIT_CHUNK_JOB, batchId, payload: { starIds: ids }, idempotencyKey: `${FIT_CHUNK_JOB}:${batchId}:${ids[0]}`, priority, stars: ids.length });
  }
  return jobs;
}

/** What a fit job's attempt produced: the rows to write, and the stars that failed unexpectedly. */
export interface ChunkRun {
  job: ClaimedJob;
  rows: FitResultRow[];
  /** Stars that threw (not a data failure: those are rows); empty when the chunk is complete. */
  errors: { starId: number; starKey: string | null; error: string }[];
}

/** The error kept on a chunk whose attempt failed: the first failing star and how many more. */
export function chunkError(errors: ChunkRun['errors']): string {
  const first = errors[0];
  const who = first.starKey ? `star ${first.starKey}` : `star ${first.starId}`;
  return `${who}: ${first.error}${errors.length > 1 ? ` (and ${errors.length - 1} more star${errors.length === 2 ? '' : 's'} of the chunk)` : ''}`;
}

/** The band library a batch was started with, exactly (versions are immutable; see band-library.ts). */
export function bandLibraryByVersion(db: AppDatabase, version: string): BandLibrary {
  const library = findLibrary(db, version);
  if (!library) throw new Error(`band library version ${version} does not exist in this database`);
  return library;
}

export interface BatchInfo {
  id: string;
  campaignId: string;
  options: FitOptions;
  bandLibraryVersion: string;
  softwareVersion: string;
}

export interface StarRow {
  id: number;
  star_key: string;
  parallax_mas: number | null;
  parallax_err_mas: number | null;
  av_mag: number | null;
  lum_class?: string | null;
  feh_dex?: number | null;
  distance_pc?: number | null;
  distance_lo_pc?: number | null;
  distance_hi_pc?: number | null;
  parallax_origin?: string | null;
  possible_companion?: number | null;
}

/** A value the input rules left out at import (left_out_values), for the fit's excluded list. */
export interface LeftOutRow {
  star_id: number;
  band_key: string;
  reason: string;
  detail: string;
}


/** Rows grouped by their star, in the order read. */
function byStar<T extends { star_id: number }>(rows: T[]): Map<number, T[]> {
  const out = new Map<number, T[]>();
  for (const r of rows) {
    let list = out.get(r.star_id);
    if (!list) out.set(r.star_id, (list = []));
    list.push(r);
  }
  return out;
}

/** The fit's input fields a star row adds beside its photometry (shared by every worker path). */
export function starRowInput(star: StarRow, leftOut: LeftOutRow[] | undefined): Omit<StarInput, 'id' | 'bandFluxes'> {
  return {
    parallaxMas: star.parallax_mas,
    parallaxErrMas: star.parallax_err_mas,
    avMag: star.av_mag,
    lumClass: star.lum_class === 'dwarf' || star.lum_class === 'giant' ? star.lum_class : null,
    fehDex: star.feh_dex ?? null,
    distancePc: star.distance_pc ?? null,
    distanceLoPc: star.distance_lo_pc ?? null,
    distanceHiPc: star.distance_hi_pc ?? null,
    parallaxOrigin: PARALLAX_ORIGINS.find((o) => o === star.parallax_origin) ?? null,
    possibleCompanion: star.possible_companion === 1,
    ...(leftOut && leftOut.length > 0
      ? { leftOut: leftOut.map((l) => ({ bandKey: l.band_key, reason: l.reason as NonNullable<StarInput['leftOut']>[number]['reason'], detail: l.detail })) }
      : {}),
  };
}

export interface MeasurementRow {
  star_id: number;
  band_key: string;
  source: string;
  mag: number | null;
  mag_err: number | null;
  fnu_jy: number | null;
  fnu_err_jy: number | null;
  upper_limit: number;
  /** 1 when the value was set aside (kept on record, not used in fits); absent or 0: used. */
  set_aside?: number;
}

/** Why a set-aside value was not used, as the fit's record of skipped values says it. */
export const SET_ASIDE_REASON = 'set aside: not used in fits';

/** A fit_results row ready to insert (snake_case = column names). */
export interface FitResultRow {
  batch_id: string;
  campaign_id: string;
  star_id: number;
  ok: number;
  failure_reason: string | null;
  teff_k: number | null;
  teff_err_k: number | null;
  teff_err_formal_k: number | null;
  teff_lower_k: number | null;
  theta_mas: number | null;
  theta_err_mas: number | null;
  radius_rsun: number | null;
  radius_err_rsun: number | null;
  lum_lsun: number | null;
  lum_err_lsun: number | null;
  fbol_cgs: number | null;
  fbol_err_cgs: number | null;
  av_mag: number | null;
  av_err_mag: number | null;
  chi2_red: number | null;
  n_bands: number | null;
  bands_used: string | null;
  ir_excess_sigma: number | null;
  flags: string;
  detail: string;
  band_library_version: string;
  software_version: string;
  // The pure Planck fit beside the calibrated one, the class and [Fe/H] used, and the model (null = Planck only).
  tbb_k: number | null;
  tbb_err_k: number | null;
  tbb_err_formal_k: number | null;
  tbb_lower_k: number | null;
  tbb_chi2_red: number | null;
  tbb_model_fluxes: string | null;
  lum_class: string | null;
  lum_class_source: string | null;
  feh_dex: number | null;
  photosphere_name: string | null;
  photosphere_version: string | null;
}

/** Result rows per INSERT statement when a chunk is written (27 columns × 50 stays under SQLite's 32 766 parameters). */
const WRITE_ROWS_PER_STATEMENT = 50;

const RESULT_COLUMNS: (keyof FitResultRow)[] = [
  'batch_id', 'campaign_id', 'star_id', 'ok', 'failure_reason', 'teff_k', 'teff_err_k', 'teff_err_formal_k', 'teff_lower_k',
  'theta_mas', 'theta_err_mas', 'radius_rsun', 'radius_err_rsun', 'lum_lsun', 'lum_err_lsun', 'fbol_cgs', 'fbol_err_cgs',
  'av_mag', 'av_err_mag', 'chi2_red', 'n_bands', 'bands_used', 'ir_excess_sigma', 'flags', 'detail',
  'band_library_version', 'software_version', 'tbb_k', 'tbb_err_k', 'tbb_err_formal_k', 'tbb_lower_k', 'tbb_chi2_red',
  'tbb_model_fluxes', 'lum_class', 'lum_class_source', 'feh_dex', 'photosphere_name', 'photosphere_version',
];

/** Why a measurement did not reach the fit although the star has it. */
export interface SkippedMeasurement {
  band: string;
  source: string;
  reason: string;
}

/**
 * A star's measurements → band fluxes. One value per band reaches the fit: a detection before an
 * upper limit, then the smallest relative error, then the source name (so the choice is stable);
 * the others, and values that cannot be converted, are listed with their reason.
 */
export function starBandFluxes(library: BandLibrary, rows: MeasurementRow[]): { bandFluxes: BandFlux[]; skipped: SkippedMeasurement[] } {
  const skipped: SkippedMeasurement[] = [];
  const best = new Map<string, { flux: BandFlux; source: string }>();
  const rank = (f: BandFlux) => (f.upperLimit ? 1e9 : 0) + (f.fluxCgs > 0 ? f.errCgs / f.fluxCgs : 1e6);
  for (const m of rows) {
    if (m.set_aside === 1) {
      skipped.push({ band: m.band_key, source: m.source, reason: SET_ASIDE_REASON });
      continue;
    }
    const band: Band | null = getBand(library, m.band_key);
    if (!band) {
      skipped.push({ band: m.band_key, source: m.source, reason: `band ${m.band_key} is not in band library ${library.version}` });
      continue;
    }
    let flux: BandFlux;
    try {
      flux = measurementToBandFlux(band, {
        bandKey: m.band_key,
        mag: m.mag ?? undefined,
        magErr: m.mag_err ?? undefined,
        fnuJy: m.fnu_jy ?? undefined,
        fnuErrJy: m.fnu_err_jy ?? undefined,
        upperLimit: m.upper_limit === 1,
      });
    } catch (err) {
      skipped.push({ band: m.band_key, source: m.source, reason: err instanceof Error ? err.message : String(err) });
      continue;
    }
    const current = best.get(m.band_key);
    if (!current) {
      best.set(m.band_key, { flux, source: m.source });
      continue;
    }
    const better = rank(flux) < rank(current.flux) || (rank(flux) === rank(current.flux) && m.source < current.source);
    const loser = better ? current.source : m.source;
    const winner = better ? m.source : current.source;
    if (better) best.set(m.band_key, { flux, source: m.source });
    skipped.push({ band: m.band_key, source: loser, reason: `another value in ${m.band_key} was used (from ${winner})` });
  }
  return { bandFluxes: [...best.values()].map((b) => b.flux), skipped };
}

const finiteOrNull = (v: number | null | undefined): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

const provenanceCache = new WeakMap<BatchInfo, string>();

/** `"options":…,"extinction":…` (no braces) for a batch's result details. */
function provenanceJson(batch: BatchInfo, extrapolated: string[]): string {
  let p = provenanceCache.get(batch);
  if (!p) {
    p = JSON.stringify({ options: batch.options, extinction: { law: batch.options.law, rv: batch.options.rv, extrapolatedBands: extrapolated } }).slice(1, -1);
    provenanceCache.set(batch, p);
  }
  return p;
}

/** One star's fit (or data failure) as a fit_results row; shared by the SQLite and Redis workers so both write the same. */
export function resultRow(batch: BatchInfo, starId: number, fit: FitResult | FitFailure, bandFluxes: BandFlux[], skipped: SkippedMeasurement[], extrapolated: string[]): FitResultRow {
  const observed: Record<string, { fluxCgs: number; errCgs: number; upperLimit: boolean }> = {};
  for (const f of bandFluxes) observed[f.bandKey] = { fluxCgs: f.fluxCgs, errCgs: f.errCgs, upperLimit: f.upperLimit };
  // The provenance is the same for every star of a batch: serialised once, spliced into each detail.
  const provenance = provenanceJson(batch, extrapolated);
  const withProvenance = (o: Record<string, unknown>) => `${JSON.stringify(o).slice(0, -1)},${provenance}}`;
  const base = {
    batch_id: batch.id,
    campaign_id: batch.campaignId,
    star_id: starId,
    band_library_version: batch.bandLibraryVersion,
    software_version: batch.softwareVersion,
  };
  if (!fit.ok) {
    return {
      ...base,
      ok: 0,
      failure_reason: fit.message,
      teff_k: null, teff_err_k: null, teff_err_formal_k: null, teff_lower_k: null, theta_mas: null, theta_err_mas: null,
      radius_rsun: null, radius_err_rsun: null, lum_lsun: null, lum_err_lsun: null, fbol_cgs: null, fbol_err_cgs: null,
      av_mag: null, av_err_mag: null, chi2_red: null, n_bands: null, bands_used: null, ir_excess_sigma: null,
      flags: fit.reason,
      detail: withProvenance({ reason: fit.reason, excluded: fit.excluded, skipped, observed }),
      tbb_k: null, tbb_err_k: null, tbb_err_formal_k: null, tbb_lower_k: null, tbb_chi2_red: null, tbb_model_fluxes: null,
      lum_class: null, lum_class_source: null, feh_dex: null, photosphere_name: null, photosphere_version: null,
    };
  }
  return {
    ...base,
    ok: 1,
    failure_reason: null,
    teff_k: finiteOrNull(fit.teffK),
    teff_err_k: finiteOrNull(fit.teffErrK),
    teff_err_formal_k: finiteOrNull(fit.teffErrFormalK),
    teff_lower_k: finiteOrNull(fit.teffLowerK),
    theta_mas: finiteOrNull(fit.thetaMas),
    theta_err_mas: finiteOrNull(fit.thetaErrMas),
    radius_rsun: finiteOrNull(fit.radiusRsun),
    radius_err_rsun: finiteOrNull(fit.radiusErrRsun),
    lum_lsun: finiteOrNull(fit.lumLsun),
    lum_err_lsun: finiteOrNull(fit.lumErrLsun),
    fbol_cgs: finiteOrNull(fit.fbolCgs),
    fbol_err_cgs: finiteOrNull(fit.fbolErrCgs),
    av_mag: finiteOrNull(fit.avMag),
    av_err_mag: fit.avFitted ? finiteOrNull(fit.avErrMag) : null,
    chi2_red: finiteOrNull(fit.chi2Red),
    n_bands: fit.nBands,
    bands_used: fit.bandsUsed.join(' '),
    ir_excess_sigma: finiteOrNull(fit.irExcessSigma),
    flags: fit.flags.join(' '),
    detail: withProvenance({
      chi2: fit.chi2,
      avFitted: fit.avFitted,
      residualsSigma: fit.residualsSigma,
      modelFluxesCgs: fit.modelFluxes,
      observed,
      excluded: fit.excluded,
      skipped,
      covariance: fit.covariance,
      teffTheta: fit.teffTheta,
      ...(fit.distance ? { distance: fit.distance, radiusIntervalRsun: fit.radiusIntervalRsun, lumIntervalLsun: fit.lumIntervalLsun } : {}),
      ...(fit.rejection && fit.rejection.sets.length > 0 ? { rejection: fit.rejection } : {}),
      // The Planck fit's own scale and A_V, so the star sheet draws its blackbody.
      planckFit: { thetaMas: finiteOrNull(fit.planck.thetaMas), avMag: finiteOrNull(fit.planck.avMag) },
      ...(fit.monteCarlo ? { monteCarlo: fit.monteCarlo } : {}),
      ...(fit.modelScatter ? { modelScatter: fit.modelScatter, teffModelTermLn: fit.teffModelTermLn } : {}),
    }),
    tbb_k: finiteOrNull(fit.planck.teffK),
    tbb_err_k: finiteOrNull(fit.planck.teffErrK),
    tbb_err_formal_k: finiteOrNull(fit.planck.teffErrFormalK),
    tbb_lower_k: finiteOrNull(fit.planck.teffLowerK),
    tbb_chi2_red: finiteOrNull(fit.planck.chi2Red),
    tbb_model_fluxes: JSON.stringify(fit.planck.modelFluxes),
    lum_class: fit.lumClass,
    lum_class_source: fit.lumClassSource,
    feh_dex: finiteOrNull(fit.fehDex),
    photosphere_name: fit.photosphere?.name ?? null,
    photosphere_version: fit.photosphere?.version ?? null,
  };
}

/**
 * Per-process state of the fit-star job kind: prepared statements, batch rows and fit models,
 * each built once and reused (a model's tables are the expensive part).
 */
export class FitStarRunner {
  private readonly db: AppDatabase;
  private readonly sqlite: Database.Database;
  private readonly batches = new Map<string, BatchInfo>();
  private readonly models = new Map<string, { model: FitModel; extrapolated: string[] }>();
  private readonly selectBatch;
  private readonly selectStars;
  private readonly selectMeasurements;
  private readonly selectLeftOut;
  private readonly insertResult;
  private readonly insertMany;
  private readonly selectDone;

  constructor(db: AppDatabase) {
    this.db = db;
    this.sqlite = db.$client;
    this.selectBatch = this.sqlite.prepare('SELECT id, campaign_id, options, band_library_version, software_version FROM batches WHERE id = ?');
    this.selectStars = this.sqlite.prepare(
      `SELECT id, star_key, parallax_mas, parallax_err_mas, av_mag, lum_class, feh_dex, distance_pc, distance_lo_pc, distance_hi_pc, parallax_origin, possible_companion
       FROM stars WHERE id IN (SELECT value FROM json_each(?))`,
    );
    this.selectLeftOut = this.sqlite.prepare(
      'SELECT star_id, band_key, reason, detail FROM left_out_values WHERE star_id IN (SELECT value FROM json_each(?)) ORDER BY star_id, band_key, source',
    );
    this.selectMeasurements = this.sqlite.prepare(
      `SELECT star_id, band_key, source, mag, mag_err, fnu_jy, fnu_err_jy, upper_limit, set_aside_at IS NOT NULL AS set_aside FROM measurements
       WHERE star_id IN (SELECT value FROM json_each(?)) ORDER BY star_id, band_key, source`,
    );
    this.selectDone = this.sqlite.prepare('SELECT star_id FROM fit_results WHERE batch_id = ? AND star_id IN (SELECT value FROM json_each(?))').pluck();
    // Positional parameters, WRITE_ROWS_PER_STATEMENT rows per INSERT: binding by name and one
    // statement per row cost about twice as much CPU per result (measured for decision 0017).
    const one = `(${RESULT_COLUMNS.map(() => '?').join(', ')})`;
    const insert = (n: number) =>
      this.sqlite.prepare(`INSERT INTO fit_results (${RESULT_COLUMNS.join(', ')}) VALUES ${Array.from({ length: n }, () => one).join(', ')} ON CONFLICT (batch_id, star_id) DO NOTHING`);
    this.insertResult = insert(1);
    this.insertMany = insert(WRITE_ROWS_PER_STATEMENT);
  }

  batch(batchId: string): BatchInfo {
    let b = this.batches.get(batchId);
    if (!b) {
      const row = this.selectBatch.get(batchId) as
        | { id: string; campaign_id: string; options: string; band_library_version: string; software_version: string }
        | undefined;
      if (!row) throw new Error(`batch ${batchId} does not exist`);
      b = {
        id: row.id,
        campaignId: row.campaign_id,
        options: JSON.parse(row.options) as FitOptions,
        bandLibraryVersion: row.band_library_version,
        softwareVersion: row.software_version,
      };
      this.batches.set(batchId, b);
    }
    return b;
  }

  private model(batch: BatchInfo): { model: FitModel; extrapolated: string[] } {
    const key = `${batch.bandLibraryVersion}\u0000${JSON.stringify(batch.options)}`;
    let m = this.models.get(key);
    if (!m) {
      const library = bandLibraryByVersion(this.db, batch.bandLibraryVersion);
      m = { model: prepareFitModel(library, batch.options), extrapolated: extrapolatedBandKeys(Object.values(library.bands), batch.options.law) };
      this.models.set(key, m);
    }
    return m;
  }

  /**
   * What the fit needs of these stars besides the batch: their rows, their measurements (in the
   * order that decides between two values in one band) and the values left out at import. Used by
   * the SQLite worker and by the Redis backend's chunk builder alike.
   */
  readStars(starIds: number[]): { stars: Map<number, StarRow>; measurements: Map<number, MeasurementRow[]>; leftOut: Map<number, LeftOutRow[]> } {
    const idsJson = JSON.stringify(starIds);
    const stars = new Map<number, StarRow>();
    for (const s of this.selectStars.all(idsJson) as StarRow[]) stars.set(s.id, s);
    return { stars, measurements: byStar(this.selectMeasurements.all(idsJson) as MeasurementRow[]), leftOut: byStar(this.selectLeftOut.all(idsJson) as LeftOutRow[]) };
  }

  /**
   * Fits claimed fit jobs (any mix of batches), skipping stars that already have a result of their
   * batch (written by an earlier attempt of the same chunk). Nothing is written here.
   */
  run(jobs: ClaimedJob[]): { runs: ChunkRun[]; failures: JobFailure[] } {
    const runs: ChunkRun[] = [];
    const failures: JobFailure[] = [];
    for (const job of jobs) {
      let batch: BatchInfo;
      let prepared: { model: FitModel; extrapolated: string[] };
      try {
        if (!job.batchId) throw new Error(`fit job ${job.id} has no batch`);
        batch = this.batch(job.batchId);
        prepared = this.model(batch);
      } catch (err) {
        failures.push({ jobId: job.id, error: err instanceof Error ? err.message : String(err) });
        continue;
      }
      let starIds = jobStarIds(job);
      if (job.attempts > 1 || job.starsLeft < job.starCount) {
        const done = new Set(this.selectDone.all(batch.id, JSON.stringify(starIds)) as number[]);
        if (done.size > 0) starIds = starIds.filter((id) => !done.has(id));
      }
      const { stars, measurements, leftOut } = this.readStars(starIds);
      const out: ChunkRun = { job, rows: [], errors: [] };
      for (const starId of starIds) {
        const star = stars.get(starId);
        try {
          if (!star) throw new Error(`star ${starId} no longer exists in campaign ${batch.campaignId}`);
          const { bandFluxes, skipped } = starBandFluxes(prepared.model.library, measurements.get(starId) ?? []);
          const fit = fitStar(prepared.model, { id: star.star_key, bandFluxes, ...starRowInput(star, leftOut.get(starId)) });
          out.rows.push(resultRow(batch, starId, fit, bandFluxes, skipped, prepared.extrapolated));
        } catch (err) {
          out.errors.push({ starId, starKey: star?.star_key ?? null, error: err instanceof Error ? err.message : String(err) });
        }
      }
      runs.push(out);
    }
    return { runs, failures };
  }

  /** Inserts result rows (inside the caller's transaction); a second row for the same star and batch is ignored. */
  write(rows: Iterable<FitResultRow>): number {
    const list = Array.isArray(rows) ? (rows as FitResultRow[]) : [...rows];
    let n = 0;
    let i = 0;
    const values: unknown[] = [];
    for (; i + WRITE_ROWS_PER_STATEMENT <= list.length; i += WRITE_ROWS_PER_STATEMENT) {
      values.length = 0;
      for (let k = i; k < i + WRITE_ROWS_PER_STATEMENT; k++) for (const c of RESULT_COLUMNS) values.push(list[k][c]);
      n += this.insertMany.run(values).changes;
    }
    for (; i < list.length; i++) n += this.insertResult.run(RESULT_COLUMNS.map((c) => list[i][c])).changes;
    return n;
  }

  /**
   * Failure results for the stars of dead jobs that have no result of their batch yet, so every
   * star of a batch still ends with exactly one result.
   */
  writeDead(jobs: ClaimedJob[], errorOf: (jobId: number) => string): number {
    const rows: FitResultRow[] = [];
    const exists = this.sqlite.prepare('SELECT id FROM stars WHERE id IN (SELECT value FROM json_each(?))').pluck();
    for (const j of jobs) {
      if (!isFitJob(j.kind) || !j.batchId) continue;
      let batch: BatchInfo;
      try {
        batch = this.batch(j.batchId);
      } catch {
        continue; // the batch was deleted with its jobs' results
      }
      const ids = jobStarIds(j);
      const done = new Set(this.selectDone.all(batch.id, JSON.stringify(ids)) as number[]);
      // A star deleted meanwhile has no row to point at; skip rather than fail the whole transaction.
      const present = new Set(exists.all(JSON.stringify(ids)) as number[]);
      const reason = `gave up after ${j.attempts} attempt${j.attempts === 1 ? '' : 's'}: ${errorOf(j.id)}`;
      for (const starId of ids) {
        if (done.has(starId) || !present.has(starId)) continue;
        rows.push({
          batch_id: batch.id, campaign_id: batch.campaignId, star_id: starId, ok: 0, failure_reason: reason,
          teff_k: null, teff_err_k: null, teff_err_formal_k: null, teff_lower_k: null, theta_mas: null, theta_err_mas: null,
          radius_rsun: null, radius_err_rsun: null, lum_lsun: null, lum_err_lsun: null, fbol_cgs: null, fbol_err_cgs: null,
          av_mag: null, av_err_mag: null, chi2_red: null, n_bands: null, bands_used: null, ir_excess_sigma: null,
          flags: '', detail: JSON.stringify({ reason: 'job_failed', error: errorOf(j.id), attempts: j.attempts, options: batch.options }),
          band_library_version: batch.bandLibraryVersion, software_version: batch.softwareVersion,
          tbb_k: null, tbb_err_k: null, tbb_err_formal_k: null, tbb_lower_k: null, tbb_chi2_red: null, tbb_model_fluxes: null,
          lum_class: null, lum_class_source: null, feh_dex: null, photosphere_name: null, photosphere_version: null,
        });
      }
    }
    return this.write(rows);
  }
}
