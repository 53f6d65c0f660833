// Batches: a fit run over a campaign's stars (or a chosen few) with fixed options. Starting one
// writes the batch and its fit jobs (chunks of FIT_CHUNK_STARS stars, each carrying the batch id) in
// a single transaction; workers drain the jobs
// (workers/README.md); the last job to finish marks the batch finished and e-mails the analyst
// who started it, once. Callers check who may call (src/web/guards.ts: analysts start batches,
// any member reads progress).
import { and, desc, eq, sql } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase, DbOrTx } from '../db/client';
import { batches, user } from '../db/schema';
import type { BatchFailure, BatchProgress, BatchSummary, RetryingJob } from '../contracts/batches';
import { resolveFitOptions, type FitOptions } from '../core/fit';
import type { MailMessage } from '../adapters/mail';
import { recordAudit } from './audit';
import { getCurrentLibrary, getCurrentVersion } from './band-library';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';
import { FitStarRunner, fitChunkJobs, jobStarIds } from './fit-job';
import { appVersion } from './health';
import { newId } from './ids';
import { createSqliteQueue, type ClaimedJob, type JobQueue, type SqliteQueueOptions } from './queue';
import { assertNotArchived } from './members';
import { notifyReviewersOfBatch } from './review';

export type { BatchFailure, BatchFailuresPage, BatchProgress, BatchSummary, RetryingJob } from '../contracts/batches';

/** Fit options as the analyst gives them (API and start form). Every field has a default. */
export const batchOptionsInput = z.strictObject(
  {
    law: z.enum(['f99', 'ccm89', 'od94'], 'The extinction law must be one of f99 (Fitzpatrick 1999), ccm89 (Cardelli, Clayton & Mathis 1989) or od94 (O’Donnell 1994).').default('f99'),
    rv: z
      .number({ error: 'R_V must be a number.' })
      .min(2, 'R_V must be between 2 and 6.')
      .max(6, 'R_V must be between 2 and 6.')
      .default(3.1),
    avMode: z.enum(['fixed', 'fitted'], 'A_V is either fixed or fitted.').default('fixed'),
    avMag: z
      .number({ error: 'A_V must be a number of magnitudes.' })
      .min(0, 'A_V cannot be negative.')
      .max(20, 'A_V can be at most 20 mag.')
      .default(0),
    avMaxMag: z
      .number({ error: 'The largest A_V to fit must be a number of magnitudes.' })
      .gt(0, 'The largest A_V to fit must be above 0.')
      .max(20, 'The largest A_V to fit can be at most 20 mag.')
      .default(10),
    floorFraction: z
      .number({ error: 'The error floor must be a number (a fraction of the flux in the API: 0.02 means 2 %).' })
      .min(0, 'The error floor cannot be negative (0 means no floor).')
      .max(0.5, 'The error floor can be at most 50 % of the flux.')
      .default(0.02),
    excludeBands: z
      .array(
        // Checked against the current band library when the batch starts (bands can be added).
        z.string({ error: 'The bands to leave out must be band keys.' }),
        { error: 'The bands to leave out must be a list of band keys.' },
      )
      .max(200)
      .default([]),
    clip: z.boolean({ error: 'Dropping the worst band is either on (true) or off (false).' }).default(false),
    // Robust rejection (src/core/fit/rejection.ts): on unless asked otherwise; it replaces clip.
    reject: z.boolean({ error: 'Rejecting bands that disagree with the others is either on (true) or off (false).' }).default(true),
    includeLongBands: z.boolean({ error: 'Fitting the bands beyond ~5 µm is either on (true) or off (false).' }).default(false),
    // The calibrated photosphere by default, as in the CLI and the core; the Planck fit is stored beside it.
    planckOnly: z.boolean({ error: 'Fitting a blackbody only is either on (true) or off (false).' }).default(false),
    lumClass: z.enum(['auto', 'dwarf', 'giant'], { error: 'The luminosity class must be auto, dwarf or giant.' }).default('auto'),
    // Subtracted from parallaxes recognised as Gaia DR3 (never Hipparcos ones or a given distance; decision 0028).
    gaiaParallaxZeroPointMas: z
      .number({ error: 'The Gaia parallax zero-point must be a number of mas.' })
      .min(-1, 'The Gaia parallax zero-point must lie within ±1 mas.')
      .max(1, 'The Gaia parallax zero-point must lie within ±1 mas.')
      .default(-0.017),
  },
  { error: (issue) => (issue.code === 'unrecognized_keys' ? `Unknown fit option ${issue.keys.map((k) => `"${k}"`).join(', ')}.` : 'The fit options must be an object.') },
);
export type BatchOptionsInput = z.input<typeof batchOptionsInput>;

export const startBatchInput = z.object({
  options: batchOptionsInput.default(() => batchOptionsInput.parse({})),
  /** Star ids as the campaign's tables give them; all stars of the campaign when absent. */
  starKeys: z.array(z.string({ error: 'The star list must hold star ids (text).' }), { error: 'The stars must be given as a list of star ids.' }).min(1, 'The star list, when given, needs at least one star id.').optional(),
});

/**
 * Like parseInput, but asks zod to keep the offending value so a wrong type ("rv": "three") is told
 * apart from a missing field in the message.
 */
function parseStartInput(raw: unknown): z.output<typeof startBatchInput> {
  const result = startBatchInput.safeParse(raw, { reportInput: true });
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  const field = issue.path.length ? issue.path.join('.') : undefined;
  const missing = issue.code === 'invalid_type' && issue.input === undefined && field;
  throw new HttpError('validation_failed', missing ? `${field} is required.` : issue.message, field);
}

/** The analyst's options → the fit engine's full options (defaults filled in, as stored with the batch). */
export function toFitOptions(o: z.output<typeof batchOptionsInput>): FitOptions {
  return resolveFitOptions({
    law: o.law,
    rv: o.rv,
    avMag: o.avMag,
    fitAv: o.avMode === 'fitted',
    avBoundsMag: [0, o.avMaxMag],
    floorFraction: o.floorFraction,
    excludeBands: [...new Set(o.excludeBands)],
    clip: o.clip,
    reject: o.reject,
    includeLongBands: o.includeLongBands,
    planckOnly: o.planckOnly,
    lumClass: o.lumClass,
    gaiaParallaxZeroPointMas: o.gaiaParallaxZeroPointMas,
  });
}

const queues = new WeakMap<AppDatabase, JobQueue>();

/**
 * The queue with the fit-star job kind wired in: a job that dies writes its star's failure result
 * in the same transaction. Pass options (a clock, backoff) to get a separate instance.
 */
export function batchQueue(db: AppDatabase, options?: Omit<SqliteQueueOptions, 'onDead'> & { onDeadBatches?: (batchIds: string[]) => void }): JobQueue {
  if (!options) {
    const cached = queues.get(db);
    if (cached) return cached;
  }
  const runner = new FitStarRunner(db);
  const q = createSqliteQueue(db, {
    ...options,
    onDead: (jobs: ClaimedJob[], errorOf) => {
      runner.writeDead(jobs, errorOf);
      options?.onDeadBatches?.([...new Set(jobs.map((j) => j.batchId).filter((b): b is string => !!b))]);
    },
  });
  if (!options) queues.set(db, q);
  return q;
}

type BatchRow = typeof batches.$inferSelect;

function summary(row: BatchRow, startedBy: { id: string; name: string } | null): BatchSummary {
  return {
    id: row.id,
    campaignId: row.campaignId,
    status: row.status,
    starCount: row.starCount,
    createdAt: row.createdAt.toISOString(),
    finishedAt: row.finishedAt ? row.finishedAt.toISOString() : null,
    startedBy,
    options: row.options as unknown as FitOptions,
    bandLibraryVersion: row.bandLibraryVersion,
    softwareVersion: row.softwareVersion,
    refitOfBatchId: row.refitOfBatchId,
  };
}

function starterOf(db: DbOrTx, row: BatchRow) {
  if (!row.startedById) return null;
  return db.select({ id: user.id, name: user.name }).from(user).where(eq(user.id, row.startedById)).get() ?? null;
}

export function getBatch(db: DbOrTx, batchId: string): BatchRow | null {
  return db.select().from(batches).where(eq(batches.id, batchId)).get() ?? null;
}

/** A batch with its campaign id, or 404 (checked before any role guard so ids of other campaigns are not probed). */
export function requireBatch(db: DbOrTx, batchId: string): BatchRow {
  const row = getBatch(db, batchId);
  if (!row) throw new HttpError('not_found', 'No batch with that id.');
  return row;
}

/** Start a batch: the batch row and its fit jobs (chunks of stars), all or nothing. */
export function startBatch(app: AppServices, actor: Actor, campaignId: string, raw: unknown): BatchSummary {
  const { db } = app;
  const input = parseStartInput(raw);
  const bandKeys = Object.keys(getCurrentLibrary(db).bands);
  const unknownAt = input.options.excludeBands.findIndex((k) => !bandKeys.includes(k));
  if (unknownAt >= 0) {
    const unknownBand = input.options.excludeBands[unknownAt];
    throw new HttpError('validation_failed', `Left-out band "${unknownBand}" is not a band key; known keys are ${bandKeys.join(' ')} (case-sensitive).`, `options.excludeBands.${unknownAt}`);
  }
  const options = toFitOptions(input.options);
  const sqlite = db.$client;

  let starIds: number[];
  if (input.starKeys) {
    const keys = [...new Set(input.starKeys)];
    const found = sqlite
      .prepare('SELECT id, star_key FROM stars WHERE campaign_id = ? AND star_key IN (SELECT value FROM json_each(?))')
      .all(campaignId, JSON.stringify(keys)) as { id: number; star_key: string }[];
    if (found.length !== keys.length) {
      const known = new Set(found.map((f) => f.star_key));
      const missing = keys.filter((k) => !known.has(k));
      throw new HttpError(
        'validation_failed',
        `${missing.length} star id${missing.length === 1 ? ' is' : 's are'} not in this campaign: ${missing.slice(0, 5).map((k) => `"${k}"`).join(', ')}${missing.length > 5 ? ' …' : ''}.`,
        'starKeys',
      );
    }
    starIds = found.map((f) => f.id).sort((a, b) => a - b);
  } else {
    starIds = (sqlite.prepare('SELECT id FROM stars WHERE campaign_id = ? ORDER BY id').pluck().all(campaignId) as number[]);
  }
  if (starIds.length === 0) {
    throw new HttpError('validation_failed', 'This campaign has no stars yet: import photometry on the intake page first.', 'starKeys');
  }

  return insertBatch(app, actor, campaignId, options, starIds, null);
}

/**
 * Writes a batch and its jobs with already-resolved options, on the current band library version
 * (the batch stores that version; its workers load exactly it). Also used to re-fit stars whose
 * fits went stale (src/server/stale.ts) with the options of their earlier batch.
 */
export function insertBatch(app: AppServices, actor: Actor, campaignId: string, options: FitOptions, starIds: number[], refitOfBatchId: string | null): BatchSummary {
  const { db } = app;
  assertNotArchived(db, campaignId);
  const id = newId();
  const queue = batchQueue(db);
  const bandLibraryVersion = getCurrentVersion(db).label;
  const softwareVersion = appVersion();
  db.transaction(
    (tx) => {
      tx.insert(batches)
        .values({ id, campaignId, startedById: actor.id, options: options as unknown as Record<string, unknown>, bandLibraryVersion, softwareVersion, status: 'queued', starCount: starIds.length, refitOfBatchId })
        .run();
      queue.enqueue(fitChunkJobs(id, starIds, app.env.fitChunkStars));
      recordAudit(tx, { actorId: actor.id, action: 'batch.started', campaignId, details: { batchId: id, stars: starIds.length, options, bandLibraryVersion, ...(refitOfBatchId ? { refitOfBatchId } : {}) } });
    },
    { behavior: 'immediate' },
  );
  const row = getBatch(db, id)!;
  return summary(row, { id: actor.id, name: actor.name });
}

export function listBatches(db: AppDatabase, campaignId: string): BatchProgress[] {
  const rows = db.select().from(batches).where(eq(batches.campaignId, campaignId)).orderBy(desc(batches.createdAt)).all();
  return rows.map((r) => progressOf(db, r));
}

export function batchProgress(db: AppDatabase, batchId: string, now = Date.now()): BatchProgress {
  return progressOf(db, requireBatch(db, batchId), now);
}

function progressOf(db: AppDatabase, row: BatchRow, now = Date.now()): BatchProgress {
  const counts = batchQueue(db).counts(row.id);
  const byOk = db.$client.prepare('SELECT ok, count(*) AS n FROM fit_results WHERE batch_id = ? GROUP BY ok').all(row.id) as { ok: number; n: number }[];
  const fitted = byOk.find((r) => r.ok === 1)?.n ?? 0;
  const failed = byOk.find((r) => r.ok === 0)?.n ?? 0;
  const finished = fitted + failed;
  const remaining = Math.max(0, row.starCount - finished);
  let ratePerSecond = 0;
  if (row.finishedAt) {
    ratePerSecond = finished / Math.max(0.001, (row.finishedAt.getTime() - row.createdAt.getTime()) / 1000);
  } else {
    const windowS = Math.min(60, Math.max(0.001, (now - row.createdAt.getTime()) / 1000));
    ratePerSecond = counts.finishedLastMinute / windowS;
  }
  return {
    ...summary(row, starterOf(db, row)),
    fitted,
    failed,
    waiting: counts.pending,
    retrying: counts.retrying,
    running: counts.leased,
    ratePerSecond,
    secondsLeft: remaining === 0 || row.status === 'cancelled' ? 0 : ratePerSecond > 0 ? remaining / ratePerSecond : null,
  };
}

/** A chunk waiting to be tried again: its first star still without a result names it. */
export function batchFailures(db: AppDatabase, batchId: string, page: { limit?: number; offset?: number } = {}): { total: number; failures: BatchFailure[]; retrying: RetryingJob[] } {
  requireBatch(db, batchId);
  const limit = Math.min(500, Math.max(1, page.limit ?? 100));
  const offset = Math.max(0, page.offset ?? 0);
  const sqlite = db.$client;
  const total = (sqlite.prepare('SELECT count(*) FROM fit_results WHERE batch_id = ? AND ok = 0').pluck().get(batchId) as number) ?? 0;
  const failures = (
    sqlite
      .prepare(
        `SELECT r.star_id AS starId, s.star_key AS starKey, r.failure_reason AS reason, r.flags AS flags
         FROM fit_results r JOIN stars s ON s.id = r.star_id
         WHERE r.batch_id = ? AND r.ok = 0 ORDER BY s.star_key LIMIT ? OFFSET ?`,
      )
      .all(batchId, limit, offset) as { starId: number; starKey: string; reason: string | null; flags: string }[]
  ).map((f) => ({ starId: f.starId, starKey: f.starKey, reason: f.reason ?? 'no reason recorded', kind: f.flags === '' ? ('job' as const) : ('fit' as const) }));
  const retryingJobs = sqlite
    .prepare(
      `SELECT payload, stars_left AS stars, attempts, max_attempts AS maxAttempts, last_error AS lastError, run_after AS runAfter
       FROM jobs WHERE batch_id = ? AND status = 'pending' AND attempts > 0 ORDER BY run_after LIMIT 50`,
    )
    .all(batchId) as { payload: string; stars: number; attempts: number; maxAttempts: number; lastError: string | null; runAfter: number }[];
  const firstWaiting = sqlite.prepare(
    `SELECT s.star_key FROM stars s WHERE s.id IN (SELECT value FROM json_each(?))
       AND NOT EXISTS (SELECT 1 FROM fit_results r WHERE r.batch_id = ? AND r.star_id = s.id) ORDER BY s.star_key LIMIT 1`,
  ).pluck();
  const retrying = retryingJobs.map((r) => ({
    starKey: (firstWaiting.get(JSON.stringify(jobStarIds({ payload: JSON.parse(r.payload) as Record<string, unknown> })), batchId) as string | undefined) ?? '',
    stars: r.stars,
    attempts: r.attempts,
    maxAttempts: r.maxAttempts,
    lastError: r.lastError,
    nextTryAt: new Date(r.runAfter).toISOString(),
  }));
  return { total, failures, retrying };
}

export function batchFinishedMail(input: { to: string; name: string; campaignName: string; batchId: string; link: string; fitted: number; failed: number; starCount: number }): MailMessage {
  const { fitted, failed } = input;
  const text = [
    `Hello ${input.name},`,
    '',
    `The batch ${input.batchId} you started in "${input.campaignName}" has finished: ${fitted} of ${input.starCount} stars fitted, ${failed} could not be fitted.`,
    '',
    failed > 0 ? `The reasons for each star that could not be fitted are listed on the batch page:` : 'The batch page:',
    input.link,
  ].join('\n');
  const esc = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
  const html = `<p>Hello ${esc(input.name)},</p>
<p>The batch ${esc(input.batchId)} you started in <strong>${esc(input.campaignName)}</strong> has finished: ${fitted} of ${input.starCount} stars fitted, ${failed} could not be fitted.</p>
<p><a href="${esc(input.link)}">Open the batch page</a>${failed > 0 ? ' for the reason behind each star that could not be fitted' : ''}.</p>`;
  return { kind: 'notice', to: input.to, subject: `Batch finished in "${input.campaignName}": ${fitted} fitted, ${failed} not fitted`, text, html };
}

/**
 * When no job of the batch is waiting or running, mark it finished and e-mail the analyst who
 * started it. Safe to call from every worker after every chunk: the UPDATE … WHERE notified_at IS
 * NULL lets exactly one caller win, and the e-mail is recorded in that same transaction.
 */
export async function finishBatchIfDone(app: AppServices, batchId: string): Promise<boolean> {
  const { db, mailer } = app;
  const sqlite = db.$client;
  const open = sqlite.prepare("SELECT 1 FROM jobs WHERE batch_id = ? AND status IN ('pending', 'leased') LIMIT 1").get(batchId);
  if (open) return false;
  const row = getBatch(db, batchId);
  if (!row || row.notifiedAt || row.status === 'cancelled') return false;
  const progress = progressOf(db, row);
  const starter = row.startedById ? db.select({ name: user.name, email: user.email }).from(user).where(eq(user.id, row.startedById)).get() : undefined;
  const campaign = sqlite.prepare('SELECT name FROM campaigns WHERE id = ?').get(row.campaignId) as { name: string } | undefined;
  const mail = starter
    ? await mailer.prepare(
        batchFinishedMail({
          to: starter.email,
          name: starter.name,
          campaignName: campaign?.name ?? row.campaignId,
          batchId,
          link: `${app.env.baseUrl}/campaigns/${row.campaignId}/batches/${batchId}`,
          fitted: progress.fitted,
          failed: progress.failed,
          starCount: row.starCount,
        }),
      )
    : null;
  const at = new Date();
  const outcome = db.transaction(
    (tx) => {
      const won = tx
        .update(batches)
        .set({ status: 'finished', finishedAt: at, notifiedAt: at })
        // A cancel between the read above and here wins: the batch stays cancelled, no e-mail.
        .where(and(eq(batches.id, batchId), sql`${batches.notifiedAt} IS NULL`, sql`${batches.status} <> 'cancelled'`))
        .run();
      if (won.changes !== 1) return { won: false, outboxId: null };
      recordAudit(tx, { actorId: null, action: 'batch.finished', campaignId: row.campaignId, details: { batchId, fitted: progress.fitted, failed: progress.failed } });
      return { won: true, outboxId: mail ? mailer.record(tx, mail) : null };
    },
    { behavior: 'immediate' },
  );
  if (outcome.outboxId !== null) await mailer.dispatch(db, outcome.outboxId);
  // Reviewers hear once per batch when it leaves fits waiting (idempotent on its own).
  if (outcome.won) await notifyReviewersOfBatch(app, batchId);
  return outcome.won;
}

export interface CancelOutcome {
  batch: BatchProgress;
  /** Stars of the jobs no worker had taken: removed, so those stars get no result from this batch. */
  removed: number;
  /** Stars of the jobs a worker held at that moment: they finish and write their results as usual. */
  inFlight: number;
}

/**
 * Cancel a batch that is still waiting or running: its waiting jobs are removed (not marked
 * failed: nothing went wrong with those stars, and a failure result would replace their current
 * fit) and the batch is marked cancelled. Jobs a worker holds are left to finish, because their
 * results are written in the transaction that completes them; a cancelled batch sends no
 * "finished" e-mail. Callers check the role (analysts of the campaign, admins).
 */
export function cancelBatch(app: AppServices, actor: Actor, batchId: string): CancelOutcome {
  const { db } = app;
  const sqlite = db.$client;
  const outcome = db.transaction(
    (tx) => {
      const row = requireBatch(tx, batchId);
      if (row.status === 'finished' || row.status === 'cancelled') {
        throw new HttpError('conflict', `This batch has ${row.status === 'finished' ? 'finished' : 'been cancelled'} already; there is nothing left to cancel.`);
      }
      const dropped = sqlite.prepare("DELETE FROM jobs WHERE batch_id = ? AND status = 'pending' RETURNING stars_left").pluck().all(batchId) as number[];
      const removed = dropped.reduce((n, s) => n + s, 0);
      const inFlight = sqlite.prepare("SELECT coalesce(sum(stars_left), 0) FROM jobs WHERE batch_id = ? AND status = 'leased'").pluck().get(batchId) as number;
      tx.update(batches).set({ status: 'cancelled', finishedAt: new Date() }).where(eq(batches.id, batchId)).run();
      recordAudit(tx, { actorId: actor.id, action: 'batch.cancelled', campaignId: row.campaignId, details: { batchId, removedJobs: dropped.length, removedStars: removed, inFlightStars: inFlight } });
      return { removed, inFlight };
    },
    { behavior: 'immediate' },
  );
  return { batch: batchProgress(db, batchId), ...outcome };
}

/** The campaign has stars to fit (for the start form). */
export function campaignStarCount(db: AppDatabase, campaignId: string): number {
  return db.$client.prepare('SELECT count(*) FROM stars WHERE campaign_id = ?').pluck().get(campaignId) as number;
}
