// Intake use cases: receive an upload, detect its format and columns, check a mapping against
// every row, and import the stars and measurements in one transaction.
import { and, count, desc, eq, inArray } from 'drizzle-orm';
import { readFileSync, rmSync } from 'node:fs';
import { z } from 'zod';
import {
  applyMapping,
  COLUMN_ROLES,
  detectMapping,
  previewRows,
  type ColumnRole,
  type ColumnTable,
  type Mapping,
  type MappingResult,
  type MappingRules,
} from '../../core/input/mapping';
import type { AppDatabase, DbOrTx } from '../../db/client';
import { measurements, stars, uploads } from '../../db/schema';
import type { Actor, AppServices } from '../context';
import { newId } from '../ids';
import { parseInput } from '../validation';
import { recordAudit, recordAuditSql } from '../audit';
import { getCurrentLibrary } from '../band-library';
import { IntakeError } from './errors';
import { FORMAT_LABELS, readUpload, UnreadableFile, type DetectedFormat, type ReadUpload } from '../../core/input/table-file';
import type { InputLimits } from '../../core/input/limits';
import { starIdProblem } from '../../core/input/star-id';
import { MAG_RANGE } from '../../core/input/apply-mapping';
import { fileProblem, toReport } from './report';
import type { CheckSummary, ImportSummary, ReportEntry, UploadDetail, UploadSummary } from '../../contracts/intake';

export type { CheckSummary, ImportSummary, UploadDetail, UploadSummary } from '../../contracts/intake';
import { intakeConfigOf, receiveUpload, type IntakeConfig } from './storage';

export const PREVIEW_ROWS = 8;

/** Band keys of the current band library version (admins may add bands). */
export function bandKeys(db: DbOrTx): string[] {
  return Object.keys(getCurrentLibrary(db as AppDatabase).bands);
}

export function intakeConfig(app: AppServices): IntakeConfig {
  return intakeConfigOf(app.env);
}

/** Reads the stored file of an upload again (uploads are read on each step, never cached). */
export function readStoredUpload(storedPath: string, file: string, limits?: Partial<InputLimits>): ReadUpload {
  const bytes = new Uint8Array(readFileSync(storedPath));
  return readUpload(bytes, file, undefined, { limits });
}

/**
 * How the intake answers a file it will not read: 400 for what is refused for safety (hostile XML),
 * 422 for a file it cannot read or one past a limit (docs/decisions/0018-input-limits.md).
 */
function unreadableAnswer(err: UnreadableFile): { status: number; code: string } {
  if (err.kind === 'unsafe') return { status: 400, code: 'unsafe_file' };
  if (err.kind === 'limit') return { status: 422, code: 'input_limit' };
  return { status: 422, code: 'unreadable_file' };
}

// ---------------------------------------------------------------------------------------------
// Input schemas

const assignment = z.object({
  role: z.enum(COLUMN_ROLES as unknown as [ColumnRole, ...ColumnRole[]], `role must be one of ${COLUMN_ROLES.join(', ')}.`),
  band: z.string().max(40).optional(),
  bands: z.array(z.string().max(40)).max(10).optional(),
});

export const mappingInput = z.object({
  layout: z.enum(['wide', 'long'], 'layout must be wide or long.'),
  columns: z.record(z.string().max(200), assignment),
});

export const rulesInput = z
  .object({
    quality: z.array(z.object({ column: z.string().max(200), keep: z.array(z.string().min(1).max(4)).max(20) })).max(20).default([]),
  })
  .default({ quality: [] });

export const checkInput = z.object({ mapping: mappingInput, rules: rulesInput });

export const importInput = z.object({
  mapping: mappingInput.optional(),
  rules: rulesInput,
  /** Where the values come from; default: the file's name. Two sources in one band are kept apart. */
  source: z.string().trim().max(200, 'The source label can have at most 200 characters.').optional(),
  importValidRows: z.boolean().default(false),
  /** FITS image uploads: the value measured on the image. */
  image: z
    .object({
      starId: z
        .string()
        .trim()
        .min(1, 'Give the star id the image measures.')
        .superRefine((id, ctx) => {
          const problem = starIdProblem(id);
          if (problem) ctx.addIssue({ code: 'custom', message: `${problem[0].toUpperCase()}${problem.slice(1)}.` });
        }),
      band: z.string().min(1, 'Choose the band.').max(40),
      mag: z.number({ error: 'mag must be a number.' }).finite().min(MAG_RANGE.min, `mag must be within ${MAG_RANGE.min}…${MAG_RANGE.max}.`).max(MAG_RANGE.max, `mag must be within ${MAG_RANGE.min}…${MAG_RANGE.max}.`),
      magErr: z.number({ error: 'magErr must be a number.' }).finite().nonnegative('The magnitude error cannot be negative.'),
    })
    .optional(),
});

// ---------------------------------------------------------------------------------------------
// Views

type UploadRow = typeof uploads.$inferSelect;

function summary(u: UploadRow): UploadSummary {
  const report = (u.report ?? []) as ReportEntry[];
  return {
    id: u.id,
    originalName: u.originalName,
    sizeBytes: u.sizeBytes,
    sha256: u.sha256,
    format: (u.detectedFormat as DetectedFormat | null) ?? null,
    formatLabel: u.detectedFormat ? FORMAT_LABELS[u.detectedFormat as DetectedFormat] ?? u.detectedFormat : null,
    status: u.status,
    rowCount: u.rowCount,
    importedRowCount: u.importedRowCount,
    createdAt: u.createdAt.toISOString(),
    importedAt: u.importedAt ? u.importedAt.toISOString() : null,
    errorCount: report.filter((r) => r.severity === 'error').length,
    warningCount: report.filter((r) => r.severity === 'warning').length,
  };
}

/** FILTER header value → band key: exact, then case-insensitive when unambiguous, then catalogue names. */
export function bandForFilter(filter: string | undefined, keys: readonly string[]): string | undefined {
  if (!filter) return undefined;
  const f = filter.trim();
  if (keys.includes(f)) return f;
  const first = f.split(/[\s_\-/]+/)[0];
  if (keys.includes(first)) return first;
  const ci = keys.filter((k) => k.toLowerCase() === f.toLowerCase() || k.toLowerCase() === first.toLowerCase());
  return ci.length === 1 ? ci[0] : undefined;
}

function detail(db: DbOrTx, u: UploadRow, read: ReadUpload | null): UploadDetail {
  const keys = bandKeys(db);
  const base = { ...summary(u), bandKeys: keys, report: (u.report ?? []) as ReportEntry[] };
  if (!read) return { ...base, columns: [], units: [], preview: [], detected: null };
  if (read.format === 'fits-image') {
    return { ...base, columns: [], units: [], preview: [], detected: null, observation: read.observation, suggestedBand: bandForFilter(read.observation.filter, keys) };
  }
  const t = read.table;
  return {
    ...base,
    columns: t.columns,
    units: t.columns.map((_, i) => t.units?.[i] ?? null),
    preview: previewRows(t, PREVIEW_ROWS),
    detected: detectMapping(t.columns, t.rows.slice(0, 50), keys),
  };
}

// ---------------------------------------------------------------------------------------------
// Use cases

function getUploadRow(db: DbOrTx, campaignId: string, uploadId: string): UploadRow {
  const u = db.select().from(uploads).where(and(eq(uploads.id, uploadId), eq(uploads.campaignId, campaignId))).get();
  if (!u) throw new IntakeError(404, 'not_found', 'No upload with that id in this campaign.');
  return u;
}

/**
 * Stores the request's file, detects its format and reads its columns. A file that cannot be read
 * at all is kept as a rejected upload (with its report) and answered with 422.
 */
export async function createUpload(app: AppServices, actor: Actor, campaignId: string, request: Request, config: IntakeConfig = intakeConfig(app)): Promise<UploadDetail> {
  const stored = await receiveUpload(request, campaignId, config);
  const id = newId();
  let read: ReadUpload | null = null;
  let problem: string | null = null;
  let answer = { status: 422, code: 'unreadable_file' };
  try {
    read = readStoredUpload(stored.storedPath, stored.originalName, app.env.inputLimits);
  } catch (err) {
    if (!(err instanceof UnreadableFile)) {
      rmSync(stored.storedPath, { force: true });
      throw err;
    }
    problem = err.message;
    answer = unreadableAnswer(err);
  }
  const row = {
    id,
    campaignId,
    originalName: stored.originalName,
    storedPath: stored.storedPath,
    sizeBytes: stored.sizeBytes,
    sha256: stored.sha256,
    detectedFormat: read?.format ?? null,
    status: problem ? ('rejected' as const) : ('received' as const),
    report: problem ? fileProblem(stored.originalName, problem) : [],
    rowCount: read && read.format !== 'fits-image' ? read.table.rows.length : read ? 1 : null,
    uploadedById: actor.id,
  };
  app.db.transaction((tx) => {
    tx.insert(uploads).values(row).run();
    recordAudit(tx, { actorId: actor.id, action: problem ? 'upload.rejected' : 'upload.received', campaignId, details: { uploadId: id, name: stored.originalName, sizeBytes: stored.sizeBytes, sha256: stored.sha256 } });
  }, { behavior: 'immediate' });
  if (problem) {
    // The content is useless; keep the record and report, not the bytes.
    rmSync(stored.storedPath, { force: true });
    throw new IntakeError(answer.status, answer.code, problem, { uploadId: id, report: row.report });
  }
  return detail(app.db, getUploadRow(app.db, campaignId, id), read);
}

export function listUploads(db: DbOrTx, campaignId: string, limit = 50): UploadSummary[] {
  return db.select().from(uploads).where(eq(uploads.campaignId, campaignId)).orderBy(desc(uploads.createdAt)).limit(limit).all().map(summary);
}

export function getUpload(db: DbOrTx, campaignId: string, uploadId: string): UploadDetail {
  const u = getUploadRow(db, campaignId, uploadId);
  if (u.status === 'rejected') return detail(db, u, null);
  try {
    return detail(db, u, readStoredUpload(u.storedPath, u.originalName));
  } catch (err) {
    if (err instanceof UnreadableFile) return detail(db, u, null);
    throw err;
  }
}

function checkSummary(uploadId: string, r: MappingResult): CheckSummary {
  return {
    uploadId,
    rowCount: r.rowCount,
    starCount: r.stars.length,
    measurementCount: r.stars.reduce((n, s) => n + s.measurements.length, 0),
    rejectedRows: r.rejectedRows,
    excludedByQuality: r.excludedByQuality,
    errorCount: r.errorCount,
    warningCount: r.warningCount,
    report: toReport(r.problems),
  };
}

function readTableOf(u: UploadRow, limits?: Partial<InputLimits>): ColumnTable {
  if (u.status === 'rejected') throw new IntakeError(409, 'conflict', `${u.originalName} was rejected when it arrived and cannot be checked or imported; upload a corrected file.`);
  let read: ReadUpload;
  try {
    read = readStoredUpload(u.storedPath, u.originalName, limits);
  } catch (err) {
    // Read at upload, so this is a limit lowered since (or the time limit on a busy machine).
    if (err instanceof UnreadableFile) throw new IntakeError(unreadableAnswer(err).status, unreadableAnswer(err).code, err.message);
    throw err;
  }
  if (read.format === 'fits-image') throw new IntakeError(400, 'bad_request', `${u.originalName} is a FITS image: import it with a star id, band and magnitude, not a column mapping.`);
  return read.table;
}

function mapUpload(db: DbOrTx, u: UploadRow, mapping: Mapping, rules: MappingRules, limits?: Partial<InputLimits>): MappingResult {
  return applyMapping(readTableOf(u, limits), mapping, rules, { bandKeys: bandKeys(db) });
}

/** Applies the mapping to every row and keeps the report with the upload. Writes no stars. */
export function checkUpload(app: AppServices, actor: Actor, campaignId: string, uploadId: string, raw: unknown): CheckSummary {
  const input = parseInput(checkInput, raw);
  const u = getUploadRow(app.db, campaignId, uploadId);
  const result = checkSummary(uploadId, mapUpload(app.db, u, input.mapping as Mapping, input.rules, app.env.inputLimits));
  app.db
    .update(uploads)
    .set({ report: result.report, ...(u.status === 'imported' ? {} : { status: 'checked' as const }) })
    .where(eq(uploads.id, uploadId))
    .run();
  return result;
}

export interface ImportHooks {
  /** Called inside the transaction after each star is written (tests use it to fail mid-import). */
  afterStar?: (starKey: string) => void;
}

/**
 * Imports in one transaction. With errors in the report and importValidRows false: 422 with the
 * report and nothing written. With importValidRows: the valid stars are imported and the report
 * is kept with the upload.
 */
export function importUpload(app: AppServices, actor: Actor, campaignId: string, uploadId: string, raw: unknown, hooks: ImportHooks = {}): ImportSummary {
  const input = parseInput(importInput, raw);
  const u = getUploadRow(app.db, campaignId, uploadId);
  const source = input.source && input.source !== '' ? input.source : u.originalName;
  let result: MappingResult;
  let observation: Record<string, unknown> | undefined;
  if (u.detectedFormat === 'fits-image' && u.status !== 'rejected') {
    const read = readStoredUpload(u.storedPath, u.originalName, app.env.inputLimits);
    if (read.format !== 'fits-image') throw new Error('stored image changed format');
    if (!input.image) throw new IntakeError(400, 'validation_failed', 'A FITS image needs the star id, band and magnitude measured on it (image.starId, image.band, image.mag, image.magErr).');
    const keys = bandKeys(app.db);
    const problems = keys.includes(input.image.band)
      ? []
      : [{ file: u.originalName, row: 0, severity: 'error' as const, message: `unknown band "${input.image.band}" (band keys are case-sensitive; known bands: ${keys.join(' ')})` }];
    observation = { ...read.observation, image: u.originalName };
    result = {
      stars: problems.length ? [] : [{ id: input.image.starId, raDeg: read.observation.raDeg, decDeg: read.observation.decDeg, row: 1, measurements: [{ bandKey: input.image.band, mag: input.image.mag, magErr: input.image.magErr }] }],
      problems,
      rowCount: 1,
      rejectedRows: problems.length ? 1 : 0,
      excludedByQuality: 0,
      errorCount: problems.length,
      warningCount: 0,
    };
  } else {
    if (!input.mapping) throw new IntakeError(400, 'validation_failed', 'mapping is required.');
    result = mapUpload(app.db, u, input.mapping as Mapping, input.rules, app.env.inputLimits);
  }
  const check = checkSummary(uploadId, result);
  if (result.errorCount > 0 && !input.importValidRows) {
    app.db.update(uploads).set({ report: check.report, status: u.status === 'imported' ? 'imported' : 'checked' }).where(eq(uploads.id, uploadId)).run();
    throw new IntakeError(422, 'validation_failed', `${u.originalName} has ${result.errorCount} problem${result.errorCount === 1 ? '' : 's'}; nothing was imported. Fix the file or mapping, or choose to import the valid rows and keep the report.`, { report: check.report, summary: { ...check, report: undefined } });
  }
  if (result.stars.length === 0) {
    throw new IntakeError(422, 'nothing_to_import', `${u.originalName}: no valid star to import; nothing was imported.`, { report: check.report, summary: { ...check, report: undefined } });
  }

  const sqlite = app.db.$client;
  const nowMs = Date.now();
  const findStar = sqlite.prepare('SELECT id FROM stars WHERE campaign_id = ? AND star_key = ?');
  const insertStar = sqlite.prepare(
    'INSERT INTO stars (campaign_id, star_key, ra_deg, dec_deg, parallax_mas, parallax_err_mas, av_mag, created_at, updated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)',
  );
  // Re-uploading a star keeps what it had where the new file is empty, and takes the new value elsewhere.
  const updateStar = sqlite.prepare(
    'UPDATE stars SET ra_deg = coalesce(?, ra_deg), dec_deg = coalesce(?, dec_deg), parallax_mas = coalesce(?, parallax_mas), parallax_err_mas = coalesce(?, parallax_err_mas), av_mag = coalesce(?, av_mag), updated_at = ? WHERE id = ?',
  );
  const findMeasurement = sqlite.prepare('SELECT id FROM measurements WHERE star_id = ? AND band_key = ? AND source = ?');
  const insertMeasurement = sqlite.prepare(
    'INSERT INTO measurements (star_id, band_key, source, upload_id, mag, mag_err, fnu_jy, fnu_err_jy, upper_limit, quality, observation, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)',
  );
  const updateMeasurement = sqlite.prepare(
    'UPDATE measurements SET upload_id = ?, mag = ?, mag_err = ?, fnu_jy = ?, fnu_err_jy = ?, upper_limit = ?, quality = ?, observation = ? WHERE id = ?',
  );
  const counts = { starsCreated: 0, starsUpdated: 0, measurementsCreated: 0, measurementsUpdated: 0 };
  const n = (v: number | undefined) => (v === undefined ? null : v);
  const observationJson = observation ? JSON.stringify(observation) : null;

  sqlite.transaction(() => {
    for (const s of result.stars) {
      const existing = findStar.get(campaignId, s.id) as { id: number } | undefined;
      let starId: number;
      if (existing) {
        updateStar.run(n(s.raDeg), n(s.decDeg), n(s.parallaxMas), n(s.parallaxErrMas), n(s.avMag), nowMs, existing.id);
        starId = existing.id;
        counts.starsUpdated++;
      } else {
        starId = Number(insertStar.run(campaignId, s.id, n(s.raDeg), n(s.decDeg), n(s.parallaxMas), n(s.parallaxErrMas), n(s.avMag), nowMs, nowMs).lastInsertRowid);
        counts.starsCreated++;
      }
      for (const m of s.measurements) {
        const values = [uploadId, n(m.mag), n(m.magErr), n(m.fnuJy), n(m.fnuErrJy), m.upperLimit ? 1 : 0, m.quality ?? null, observationJson] as const;
        const prior = findMeasurement.get(starId, m.bandKey, source) as { id: number } | undefined;
        if (prior) {
          updateMeasurement.run(...values, prior.id);
          counts.measurementsUpdated++;
        } else {
          insertMeasurement.run(starId, m.bandKey, source, ...values, nowMs);
          counts.measurementsCreated++;
        }
      }
      hooks.afterStar?.(s.id);
    }
    sqlite
      .prepare('UPDATE uploads SET status = ?, report = ?, imported_row_count = ?, imported_at = ? WHERE id = ?')
      .run('imported', JSON.stringify(check.report), result.rowCount - result.rejectedRows, nowMs, uploadId);
    recordAuditSql(sqlite, { actorId: actor.id, action: 'upload.imported', campaignId, details: { uploadId, source, ...counts, problems: result.errorCount } });
  }).immediate();

  const totals = campaignCounts(app.db, campaignId);
  return { ...check, source, ...counts, campaignStars: totals.stars, campaignMeasurements: totals.measurements };
}

export function campaignCounts(db: DbOrTx, campaignId: string): { stars: number; measurements: number } {
  const s = db.select({ n: count() }).from(stars).where(eq(stars.campaignId, campaignId)).get()?.n ?? 0;
  const ids = db.select({ id: stars.id }).from(stars).where(eq(stars.campaignId, campaignId));
  const m = db.select({ n: count() }).from(measurements).where(inArray(measurements.starId, ids)).get()?.n ?? 0;
  return { stars: s, measurements: m };
}
