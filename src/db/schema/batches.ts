// Fit runs, the job queue the workers drain, and the results they write.
import { sql } from 'drizzle-orm';
import { index, integer, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core';
import { user } from './auth';
import { campaigns } from './campaigns';
import { LUM_CLASSES, stars } from './photometry';
import { BATCH_STATUSES, type BatchStatus } from '../../contracts/batches';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export { BATCH_STATUSES, type BatchStatus };

export const batches = sqliteTable(
  'batches',
  {
    id: text('id').primaryKey(),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    startedById: text('started_by_id').references(() => user.id, { onDelete: 'set null' }),
    // Fit options as given (law, R_V, A_V fixed or fitted, floor, excluded bands, clipping …).
    options: text('options', { mode: 'json' }).$type<Record<string, unknown>>().notNull(),
    bandLibraryVersion: text('band_library_version').notNull(),
    softwareVersion: text('software_version').notNull(),
    status: text('status', { enum: BATCH_STATUSES }).notNull().default('queued'),
    starCount: integer('star_count').notNull().default(0),
    // Set when this batch re-fits stars of an earlier one (stale fits, clipping, new options).
    refitOfBatchId: text('refit_of_batch_id'),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    finishedAt: integer('finished_at', { mode: 'timestamp_ms' }),
    notifiedAt: integer('notified_at', { mode: 'timestamp_ms' }),
  },
  (t) => [index('batches_campaign_idx').on(t.campaignId, t.createdAt)],
);

export const JOB_STATUSES = ['pending', 'leased', 'done', 'failed'] as const;
export type JobStatus = (typeof JOB_STATUSES)[number];

/**
 * The queue. A fit job is a chunk of stars of one batch (payload { starIds }). A worker claims pending jobs whose runAfter has passed (or leased ones whose lease
 * expired) in one UPDATE … RETURNING, renews the lease while working, and finishes each job in the
 * same transaction that writes its result.
 */
export const jobs = sqliteTable(
  'jobs',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    kind: text('kind').notNull(),
    batchId: text('batch_id').references(() => batches.id, { onDelete: 'cascade' }),
    payload: text('payload', { mode: 'json' }).$type<Record<string, unknown>>().notNull(),
    // One job per star and batch: enqueueing twice with the same key is a no-op.
    idempotencyKey: text('idempotency_key').notNull(),
    status: text('status', { enum: JOB_STATUSES }).notNull().default('pending'),
    priority: integer('priority').notNull().default(0),
    // Stars in the job (a fit chunk), 1 for a job of any other kind; the progress counts add these.
    starCount: integer('star_count').notNull().default(1),
    // Stars of the job still without a result (a chunk that failed part-way wrote the others).
    starsLeft: integer('stars_left').notNull().default(1),
    attempts: integer('attempts').notNull().default(0),
    maxAttempts: integer('max_attempts').notNull().default(5),
    runAfter: integer('run_after', { mode: 'timestamp_ms' }).notNull().default(now),
    leaseOwner: text('lease_owner'),
    leaseExpiresAt: integer('lease_expires_at', { mode: 'timestamp_ms' }),
    lastError: text('last_error'),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    finishedAt: integer('finished_at', { mode: 'timestamp_ms' }),
  },
  (t) => [
    uniqueIndex('jobs_idempotency_unique').on(t.idempotencyKey),
    index('jobs_claim_idx').on(t.status, t.priority, t.runAfter),
    index('jobs_batch_idx').on(t.batchId, t.status),
    // The claim reads pending jobs in (priority desc, id) order and stops after its chunk; without this
    // partial index every claim would sort all pending jobs of a large batch.
    index('jobs_ready_idx').on(sql`${t.priority} desc`, t.id).where(sql`${t.status} = 'pending'`),
    // Progress: how many jobs of a batch finished within the last minute (the rate).
    index('jobs_batch_finished_idx').on(t.batchId, t.finishedAt),
  ],
);

export const LUM_CLASS_SOURCES = ['parallax', 'input', 'batch', 'assumed'] as const;
export type LumClassSource = (typeof LUM_CLASS_SOURCES)[number];

export const REVIEW_STATUSES = ['pending', 'accepted', 'flagged', 'superseded'] as const;
export type ReviewStatus = (typeof REVIEW_STATUSES)[number];

/** Exactly one result per star and batch: a fit or a recorded failure. */
export const fitResults = sqliteTable(
  'fit_results',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    batchId: text('batch_id')
      .notNull()
      .references(() => batches.id, { onDelete: 'cascade' }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    starId: integer('star_id')
      .notNull()
      .references(() => stars.id, { onDelete: 'cascade' }),
    ok: integer('ok', { mode: 'boolean' }).notNull(),
    failureReason: text('failure_reason'),
    teffK: real('teff_k'),
    teffErrK: real('teff_err_k'),
    teffErrFormalK: real('teff_err_formal_k'),
    teffLowerK: real('teff_lower_k'),
    thetaMas: real('theta_mas'),
    thetaErrMas: real('theta_err_mas'),
    radiusRsun: real('radius_rsun'),
    radiusErrRsun: real('radius_err_rsun'),
    lumLsun: real('lum_lsun'),
    lumErrLsun: real('lum_err_lsun'),
    fbolCgs: real('fbol_cgs'),
    fbolErrCgs: real('fbol_err_cgs'),
    avMag: real('av_mag'),
    avErrMag: real('av_err_mag'),
    chi2Red: real('chi2_red'),
    nBands: integer('n_bands'),
    bandsUsed: text('bands_used'),
    irExcessSigma: real('ir_excess_sigma'),
    flags: text('flags').notNull().default(''),
    // The pure Planck fit, always made beside the calibrated one and never widened by a model term.
    // teff_*, chi2_red, flags, θ, R, L and F_bol above belong to the calibrated photosphere model
    // (equal to these when the batch ran Planck only). Fits stored before the model existed were
    // copied here by drizzle/0009 and keep photosphere_name null until they are re-fitted.
    tbbK: real('tbb_k'),
    tbbErrK: real('tbb_err_k'),
    tbbErrFormalK: real('tbb_err_formal_k'),
    tbbLowerK: real('tbb_lower_k'),
    tbbChi2Red: real('tbb_chi2_red'),
    // Planck band means (erg s⁻¹ cm⁻² Å⁻¹) by band key: the second curve of the star sheet's plot.
    tbbModelFluxes: text('tbb_model_fluxes', { mode: 'json' }).$type<Record<string, number>>(),
    // Luminosity class the model used and where it came from (parallax, the star's input, the batch, assumed).
    lumClass: text('lum_class', { enum: LUM_CLASSES }),
    lumClassSource: text('lum_class_source', { enum: LUM_CLASS_SOURCES }),
    fehDex: real('feh_dex'),
    // The calibrated photosphere model (name and version); null = Planck only, or a fit made before the model.
    photosphereName: text('photosphere_name'),
    photosphereVersion: text('photosphere_version'),
    // Everything else the star sheet draws: residuals, model fluxes, excluded bands, covariance.
    detail: text('detail', { mode: 'json' }).$type<Record<string, unknown>>(),
    bandLibraryVersion: text('band_library_version').notNull(),
    softwareVersion: text('software_version').notNull(),
    reviewStatus: text('review_status', { enum: REVIEW_STATUSES }).notNull().default('pending'),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    // 1 for the star's current result (the catalogue's row): its newest successful fit, else its
    // newest failure. Kept by the trigger fit_results_current (drizzle/0005), whoever inserts.
    isCurrent: integer('is_current', { mode: 'boolean' }).notNull().default(true),
  },
  (t) => [
    uniqueIndex('fit_results_batch_star_unique').on(t.batchId, t.starId),
    index('fit_results_campaign_review_idx').on(t.campaignId, t.reviewStatus),
    index('fit_results_campaign_teff_idx').on(t.campaignId, t.teffK),
    index('fit_results_star_idx').on(t.starId, t.createdAt),
    // Progress and the failures list count a batch's failed fits without reading every row.
    index('fit_results_batch_ok_idx').on(t.batchId, t.ok),
    // The catalogue pages through current results sorted by one of these (keyset on value, id).
    index('fit_results_current_teff_idx').on(t.campaignId, t.teffK).where(sql`is_current = 1`),
    index('fit_results_current_lum_idx').on(t.campaignId, t.lumLsun).where(sql`is_current = 1`),
    index('fit_results_current_radius_idx').on(t.campaignId, t.radiusRsun).where(sql`is_current = 1`),
    index('fit_results_current_tbb_idx').on(t.campaignId, t.tbbK).where(sql`is_current = 1`),
    index('fit_results_current_chi2_idx').on(t.campaignId, t.chi2Red).where(sql`is_current = 1`),
    index('fit_results_current_review_idx').on(t.campaignId, t.reviewStatus).where(sql`is_current = 1`),
    index('fit_results_current_star_idx').on(t.starId).where(sql`is_current = 1`),
    // Totals and diagrams read review status, Teff, L and χ² of every current result: with all of
    // them in one index they scan it without touching the rows (catalogue totals and diagrams).
    index('fit_results_current_summary_idx').on(t.campaignId, t.reviewStatus, t.teffK, t.lumLsun, t.chi2Red).where(sql`is_current = 1`),
  ],
);
