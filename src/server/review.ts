// Review of fits: the queue of fits waiting for a decision, single and bulk decisions, the history of
// a fit or a star, the campaign's review rules, and the notice to reviewers when a batch has fits
// waiting. Every decision is kept: a new decision on the same fit marks the earlier one superseded
// ('changed'); a re-fit of the star marks it superseded ('refit') through the database trigger
// fit_results_refit_supersedes (drizzle/0004_…), so every writer of fit results gets it for free.
// Callers check who may call (src/web/guards.ts); the four-eyes rule is enforced here whoever calls.
import { eq } from 'drizzle-orm';
import { z } from 'zod';
import type { AppDatabase, DbOrTx } from '../db/client';
import { campaignReviewSettings, user } from '../db/schema';
import { FLAG_EXPLANATIONS } from '../core/fit/flags';
import { REVIEW_REASON_CODES, reviewReasonLabel, type ReviewFilter } from '../contracts/review-reasons';
import { describeCarryover, type BulkOutcome, type CarryoverView, type DecisionView, type QueueItem, type QueuePage, type ReviewSettings } from '../contracts/review';
import { recordAudit, reviewDecisionAction, reviewNoticeSent } from './audit';
import type { Actor, AppServices } from './context';
import { forbidden, HttpError } from './errors';
import { reviewNoticeMail } from '../adapters/mail-templates';
import { parseInput } from './validation';

export type { BulkOutcome, CarryoverView, DecisionView, QueueItem, QueuePage, ReviewSettings } from '../contracts/review';

// ---------------------------------------------------------------------------------------------
// Input

const finite = (name: string) => z.number({ error: `${name} must be a number.` }).refine(Number.isFinite, `${name} must be a finite number.`);

export const reviewFilterInput = z
  .strictObject(
    {
      chi2RedBelow: finite('chi2RedBelow').refine((v) => v > 0, 'chi2RedBelow must be above 0.').optional(),
      noFlags: z.boolean({ error: 'noFlags must be true or false.' }).optional(),
      teffMinK: finite('teffMinK').refine((v) => v >= 0, 'teffMinK cannot be negative.').optional(),
      teffMaxK: finite('teffMaxK').refine((v) => v > 0, 'teffMaxK must be above 0.').optional(),
      batchId: z.string({ error: 'batchId must be a batch id.' }).min(1).max(64).optional(),
    },
    { error: (issue) => (issue.code === 'unrecognized_keys' ? `filter: unknown field ${issue.keys.map((k) => `"${k}"`).join(', ')}; known fields are chi2RedBelow, noFlags, teffMinK, teffMaxK, batchId.` : 'filter must be an object.') },
  )
  .refine((f) => f.teffMinK === undefined || f.teffMaxK === undefined || f.teffMinK <= f.teffMaxK, { error: 'teffMinK must not be above teffMaxK.', path: ['teffMaxK'] });

const comment = z.string({ error: 'comment must be text.' }).trim().max(2000, 'A comment can have at most 2000 characters.').default('');

export const decisionInput = z
  .object({
    decision: z.enum(['accepted', 'flagged'], 'decision must be accepted or flagged.'),
    reason: z.enum(REVIEW_REASON_CODES, `reason must be one of ${REVIEW_REASON_CODES.join(', ')}.`).nullish(),
    comment,
  })
  .superRefine((d, ctx) => {
    if (d.decision === 'flagged' && !d.reason) ctx.addIssue({ code: 'custom', path: ['reason'], message: `A flag needs a reason: one of ${REVIEW_REASON_CODES.join(', ')}.` });
    if (d.decision === 'accepted' && d.reason) ctx.addIssue({ code: 'custom', path: ['reason'], message: 'An accepted fit takes no reason; use the comment for a note.' });
    if (d.reason === 'other' && !d.comment) ctx.addIssue({ code: 'custom', path: ['comment'], message: 'With the reason "other", say what is wrong in the comment.' });
  });
export type DecisionInput = z.input<typeof decisionInput>;

export const bulkInput = z.object({
  filter: reviewFilterInput,
  decision: z.enum(['accepted', 'flagged'], 'decision must be accepted or flagged.'),
  reason: z.enum(REVIEW_REASON_CODES, `reason must be one of ${REVIEW_REASON_CODES.join(', ')}.`).nullish(),
  comment,
}).superRefine((d, ctx) => {
  if (d.decision === 'flagged' && !d.reason) ctx.addIssue({ code: 'custom', path: ['reason'], message: `A flag needs a reason: one of ${REVIEW_REASON_CODES.join(', ')}.` });
  if (d.decision === 'accepted' && d.reason) ctx.addIssue({ code: 'custom', path: ['reason'], message: 'An accepted fit takes no reason; use the comment for a note.' });
  if (d.reason === 'other' && !d.comment) ctx.addIssue({ code: 'custom', path: ['comment'], message: 'With the reason "other", say what is wrong in the comment.' });
  const f = d.filter;
  if (f.chi2RedBelow === undefined && !f.noFlags && f.teffMinK === undefined && f.teffMaxK === undefined && f.batchId === undefined) {
    ctx.addIssue({ code: 'custom', path: ['filter'], message: 'A bulk action needs at least one filter (reduced χ² below, no flags, a Teff range or a batch), so that nothing is decided by accident.' });
  }
});
export type BulkInput = z.input<typeof bulkInput>;

export const queueQueryInput = z.object({
  cursor: z.string().max(400).optional(),
  limit: z.coerce.number({ error: 'limit must be a number.' }).int('limit must be a whole number.').min(1, 'limit must be at least 1.').max(200, 'limit can be at most 200.').default(50),
});

export const reviewSettingsInput = z.strictObject(
  {
    fourEyes: z.boolean({ error: 'fourEyes must be true or false.' }),
    reason: z.string({ error: 'reason must be text.' }).trim().max(500, 'The reason can have at most 500 characters.').optional(),
  },
  { error: 'Send {"fourEyes": true|false, "reason": "…"} (a reason is needed to switch the rule off).' },
);

// ---------------------------------------------------------------------------------------------
// Settings

export function getReviewSettings(db: DbOrTx, campaignId: string): ReviewSettings {
  const row = db.select().from(campaignReviewSettings).where(eq(campaignReviewSettings.campaignId, campaignId)).get();
  if (!row) return { fourEyes: true, reason: '', updatedBy: null, updatedAt: null };
  const by = row.updatedById ? db.select({ id: user.id, name: user.name }).from(user).where(eq(user.id, row.updatedById)).get() : undefined;
  return { fourEyes: row.fourEyes, reason: row.reason, updatedBy: by ?? null, updatedAt: row.updatedAt.toISOString() };
}

/**
 * Who may switch the four-eyes rule off (decision record 0011, amended): an admin, or an analyst or
 * reviewer of the campaign — but never a guest account, and never the person the rule holds back
 * right now, that is whoever started a batch of the campaign whose fits wait for review. Returns the
 * refusal in words, or null when allowed. Switching the rule on needs only the role.
 */
export function fourEyesSwitchRefusal(db: AppDatabase, actor: Actor, campaignId: string, roles: readonly string[], turnOff: boolean): string | null {
  if (actor.kind === 'guest') return 'Guest accounts cannot change the four-eyes rule.';
  if (actor.kind !== 'admin' && !roles.includes('analyst') && !roles.includes('reviewer')) return 'Only the campaign’s analysts and reviewers, or an admin, can change the four-eyes rule.';
  if (!turnOff) return null;
  const own = db.$client
    .prepare(
      `SELECT b.id FROM batches b WHERE b.campaign_id = ? AND b.started_by_id = ?
       AND EXISTS (SELECT 1 FROM fit_results r WHERE r.batch_id = b.id AND r.ok = 1 AND r.review_status = 'pending') ORDER BY b.created_at LIMIT 1`,
    )
    .pluck()
    .get(campaignId, actor.id) as string | undefined;
  if (own) return `You started batch ${own}, whose fits wait for review, so the four-eyes rule applies to you: another analyst or reviewer of the campaign, or an admin, must switch it off.`;
  return null;
}

export function setReviewSettings(db: AppDatabase, actor: Actor, campaignId: string, raw: unknown, roles: readonly string[] = []): ReviewSettings {
  const input = parseInput(reviewSettingsInput, raw);
  const reason = input.reason ?? '';
  db.transaction((tx) => {
    const before = getReviewSettings(tx, campaignId);
    if (before.fourEyes === input.fourEyes) return;
    const refusal = fourEyesSwitchRefusal(db, actor, campaignId, roles, !input.fourEyes);
    if (refusal) throw forbidden(refusal);
    if (!input.fourEyes && reason.length < 3) throw new HttpError('validation_failed', 'Say why the four-eyes rule is switched off (a reason of at least 3 characters); it is kept in the audit trail.', 'reason');
    tx.insert(campaignReviewSettings)
      .values({ campaignId, fourEyes: input.fourEyes, reason, updatedById: actor.id, updatedAt: new Date() })
      .onConflictDoUpdate({ target: campaignReviewSettings.campaignId, set: { fourEyes: input.fourEyes, reason, updatedById: actor.id, updatedAt: new Date() } })
      .run();
    recordAudit(tx, { actorId: actor.id, action: input.fourEyes ? 'review.four_eyes_on' : 'review.four_eyes_off', campaignId, details: { reason } });
  }, { behavior: 'immediate' });
  return getReviewSettings(db, campaignId);
}

// ---------------------------------------------------------------------------------------------
// The queue

interface FitRowLite {
  id: number;
  star_id: number;
  star_key: string;
  batch_id: string;
  started_by_id: string | null;
  teff_k: number | null;
  teff_err_k: number | null;
  teff_lower_k: number | null;
  tbb_k: number | null;
  theta_mas: number | null;
  radius_rsun: number | null;
  chi2_red: number | null;
  n_bands: number | null;
  flags: string;
  created_at: number;
}

interface CarryoverRow {
  outcome: 'carried' | 'returned';
  reasons: string;
  from_fit_result_id: number;
  from_decision_id: number;
  decision: 'accepted' | 'flagged';
  old_teff_k: number | null;
  old_teff_err_k: number | null;
  new_teff_k: number | null;
  new_teff_err_k: number | null;
  old_theta_mas: number | null;
  old_theta_err_mas: number | null;
  new_theta_mas: number | null;
  new_theta_err_mas: number | null;
  old_flags: string;
  new_flags: string;
}

const CARRYOVER_SELECT = `SELECT c.outcome, c.reasons, c.from_fit_result_id, c.from_decision_id, d.decision, c.old_teff_k, c.old_teff_err_k, c.new_teff_k, c.new_teff_err_k,
  c.old_theta_mas, c.old_theta_err_mas, c.new_theta_mas, c.new_theta_err_mas, c.old_flags, c.new_flags
  FROM review_carryovers c JOIN review_decisions d ON d.id = c.from_decision_id`;

function toCarryover(r: CarryoverRow): CarryoverView {
  const split = (s: string) => (s ? s.split(' ') : []);
  const base = {
    outcome: r.outcome,
    reasons: split(r.reasons),
    fromFitResultId: r.from_fit_result_id,
    fromDecisionId: r.from_decision_id,
    decision: r.decision,
    old: { teffK: r.old_teff_k, teffErrK: r.old_teff_err_k, thetaMas: r.old_theta_mas, thetaErrMas: r.old_theta_err_mas, flags: split(r.old_flags) },
    new: { teffK: r.new_teff_k, teffErrK: r.new_teff_err_k, thetaMas: r.new_theta_mas, thetaErrMas: r.new_theta_err_mas, flags: split(r.new_flags) },
  };
  return { ...base, text: describeCarryover(base) };
}

/** What a re-fit did with the earlier decision, for the new fit; null when it found none. */
export function carryoverOf(db: AppDatabase, fitResultId: number): CarryoverView | null {
  const r = db.$client.prepare(`${CARRYOVER_SELECT} WHERE c.fit_result_id = ?`).get(fitResultId) as CarryoverRow | undefined;
  return r ? toCarryover(r) : null;
}

/** SQL condition for "waiting for review" plus the filter; the fit table is `r`, stars `s`. */
function filterSql(campaignId: string, filter: ReviewFilter): { where: string; args: unknown[] } {
  // The trigger marks older fits of a re-fitted star superseded, so pending + ok is the newest fit per star.
  const parts = ["r.campaign_id = ?", 'r.ok = 1', "r.review_status = 'pending'"];
  const args: unknown[] = [campaignId];
  if (filter.chi2RedBelow !== undefined) {
    parts.push('r.chi2_red IS NOT NULL AND r.chi2_red < ?');
    args.push(filter.chi2RedBelow);
  }
  if (filter.noFlags) parts.push("r.flags = ''");
  if (filter.teffMinK !== undefined) {
    parts.push('r.teff_k >= ?');
    args.push(filter.teffMinK);
  }
  if (filter.teffMaxK !== undefined) {
    parts.push('r.teff_k <= ?');
    args.push(filter.teffMaxK);
  }
  if (filter.batchId !== undefined) {
    parts.push('r.batch_id = ?');
    args.push(filter.batchId);
  }
  return { where: parts.join(' AND '), args };
}

const LITE_COLUMNS = `r.id, r.star_id, s.star_key, r.batch_id, b.started_by_id, r.teff_k, r.teff_err_k, r.teff_lower_k,
  r.tbb_k, r.theta_mas, r.radius_rsun, r.chi2_red, r.n_bands, r.flags, r.created_at`;

function toItem(r: FitRowLite): QueueItem {
  return {
    fitResultId: r.id,
    starId: r.star_id,
    starKey: r.star_key,
    batchId: r.batch_id,
    batchStartedById: r.started_by_id,
    teffK: r.teff_k,
    teffErrK: r.teff_err_k,
    teffLowerK: r.teff_lower_k,
    tbbK: r.tbb_k,
    thetaMas: r.theta_mas,
    radiusRsun: r.radius_rsun,
    chi2Red: r.chi2_red,
    nBands: r.n_bands,
    flags: r.flags ? r.flags.split(' ') : [],
    createdAt: new Date(r.created_at).toISOString(),
    returned: null,
  };
}

/** Fill in `returned` for the items a re-fit sent back (one query per page). */
function withReturns(db: AppDatabase, items: QueueItem[]): QueueItem[] {
  if (items.length === 0) return items;
  const rows = db.$client
    .prepare(`${CARRYOVER_SELECT.replace('SELECT ', 'SELECT c.fit_result_id, ')} WHERE c.outcome = 'returned' AND c.fit_result_id IN (SELECT value FROM json_each(?))`)
    .all(JSON.stringify(items.map((i) => i.fitResultId))) as (CarryoverRow & { fit_result_id: number })[];
  const byFit = new Map(rows.map((r) => [r.fit_result_id, toCarryover(r)]));
  return items.map((i) => ({ ...i, returned: byFit.get(i.fitResultId) ?? null }));
}

/** Pending fits in star-key order, paged on the server by key (stable while decisions are made). */
export function reviewQueue(db: AppDatabase, campaignId: string, options: { filter?: unknown; cursor?: string | null; limit?: number } = {}): QueuePage {
  const filter = parseInput(reviewFilterInput, options.filter ?? {});
  const limit = Math.min(200, Math.max(1, options.limit ?? 50));
  const { where, args } = filterSql(campaignId, filter);
  const sqlite = db.$client;
  // Counted on the first page only: later pages come from the same view and need no second count.
  const total = options.cursor ? null : (sqlite.prepare(`SELECT count(*) FROM fit_results r WHERE ${where}`).pluck().get(...args) as number);
  const cursorSql = options.cursor ? ' AND s.star_key > ?' : '';
  // CROSS JOIN keeps the stars as the outer loop: the campaign's key index yields them already in
  // page order, so a page reads about `limit` stars instead of sorting every pending fit.
  const rows = sqlite
    .prepare(
      `SELECT ${LITE_COLUMNS} FROM stars s CROSS JOIN fit_results r ON r.star_id = s.id JOIN batches b ON b.id = r.batch_id
       WHERE s.campaign_id = ? AND ${where}${cursorSql} ORDER BY s.star_key LIMIT ?`,
    )
    .all(campaignId, ...args, ...(options.cursor ? [options.cursor] : []), limit + 1) as FitRowLite[];
  const more = rows.length > limit;
  const items = withReturns(db, rows.slice(0, limit).map(toItem));
  return { items, total, nextCursor: more ? items[items.length - 1].starKey : null };
}

// ---------------------------------------------------------------------------------------------
// Decisions

interface DecisionRow {
  id: number;
  fit_result_id: number;
  batch_id: string;
  decision: 'accepted' | 'flagged';
  reason: string | null;
  comment: string;
  reviewer_id: string | null;
  reviewer_name: string | null;
  bulk_filter: string | null;
  created_at: number;
  superseded_at: number | null;
  superseded_reason: string | null;
  carried_from_decision_id: number | null;
  four_eyes_off: number;
}

const DECISION_SELECT = `SELECT d.id, d.fit_result_id, r.batch_id, d.decision, d.reason, d.comment, d.reviewer_id, u.name AS reviewer_name,
  d.bulk_filter, d.created_at, d.superseded_at, d.superseded_reason, d.carried_from_decision_id, d.four_eyes_off
  FROM review_decisions d JOIN fit_results r ON r.id = d.fit_result_id LEFT JOIN user u ON u.id = d.reviewer_id`;

function toDecision(r: DecisionRow, db?: AppDatabase): DecisionView {
  return {
    id: r.id,
    fitResultId: r.fit_result_id,
    batchId: r.batch_id,
    decision: r.decision,
    reason: r.reason,
    reasonLabel: reviewReasonLabel(r.reason),
    comment: r.comment,
    reviewer: r.reviewer_id ? { id: r.reviewer_id, name: r.reviewer_name ?? 'former user' } : null,
    createdAt: new Date(r.created_at).toISOString(),
    bulk: r.bulk_filter !== null,
    bulkFilter: r.bulk_filter ? (JSON.parse(r.bulk_filter) as Record<string, unknown>) : null,
    supersededAt: r.superseded_at === null ? null : new Date(r.superseded_at).toISOString(),
    supersededReason: r.superseded_reason,
    carriedOver: r.carried_from_decision_id !== null && db ? carryoverOf(db, r.fit_result_id) : null,
    fourEyesOff: r.four_eyes_off === 1,
  };
}

/** Every decision on one fit, newest first. */
export function fitHistory(db: AppDatabase, fitResultId: number): DecisionView[] {
  return (db.$client.prepare(`${DECISION_SELECT} WHERE d.fit_result_id = ? ORDER BY d.created_at DESC, d.id DESC`).all(fitResultId) as DecisionRow[]).map((r) => toDecision(r, db));
}

/** Every decision on any fit of one star, newest first. */
export function starHistory(db: AppDatabase, starId: number): DecisionView[] {
  return (db.$client.prepare(`${DECISION_SELECT} WHERE r.star_id = ? ORDER BY d.created_at DESC, d.id DESC`).all(starId) as DecisionRow[]).map((r) => toDecision(r, db));
}

export interface FitRef {
  id: number;
  campaignId: string;
  starId: number;
  starKey: string;
  batchId: string;
  batchStartedById: string | null;
  ok: boolean;
  reviewStatus: string;
}

export function getFitRef(db: AppDatabase, fitResultId: number): FitRef | null {
  if (!Number.isSafeInteger(fitResultId) || fitResultId <= 0) return null;
  const r = db.$client
    .prepare(
      `SELECT r.id, r.campaign_id, r.star_id, s.star_key, r.batch_id, b.started_by_id, r.ok, r.review_status
       FROM fit_results r JOIN stars s ON s.id = r.star_id JOIN batches b ON b.id = r.batch_id WHERE r.id = ?`,
    )
    .get(fitResultId) as
    | { id: number; campaign_id: string; star_id: number; star_key: string; batch_id: string; started_by_id: string | null; ok: number; review_status: string }
    | undefined;
  if (!r) return null;
  return { id: r.id, campaignId: r.campaign_id, starId: r.star_id, starKey: r.star_key, batchId: r.batch_id, batchStartedById: r.started_by_id, ok: r.ok === 1, reviewStatus: r.review_status };
}

/** The fit or 404, before any role check so ids of other campaigns are not probed beyond existence. */
export function requireFitRef(db: AppDatabase, rawId: string | undefined): FitRef {
  const fit = getFitRef(db, Number(rawId));
  if (!fit) throw new HttpError('not_found', 'No fit with that id.');
  return fit;
}

export const FOUR_EYES_MESSAGE = 'Four-eyes rule: you started the batch this fit belongs to, so another reviewer must accept it. You may still flag it. (Another analyst or reviewer of the campaign, or an admin, can switch the rule off, with a reason.)';

function assertReviewable(fit: FitRef): void {
  if (!fit.ok) throw new HttpError('conflict', `Star ${fit.starKey} could not be fitted in this batch, so there is no fit to review.`);
  if (fit.reviewStatus === 'superseded') {
    throw new HttpError('conflict', `This fit of ${fit.starKey} was replaced by a newer fit of the star; review the newer one.`);
  }
}

/**
 * One decision: supersede the fit's current decision (if any), record the new one, set the fit's
 * review status and write an audit event — all in one transaction.
 */
export function decide(db: AppDatabase, actor: Actor, fitResultId: number, raw: unknown): DecisionView {
  const input = parseInput(decisionInput, raw);
  const sqlite = db.$client;
  const id = db.transaction(
    (tx) => {
      // Read inside the write transaction so a re-fit landing meanwhile cannot be decided on.
      const fit = getFitRef(db, fitResultId);
      if (!fit) throw new HttpError('not_found', 'No fit with that id.');
      assertReviewable(fit);
      const fourEyesOn = getReviewSettings(tx, fit.campaignId).fourEyes;
      if (input.decision === 'accepted' && fit.batchStartedById === actor.id && fourEyesOn) {
        throw forbidden(FOUR_EYES_MESSAGE);
      }
      const now = Date.now();
      const previous = sqlite.prepare('SELECT id FROM review_decisions WHERE fit_result_id = ? AND superseded_at IS NULL').pluck().all(fit.id) as number[];
      sqlite.prepare("UPDATE review_decisions SET superseded_at = ?, superseded_reason = 'changed' WHERE fit_result_id = ? AND superseded_at IS NULL").run(now, fit.id);
      const decisionId = sqlite
        .prepare('INSERT INTO review_decisions (fit_result_id, campaign_id, reviewer_id, decision, reason, comment, created_at, four_eyes_off) VALUES (?, ?, ?, ?, ?, ?, ?, ?) RETURNING id')
        .pluck()
        .get(fit.id, fit.campaignId, actor.id, input.decision, input.reason ?? null, input.comment, now, fourEyesOn ? 0 : 1) as number;
      sqlite.prepare('UPDATE fit_results SET review_status = ? WHERE id = ?').run(input.decision, fit.id);
      recordAudit(tx, {
        actorId: actor.id,
        action: reviewDecisionAction(input.decision),
        campaignId: fit.campaignId,
        details: { decisionId, fitResultId: fit.id, starId: fit.starId, starKey: fit.starKey, batchId: fit.batchId, reason: input.reason ?? null, comment: input.comment, supersedes: previous, ...(fourEyesOn ? {} : { fourEyesOff: true }) },
      });
      return decisionId;
    },
    { behavior: 'immediate' },
  );
  return toDecision(sqlite.prepare(`${DECISION_SELECT} WHERE d.id = ?`).get(id) as DecisionRow, db);
}

/**
 * The same decision on every pending fit matching the filter, in one transaction; each decision
 * records the filter it came from and gets its own audit event.
 */
export function bulkDecide(db: AppDatabase, actor: Actor, campaignId: string, raw: unknown): BulkOutcome {
  const input = parseInput(bulkInput, raw);
  const sqlite = db.$client;
  const filterRecord = JSON.parse(JSON.stringify(input.filter)) as Record<string, unknown>;
  return db.transaction(
    (tx) => {
      const { where, args } = filterSql(campaignId, input.filter);
      const rows = sqlite
        .prepare(`SELECT ${LITE_COLUMNS} FROM fit_results r JOIN stars s ON s.id = r.star_id JOIN batches b ON b.id = r.batch_id WHERE ${where} ORDER BY s.star_key`)
        .all(...args) as FitRowLite[];
      const fourEyesOn = getReviewSettings(tx, campaignId).fourEyes;
      const fourEyes = input.decision === 'accepted' && fourEyesOn;
      const eligible = fourEyes ? rows.filter((r) => r.started_by_id !== actor.id) : rows;
      const now = Date.now();
      const supersede = sqlite.prepare("UPDATE review_decisions SET superseded_at = ?, superseded_reason = 'changed' WHERE fit_result_id = ? AND superseded_at IS NULL");
      const insert = sqlite.prepare(
        'INSERT INTO review_decisions (fit_result_id, campaign_id, reviewer_id, decision, reason, comment, bulk_filter, created_at, four_eyes_off) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) RETURNING id',
      );
      const setStatus = sqlite.prepare('UPDATE fit_results SET review_status = ? WHERE id = ?');
      const filterJson = JSON.stringify(filterRecord);
      const decisionIds: number[] = [];
      for (const r of eligible) {
        supersede.run(now, r.id);
        const decisionId = insert.pluck().get(r.id, campaignId, actor.id, input.decision, input.reason ?? null, input.comment, filterJson, now, fourEyesOn ? 0 : 1) as number;
        setStatus.run(input.decision, r.id);
        recordAudit(tx, {
          actorId: actor.id,
          action: reviewDecisionAction(input.decision),
          campaignId,
          details: { decisionId, fitResultId: r.id, starId: r.star_id, starKey: r.star_key, batchId: r.batch_id, reason: input.reason ?? null, comment: input.comment, bulkFilter: filterRecord, ...(fourEyesOn ? {} : { fourEyesOff: true }) },
        });
        decisionIds.push(decisionId);
      }
      recordAudit(tx, {
        actorId: actor.id,
        action: 'review.bulk',
        campaignId,
        details: { decision: input.decision, reason: input.reason ?? null, filter: filterRecord, decided: decisionIds.length, skippedFourEyes: rows.length - eligible.length },
      });
      return { decided: decisionIds.length, skippedFourEyes: rows.length - eligible.length, decisionIds };
    },
    { behavior: 'immediate' },
  );
}

export { reviewAudit } from './audit';

// ---------------------------------------------------------------------------------------------
// Notice to reviewers

/**
 * E-mail every reviewer of the batch's campaign once when the batch has fits waiting for review.
 * Called after a batch is marked finished (src/server/batches.ts, finishBatchIfDone); idempotent:
 * a 'review.notice_sent' audit event for the batch, written in the same transaction as the
 * messages, means it already happened. Returns the number of messages recorded.
 */
export async function notifyReviewersOfBatch(app: AppServices, batchId: string): Promise<number> {
  const { db, mailer } = app;
  const sqlite = db.$client;
  const batch = sqlite.prepare('SELECT b.id, b.campaign_id, c.name AS campaign_name FROM batches b JOIN campaigns c ON c.id = b.campaign_id WHERE b.id = ?').get(batchId) as
    | { id: string; campaign_id: string; campaign_name: string }
    | undefined;
  if (!batch) return 0;
  const alreadySent = () => reviewNoticeSent(db, batch.campaign_id, batchId);
  if (alreadySent()) return 0;
  const waiting = sqlite.prepare("SELECT count(*) FROM fit_results WHERE batch_id = ? AND ok = 1 AND review_status = 'pending'").pluck().get(batchId) as number;
  if (waiting === 0) return 0;
  const campaignWaiting = sqlite.prepare("SELECT count(*) FROM fit_results WHERE campaign_id = ? AND ok = 1 AND review_status = 'pending'").pluck().get(batch.campaign_id) as number;
  const reviewers = sqlite
    .prepare(
      `SELECT u.id, u.name, u.email FROM campaign_member_roles m JOIN user u ON u.id = m.user_id
       WHERE m.campaign_id = ? AND m.role = 'reviewer' ORDER BY u.email`,
    )
    .all(batch.campaign_id) as { id: string; name: string; email: string }[];
  const link = `${app.env.baseUrl}/campaigns/${batch.campaign_id}/review`;
  const prepared = await Promise.all(
    reviewers.map((r) => mailer.prepare(reviewNoticeMail({ to: r.email, name: r.name, campaignName: batch.campaign_name, batchId, waitingInBatch: waiting, waitingInCampaign: campaignWaiting, link }))),
  );
  const ids = db.transaction(
    (tx) => {
      if (alreadySent()) return [] as number[];
      const out = prepared.map((m) => mailer.record(tx, m));
      recordAudit(tx, { actorId: null, action: 'review.notice_sent', campaignId: batch.campaign_id, details: { batchId, waiting, reviewers: reviewers.map((r) => r.id) } });
      return out;
    },
    { behavior: 'immediate' },
  );
  for (const id of ids) await mailer.dispatch(db, id);
  return ids.length;
}

/** The flag explanations the pages show next to each code. */
export function explainFlags(flags: string[]): { code: string; explanation: string }[] {
  const table = FLAG_EXPLANATIONS as Record<string, string>;
  return flags.map((code) => ({ code, explanation: table[code] ?? 'No explanation recorded for this code.' }));
}

/** The queue filter from a query string (?chi2RedBelow=3&noFlags=1&teffMinK=…); bad numbers are 400s naming the field. */
export function filterFromSearch(params: URLSearchParams): ReviewFilter {
  const out: Record<string, unknown> = {};
  for (const key of ['chi2RedBelow', 'teffMinK', 'teffMaxK'] as const) {
    const v = params.get(key);
    if (v === null || v.trim() === '') continue;
    const n = Number(v);
    if (!Number.isFinite(n)) throw new HttpError('validation_failed', `${key} must be a number, got "${v}".`, key);
    out[key] = n;
  }
  const noFlags = params.get('noFlags');
  if (noFlags !== null && noFlags !== '') {
    if (!['1', 'true', '0', 'false'].includes(noFlags)) throw new HttpError('validation_failed', 'noFlags must be 1, true, 0 or false.', 'noFlags');
    if (noFlags === '1' || noFlags === 'true') out.noFlags = true;
  }
  const batchId = params.get('batchId');
  if (batchId) out.batchId = batchId;
  return parseInput(reviewFilterInput, out);
}
