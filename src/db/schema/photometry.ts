// What an analyst brings in: uploaded files, the stars of a campaign and their measurements.
// A star is identified within its campaign by the `id` its input tables give it (starKey).
import { sql } from 'drizzle-orm';
import { index, integer, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core';
import { user } from './auth';
import { campaigns } from './campaigns';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const UPLOAD_STATUSES = ['received', 'checked', 'imported', 'rejected'] as const;
export type UploadStatus = (typeof UPLOAD_STATUSES)[number];

export const uploads = sqliteTable(
  'uploads',
  {
    id: text('id').primaryKey(),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    // The name the browser sent, kept for display only; the file on disk has a server-chosen name.
    originalName: text('original_name').notNull(),
    storedPath: text('stored_path').notNull(),
    sizeBytes: integer('size_bytes').notNull(),
    sha256: text('sha256').notNull(),
    // Detected from the content, never from the client's name or type: csv, tsv, votable, fits-table, fits-image.
    detectedFormat: text('detected_format'),
    status: text('status', { enum: UPLOAD_STATUSES }).notNull().default('received'),
    // Validation report: [{file, row, column, message}], kept after import.
    report: text('report', { mode: 'json' }).$type<unknown[]>().notNull().default([]),
    rowCount: integer('row_count'),
    importedRowCount: integer('imported_row_count'),
    uploadedById: text('uploaded_by_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    importedAt: integer('imported_at', { mode: 'timestamp_ms' }),
    // What the intake job read once from the file (columns, units, preview rows, detected mapping,
    // or an image's observation), so views never parse the file again (decision record 0023).
    inspection: text('inspection', { mode: 'json' }).$type<Record<string, unknown>>(),
    // The last check: its summary, the mapping and rules it used and where its staged rows are.
    lastCheck: text('last_check', { mode: 'json' }).$type<Record<string, unknown>>(),
  },
  (t) => [index('uploads_campaign_idx').on(t.campaignId, t.createdAt)],
);

export const INTAKE_JOB_KINDS = ['read', 'check', 'import'] as const;
export type IntakeJobKind = (typeof INTAKE_JOB_KINDS)[number];
export const INTAKE_JOB_STATUSES = ['pending', 'running', 'done', 'failed'] as const;
export type IntakeJobStatus = (typeof INTAKE_JOB_STATUSES)[number];

/**
 * Intake jobs: reading, checking and importing an upload run here, off the web server's request
 * path, one at a time in the web process's intake thread (decision record 0023).
 */
export const intakeJobs = sqliteTable(
  'intake_jobs',
  {
    id: text('id').primaryKey(),
    uploadId: text('upload_id')
      .notNull()
      .references(() => uploads.id, { onDelete: 'cascade' }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    kind: text('kind', { enum: INTAKE_JOB_KINDS }).notNull(),
    status: text('status', { enum: INTAKE_JOB_STATUSES }).notNull().default('pending'),
    // The request as validated: mapping, rules, source, importValidRows, image.
    input: text('input', { mode: 'json' }).$type<Record<string, unknown>>().notNull(),
    // The answer when done (check or import summary) or the refusal (status, code, message, report).
    outcome: text('outcome', { mode: 'json' }).$type<Record<string, unknown>>(),
    rowsRead: integer('rows_read').notNull().default(0),
    actorId: text('actor_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    startedAt: integer('started_at', { mode: 'timestamp_ms' }),
    finishedAt: integer('finished_at', { mode: 'timestamp_ms' }),
  },
  (t) => [index('intake_jobs_upload_idx').on(t.uploadId, t.createdAt), index('intake_jobs_pending_idx').on(t.status, t.createdAt)],
);

/** A saved column mapping (column → role/band), named per campaign. */
export const mappingPresets = sqliteTable(
  'mapping_presets',
  {
    id: text('id').primaryKey(),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    name: text('name').notNull(),
    mapping: text('mapping', { mode: 'json' }).$type<Record<string, unknown>>().notNull(),
    createdById: text('created_by_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [uniqueIndex('mapping_presets_name_unique').on(t.campaignId, t.name)],
);

export const LUM_CLASSES = ['dwarf', 'giant'] as const;
export type LumClass = (typeof LUM_CLASSES)[number];
/** Where a parallax comes from (src/core/input/survey-rules.ts ParallaxOrigin). */
export const PARALLAX_ORIGINS = ['gaia_dr3', 'hipparcos', 'other'] as const;
/** Why the input rules left a value out (src/core/input/survey-rules.ts LeftOutReason). */
export const LEFT_OUT_REASONS = ['quality_letter', 'saturated', 'catalogue_flag', 'bp_rp_excess'] as const;

export const stars = sqliteTable(
  'stars',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    starKey: text('star_key').notNull(),
    raDeg: real('ra_deg'),
    decDeg: real('dec_deg'),
    parallaxMas: real('parallax_mas'),
    parallaxErrMas: real('parallax_err_mas'),
    avMag: real('av_mag'),
    // The star's own luminosity class (input column lum_class) and [Fe/H] (input column feh), when given.
    lumClass: text('lum_class', { enum: LUM_CLASSES }),
    fehDex: real('feh_dex'),
    // A given distance (input columns distance_pc, distance_lo_pc, distance_hi_pc: the 68 % interval),
    // used instead of 1/parallax; where the parallax comes from (Gaia DR3 ones get the zero-point);
    // Gaia RUWE above 1.4 on a star fainter than G 6 (decision 0028).
    distancePc: real('distance_pc'),
    distanceLoPc: real('distance_lo_pc'),
    distanceHiPc: real('distance_hi_pc'),
    parallaxOrigin: text('parallax_origin', { enum: PARALLAX_ORIGINS }),
    possibleCompanion: integer('possible_companion', { mode: 'boolean' }).notNull().default(false),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    updatedAt: integer('updated_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [uniqueIndex('stars_campaign_key_unique').on(t.campaignId, t.starKey)],
);

/**
 * A value of a file the input rules left out at import (quality letter, saturation, a catalogue
 * flag, the BP/RP excess; src/core/input/survey-rules.ts), with the reason in words. Kept so every
 * later fit lists it among its excluded bands; one per star, band and source, as measurements.
 */
export const leftOutValues = sqliteTable(
  'left_out_values',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    starId: integer('star_id')
      .notNull()
      .references(() => stars.id, { onDelete: 'cascade' }),
    bandKey: text('band_key').notNull(),
    source: text('source').notNull(),
    uploadId: text('upload_id').references(() => uploads.id, { onDelete: 'set null' }),
    reason: text('reason', { enum: LEFT_OUT_REASONS }).notNull(),
    detail: text('detail').notNull(),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [uniqueIndex('left_out_values_star_band_source_unique').on(t.starId, t.bandKey, t.source)],
);

/**
 * One value of one star in one band from one source. Re-importing the same star, band and source
 * replaces the value instead of adding a second row.
 */
export const measurements = sqliteTable(
  'measurements',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    starId: integer('star_id')
      .notNull()
      .references(() => stars.id, { onDelete: 'cascade' }),
    bandKey: text('band_key').notNull(),
    // Where the value comes from: a catalogue label chosen at import (default: the file's name) or
    // an image (its file name), so two catalogues' values in one band are kept apart.
    source: text('source').notNull(),
    uploadId: text('upload_id').references(() => uploads.id, { onDelete: 'set null' }),
    mag: real('mag'),
    magErr: real('mag_err'),
    fnuJy: real('fnu_jy'),
    fnuErrJy: real('fnu_err_jy'),
    upperLimit: integer('upper_limit', { mode: 'boolean' }).notNull().default(false),
    // The catalogue's own quality mark (e.g. a 2MASS quality letter), kept for the record.
    quality: text('quality'),
    // Per-observation metadata read from a FITS image header (filter, exposure, date, airmass …).
    observation: text('observation', { mode: 'json' }).$type<Record<string, unknown>>(),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    // Set aside: kept on record but not used in fits from then on (null: used). Who, when and why;
    // putting it back clears all three. Both directions are audited (src/server/measurement-use.ts).
    setAsideAt: integer('set_aside_at', { mode: 'timestamp_ms' }),
    setAsideById: text('set_aside_by_id').references(() => user.id, { onDelete: 'set null' }),
    setAsideReason: text('set_aside_reason'),
  },
  (t) => [
    uniqueIndex('measurements_star_band_source_unique').on(t.starId, t.bandKey, t.source),
    index('measurements_upload_idx').on(t.uploadId),
  ],
);
