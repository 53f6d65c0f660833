// Review decisions on fits, personal API tokens and catalogue releases.
import { sql } from 'drizzle-orm';
import { blob, index, integer, primaryKey, real, sqliteTable, text } from 'drizzle-orm/sqlite-core';
import { user } from './auth';
import { campaigns } from './campaigns';
import { fitResults } from './batches';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const REVIEW_DECISIONS = ['accepted', 'flagged'] as const;
export type ReviewDecisionKind = (typeof REVIEW_DECISIONS)[number];

/**
 * Every decision a reviewer makes, kept forever. A later decision on the same fit, or a re-fit of
 * the star, sets supersededAt on the earlier one instead of deleting it.
 */
export const reviewDecisions = sqliteTable(
  'review_decisions',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    fitResultId: integer('fit_result_id')
      .notNull()
      .references(() => fitResults.id, { onDelete: 'cascade' }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    reviewerId: text('reviewer_id').references(() => user.id, { onDelete: 'set null' }),
    decision: text('decision', { enum: REVIEW_DECISIONS }).notNull(),
    // One of our own reason codes when flagged (see src/contracts/vocabulary or the review module).
    reason: text('reason'),
    comment: text('comment').notNull().default(''),
    // Set when the decision was made in a bulk action, with the filter it used.
    bulkFilter: text('bulk_filter', { mode: 'json' }).$type<Record<string, unknown>>(),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    supersededAt: integer('superseded_at', { mode: 'timestamp_ms' }),
    supersededReason: text('superseded_reason'),
    // Set on a decision a re-fit carried over from the decision on the star's earlier fit
    // (drizzle/0010, review_carryovers holds the old and new values). The reviewer stays the same.
    carriedFromDecisionId: integer('carried_from_decision_id'),
    // The four-eyes rule was switched off in the campaign when the decision was made.
    fourEyesOff: integer('four_eyes_off', { mode: 'boolean' }).notNull().default(false),
  },
  (t) => [
    index('review_decisions_fit_idx').on(t.fitResultId, t.createdAt),
    index('review_decisions_campaign_idx').on(t.campaignId, t.createdAt),
  ],
);

export const CARRYOVER_OUTCOMES = ['carried', 'returned'] as const;

/**
 * What a re-fit did with the review decision on the star's earlier fit (decision record 0016): the
 * decision carried over to the new fit, or the new fit went back to the review queue with the
 * reasons (space-separated codes, see src/contracts/review). One row per new fit that found a live
 * decision; written by the trigger fit_results_refit_supersedes, whoever inserts the fit.
 */
export const reviewCarryovers = sqliteTable(
  'review_carryovers',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    fitResultId: integer('fit_result_id')
      .notNull()
      .unique()
      .references(() => fitResults.id, { onDelete: 'cascade' }),
    fromFitResultId: integer('from_fit_result_id').notNull(),
    fromDecisionId: integer('from_decision_id').notNull(),
    outcome: text('outcome', { enum: CARRYOVER_OUTCOMES }).notNull(),
    reasons: text('reasons').notNull().default(''),
    oldTeffK: real('old_teff_k'),
    oldTeffErrK: real('old_teff_err_k'),
    newTeffK: real('new_teff_k'),
    newTeffErrK: real('new_teff_err_k'),
    oldThetaMas: real('old_theta_mas'),
    oldThetaErrMas: real('old_theta_err_mas'),
    newThetaMas: real('new_theta_mas'),
    newThetaErrMas: real('new_theta_err_mas'),
    oldFlags: text('old_flags').notNull().default(''),
    newFlags: text('new_flags').notNull().default(''),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [index('review_carryovers_campaign_idx').on(t.campaignId, t.outcome)],
);

/** Personal API tokens: only a SHA-256 of the secret is stored; the secret is shown once. */
export const apiTokens = sqliteTable(
  'api_tokens',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => user.id, { onDelete: 'cascade' }),
    name: text('name').notNull(),
    tokenHash: text('token_hash').notNull().unique(),
    // First characters of the secret, to tell tokens apart in the list.
    prefix: text('prefix').notNull(),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    lastUsedAt: integer('last_used_at', { mode: 'timestamp_ms' }),
    expiresAt: integer('expires_at', { mode: 'timestamp_ms' }),
    revokedAt: integer('revoked_at', { mode: 'timestamp_ms' }),
  },
  (t) => [index('api_tokens_user_idx').on(t.userId)],
);

/** A catalogue release: the moment collaborators are told the accepted catalogue is ready. */
export const catalogueReleases = sqliteTable(
  'catalogue_releases',
  {
    id: text('id').primaryKey(),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    title: text('title').notNull(),
    note: text('note').notNull().default(''),
    // Filter that defines the released rows (default: accepted fits, newest per star).
    filter: text('filter', { mode: 'json' }).$type<Record<string, unknown>>().notNull(),
    rowCount: integer('row_count').notNull(),
    bandLibraryVersion: text('band_library_version').notNull(),
    softwareVersion: text('software_version').notNull(),
    releasedById: text('released_by_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    // Frozen releases (decision record 0021) keep their rows and files; older ones only their filter.
    frozen: integer('frozen', { mode: 'boolean' }).notNull().default(false),
    // The downloads' provenance at release time: batches with options and versions, zero-points, constants.
    provenance: text('provenance', { mode: 'json' }).$type<Record<string, unknown>>(),
  },
  (t) => [index('catalogue_releases_campaign_idx').on(t.campaignId, t.createdAt)],
);

/** The files of a frozen release, byte for byte as they were written at release time, with their SHA-256. */
export const releaseFiles = sqliteTable(
  'release_files',
  {
    releaseId: text('release_id')
      .notNull()
      .references(() => catalogueReleases.id, { onDelete: 'cascade' }),
    format: text('format').notNull(),
    fileName: text('file_name').notNull(),
    contentType: text('content_type').notNull(),
    sha256: text('sha256').notNull(),
    sizeBytes: integer('size_bytes').notNull(),
    content: blob('content', { mode: 'buffer' }).notNull(),
  },
  (t) => [primaryKey({ columns: [t.releaseId, t.format] })],
);

/** The rows of a frozen release (one per star), for comparing releases: the batch that made the fit and the row's values. */
export const releaseRows = sqliteTable(
  'release_rows',
  {
    releaseId: text('release_id')
      .notNull()
      .references(() => catalogueReleases.id, { onDelete: 'cascade' }),
    starKey: text('star_key').notNull(),
    batchId: text('batch_id'),
    values: text('values', { mode: 'json' }).$type<Record<string, string | number | null>>().notNull(),
  },
  (t) => [primaryKey({ columns: [t.releaseId, t.starKey] })],
);
