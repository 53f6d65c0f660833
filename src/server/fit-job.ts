// The `fit-star` job: one star of one batch. Workers run these a chunk at a time — one read of the
// chunk's stars and measurements, one fit model per (options, band library version) reused for
// every chunk, and one transaction that completes the jobs and writes their results.
//
// Outcomes: a fit, or a fit that cannot be made for a reason of the data (too few usable bands, no
// convergence) — both are results (fit_results.ok true/false) and the job is done. An unexpected
// error (a band missing from the library, a database error) fails the job's attempt and the queue
// retries it with backoff; after its last attempt the job is dead and a failure result names the error.
import type Database from 'better-sqlite3';
import type { AppDatabase } from '../db/client';
import { getBand, type BandLibrary } from '../core/bands';
import { extrapolatedBandKeys } from '../core/extinction';
import { fitStar, prepareFitModel, type FitFailure, type FitModel, type FitOptions, type FitResult } from '../core/fit';
import { measurementToBandFlux } from '../core/photometry';
import type { Band, BandFlux } from '../core/types';
import { findLibrary } from './band-library';
import type { ClaimedJob, JobFailure, NewJob } from './queue';

export const FIT_STAR_JOB = 'fit-star';

/** The idempotency key: one job per star and batch. */
export function fitStarJobKey(batchId: string, starId: number): string {
  return `${FIT_STAR_JOB}:${batchId}:${starId}`;
}

export function fitStarJob(batchId: string, starId: number, priority = 0): NewJob {
  return { kind: FIT_STAR_JOB, batchId, payload: { starId }, idempotencyKey: fitStarJobKey(batchId, starId), priority };
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
}

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
}

const RESULT_COLUMNS: (keyof FitResultRow)[] = [
  'batch_id', 'campaign_id', 'star_id', 'ok', 'failure_reason', 'teff_k', 'teff_err_k', 'teff_err_formal_k', 'teff_lower_k',
  'theta_mas', 'theta_err_mas', 'radius_rsun', 'radius_err_rsun', 'lum_lsun', 'lum_err_lsun', 'fbol_cgs', 'fbol_err_cgs',
  'av_mag', 'av_err_mag', 'chi2_red', 'n_bands', 'bands_used', 'ir_excess_sigma', 'flags', 'detail',
  'band_library_version', 'software_version',
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
      ...(fit.monteCarlo ? { monteCarlo: fit.monteCarlo } : {}),
    }),
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
  private readonly insertResult;

  constructor(db: AppDatabase) {
    this.db = db;
    this.sqlite = db.$client;
    this.selectBatch = this.sqlite.prepare('SELECT id, campaign_id, options, band_library_version, software_version FROM batches WHERE id = ?');
    this.selectStars = this.sqlite.prepare(
      'SELECT id, star_key, parallax_mas, parallax_err_mas, av_mag FROM stars WHERE id IN (SELECT value FROM json_each(?))',
    );
    this.selectMeasurements = this.sqlite.prepare(
      `SELECT star_id, band_key, source, mag, mag_err, fnu_jy, fnu_err_jy, upper_limit FROM measurements
       WHERE star_id IN (SELECT value FROM json_each(?)) ORDER BY star_id, band_key, source`,
    );
    this.insertResult = this.sqlite.prepare(
      `INSERT INTO fit_results (${RESULT_COLUMNS.join(', ')}) VALUES (${RESULT_COLUMNS.map((c) => '@' + c).join(', ')})
       ON CONFLICT (batch_id, star_id) DO NOTHING`,
    );
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
   * Fits a chunk of fit-star jobs (any mix of batches). Returns the result rows by job id and the
   * jobs that failed unexpectedly; nothing is written here.
   */
  run(jobs: ClaimedJob[]): { rows: Map<number, FitResultRow>; failures: JobFailure[] } {
    const rows = new Map<number, FitResultRow>();
    const failures: JobFailure[] = [];
    const byBatch = new Map<string, ClaimedJob[]>();
    for (const j of jobs) {
      const key = j.batchId ?? '';
      if (!byBatch.has(key)) byBatch.set(key, []);
      byBatch.get(key)!.push(j);
    }
    for (const [batchId, group] of byBatch) {
      let batch: BatchInfo;
      let prepared: { model: FitModel; extrapolated: string[] };
      try {
        batch = this.batch(batchId);
        prepared = this.model(batch);
      } catch (err) {
        const error = err instanceof Error ? err.message : String(err);
        for (const j of group) failures.push({ jobId: j.id, error });
        continue;
      }
      const starIds = group.map((j) => Number(j.payload.starId));
      const stars = new Map<number, StarRow>();
      for (const s of this.selectStars.all(JSON.stringify(starIds)) as StarRow[]) stars.set(s.id, s);
      const measurements = new Map<number, MeasurementRow[]>();
      for (const m of this.selectMeasurements.all(JSON.stringify(starIds)) as MeasurementRow[]) {
        let list = measurements.get(m.star_id);
        if (!list) measurements.set(m.star_id, (list = []));
        list.push(m);
      }
      for (const j of group) {
        const starId = Number(j.payload.starId);
        const star = stars.get(starId);
        try {
          if (!star) throw new Error(`star ${starId} no longer exists in campaign ${batch.campaignId}`);
          const { bandFluxes, skipped } = starBandFluxes(prepared.model.library, measurements.get(starId) ?? []);
          const fit = fitStar(prepared.model, {
            id: star.star_key,
            bandFluxes,
            parallaxMas: star.parallax_mas,
            parallaxErrMas: star.parallax_err_mas,
            avMag: star.av_mag,
          });
          rows.set(j.id, resultRow(batch, starId, fit, bandFluxes, skipped, prepared.extrapolated));
        } catch (err) {
          failures.push({ jobId: j.id, error: err instanceof Error ? err.message : String(err) });
        }
      }
    }
    return { rows, failures };
  }

  /** Inserts result rows (inside the caller's transaction); a second row for the same star and batch is ignored. */
  write(rows: Iterable<FitResultRow>): number {
    let n = 0;
    for (const r of rows) n += this.insertResult.run(r).changes;
    return n;
  }

  /** Failure results for dead jobs, so every star of a batch still ends with exactly one result. */
  writeDead(jobs: ClaimedJob[], errorOf: (jobId: number) => string): number {
    const rows: FitResultRow[] = [];
    for (const j of jobs) {
      if (j.kind !== FIT_STAR_JOB || !j.batchId) continue;
      let batch: BatchInfo;
      try {
        batch = this.batch(j.batchId);
      } catch {
        continue; // the batch was deleted with its jobs' results
      }
      const reason = `gave up after ${j.attempts} attempt${j.attempts === 1 ? '' : 's'}: ${errorOf(j.id)}`;
      rows.push({
        batch_id: batch.id, campaign_id: batch.campaignId, star_id: Number(j.payload.starId), ok: 0, failure_reason: reason,
        teff_k: null, teff_err_k: null, teff_err_formal_k: null, teff_lower_k: null, theta_mas: null, theta_err_mas: null,
        radius_rsun: null, radius_err_rsun: null, lum_lsun: null, lum_err_lsun: null, fbol_cgs: null, fbol_err_cgs: null,
        av_mag: null, av_err_mag: null, chi2_red: null, n_bands: null, bands_used: null, ir_excess_sigma: null,
        flags: '', detail: JSON.stringify({ reason: 'job_failed', error: errorOf(j.id), attempts: j.attempts, options: batch.options }),
        band_library_version: batch.bandLibraryVersion, software_version: batch.softwareVersion,
      });
    }
    // A star deleted meanwhile has no row to point at; skip rather than fail the whole transaction.
    const exists = this.sqlite.prepare('SELECT 1 FROM stars WHERE id = ?');
    return this.write(rows.filter((r) => exists.get(r.star_id)));
  }
}
