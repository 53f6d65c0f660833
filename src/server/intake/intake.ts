// Intake use cases: receive an upload, then read it, check a mapping against every row and import
// the stars and measurements in one transaction — each of those three as an intake job that runs
// off the request (src/server/intake/run.ts, decision record 0023). Views read what the jobs
// stored; no request parses the file.
import { and, count, desc, eq, inArray } from 'drizzle-orm';
import { rmSync } from 'node:fs';
import { z } from 'zod';
import { COLUMN_ROLES, type ColumnRole, type Mapping } from '../../core/input/mapping';
import type { AppDatabase, DbOrTx } from '../../db/client';
import { measurements, stars, uploads } from '../../db/schema';
import type { Actor, AppServices } from '../context';
import { newId } from '../ids';
import { parseInput } from '../validation';
import { recordAudit } from '../audit';
import { getCurrentLibrary } from '../band-library';
import { IntakeError } from './errors';
import { FORMAT_LABELS, UnreadableFile, type DetectedFormat } from '../../core/input/table-file';
import { fileProblem } from './report';
import type { IntakeJobView, ReportEntry, UploadDetail, UploadSummary } from '../../contracts/intake';
import { enqueueJob, getJob, jobView, latestJob, wakeIntakeRunner } from './jobs';
import { sniffOnArrival } from './read-table';
import { checkKey, type Inspection, type StoredCheck } from './run';
import { starIdProblem } from '../../core/input/star-id';
import { MAG_RANGE } from '../../core/input/apply-mapping';

export type { CheckSummary, ImportSummary, IntakeJobView, UploadDetail, UploadSummary } from '../../contracts/intake';
import { intakeConfigOf, receiveUpload, type IntakeConfig } from './storage';

export const PREVIEW_ROWS = 8;

/** Band keys of the current band library version (admins may add bands). */
export function bandKeys(db: DbOrTx): string[] {
  return Object.keys(getCurrentLibrary(db as AppDatabase).bands);
}

export function intakeConfig(app: AppServices): IntakeConfig {
  return intakeConfigOf(app.env);
}

/**
 * How the intake answers a file it will not read: 400 for what is refused for safety (hostile XML),
 * 422 for a file it cannot read or one past a limit (docs/decisions/0018-input-limits.md).
 */
export function unreadableAnswer(err: UnreadableFile): { status: number; code: string } {
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
      mag: z.number({ error: 'The magnitude must be a number.' }).finite().min(MAG_RANGE.min, `The magnitude must be within ${MAG_RANGE.min}…${MAG_RANGE.max}.`).max(MAG_RANGE.max, `The magnitude must be within ${MAG_RANGE.min}…${MAG_RANGE.max}.`),
      magErr: z.number({ error: 'The magnitude error must be a number.' }).finite().nonnegative('The magnitude error cannot be negative.'),
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

function detail(db: DbOrTx, u: UploadRow): UploadDetail {
  const keys = bandKeys(db);
  const stored = u.lastCheck as unknown as StoredCheck | null;
  const checked = stored?.mapping && stored.rules ? { mapping: stored.mapping, rules: stored.rules } : null;
  const base = { ...summary(u), bandKeys: keys, checked, report: (u.report ?? []) as ReportEntry[], job: latestJob(db, u.id) };
  const ins = u.status === 'rejected' ? null : (u.inspection as unknown as Inspection | null);
  if (!ins) return { ...base, columns: [], units: [], preview: [], detected: null };
  if (u.detectedFormat === 'fits-image') {
    return { ...base, columns: [], units: [], preview: [], detected: null, ...(ins.observation ? { observation: ins.observation } : {}), ...(ins.suggestedBand ? { suggestedBand: ins.suggestedBand } : {}) };
  }
  return { ...base, columns: ins.columns, units: ins.units, preview: ins.preview, detected: ins.detected };
}

// ---------------------------------------------------------------------------------------------
// Use cases

function getUploadRow(db: DbOrTx, campaignId: string, uploadId: string): UploadRow {
  const u = db.select().from(uploads).where(and(eq(uploads.id, uploadId), eq(uploads.campaignId, campaignId))).get();
  if (!u) throw new IntakeError(404, 'not_found', 'No upload with that id in this campaign.');
  return u;
}

/**
 * Stores the request's file and queues the job that reads it (format, columns, preview, detected
 * mapping and a first check). A file that is plainly unreadable on arrival (empty, binary content)
 * is kept as a rejected upload with its report and answered with 422 at once; any other problem
 * of the file is the reading job's answer.
 */
export async function createUpload(app: AppServices, actor: Actor, campaignId: string, request: Request, config: IntakeConfig = intakeConfig(app)): Promise<UploadDetail> {
  const stored = await receiveUpload(request, campaignId, config);
  const id = newId();
  let problem: string | null = null;
  let answer = { status: 422, code: 'unreadable_file' };
  try {
    sniffOnArrival(stored.storedPath, stored.originalName);
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
    detectedFormat: null,
    status: problem ? ('rejected' as const) : ('received' as const),
    report: problem ? fileProblem(stored.originalName, problem) : [],
    rowCount: null,
    uploadedById: actor.id,
  };
  app.db.transaction((tx) => {
    tx.insert(uploads).values(row).run();
    recordAudit(tx, { actorId: actor.id, action: problem ? 'upload.rejected' : 'upload.received', campaignId, details: { uploadId: id, name: stored.originalName, sizeBytes: stored.sizeBytes, sha256: stored.sha256 } });
    if (!problem) enqueueJob(tx, { uploadId: id, campaignId, kind: 'read', input: {}, actorId: actor.id });
  }, { behavior: 'immediate' });
  if (problem) {
    // The content is useless; keep the record and report, not the bytes.
    rmSync(stored.storedPath, { force: true });
    throw new IntakeError(answer.status, answer.code, problem, { uploadId: id, report: row.report });
  }
  wakeIntakeRunner();
  return detail(app.db, getUploadRow(app.db, campaignId, id));
}

export function listUploads(db: DbOrTx, campaignId: string, limit = 50): UploadSummary[] {
  return db.select().from(uploads).where(eq(uploads.campaignId, campaignId)).orderBy(desc(uploads.createdAt)).limit(limit).all().map(summary);
}

/** The upload as its reading job left it (columns, preview, detected mapping), with its latest job. */
export function getUpload(db: DbOrTx, campaignId: string, uploadId: string): UploadDetail {
  return detail(db, getUploadRow(db, campaignId, uploadId));
}

function refuseEarly(u: UploadRow): void {
  if (u.status === 'rejected') throw new IntakeError(409, 'conflict', `${u.originalName} was rejected when it arrived and cannot be checked or imported; upload a corrected file.`);
}

/**
 * Queues a check of every row with this mapping and rules (writes no stars). When the upload's
 * stored check used the same mapping, rules and band keys, the job is answered from it at once and
 * the file is not read again.
 */
export function checkUpload(app: AppServices, actor: Actor, campaignId: string, uploadId: string, raw: unknown): IntakeJobView {
  const input = parseInput(checkInput, raw);
  const u = getUploadRow(app.db, campaignId, uploadId);
  refuseEarly(u);
  const stored = u.lastCheck as unknown as StoredCheck | null;
  if (stored && stored.key === checkKey(input.mapping as Mapping, input.rules, bandKeys(app.db), app.env.inputLimits)) {
    const job = app.db.transaction((tx) => {
      tx.update(uploads).set({ report: stored.summary.report, ...(u.status === 'imported' ? {} : { status: 'checked' as const }) }).where(eq(uploads.id, u.id)).run();
      return enqueueJob(tx, { uploadId, campaignId, kind: 'check', input, actorId: actor.id, done: { check: stored.summary } });
    }, { behavior: 'immediate' });
    return jobView(job);
  }
  const job = enqueueJob(app.db, { uploadId, campaignId, kind: 'check', input, actorId: actor.id });
  wakeIntakeRunner();
  return jobView(job);
}

/**
 * Queues the import (one transaction in the job). With errors in the report and importValidRows
 * false the job ends refused (422 with the report) and nothing is written; with importValidRows
 * the valid stars are imported and the report is kept with the upload.
 */
export function importUpload(app: AppServices, actor: Actor, campaignId: string, uploadId: string, raw: unknown): IntakeJobView {
  const input = parseInput(importInput, raw);
  const u = getUploadRow(app.db, campaignId, uploadId);
  refuseEarly(u);
  if (u.detectedFormat !== 'fits-image' && !input.mapping) throw new IntakeError(400, 'validation_failed', 'mapping is required.');
  const job = enqueueJob(app.db, { uploadId, campaignId, kind: 'import', input: input as unknown as Record<string, unknown>, actorId: actor.id });
  wakeIntakeRunner();
  return jobView(job);
}

export function getIntakeJob(db: DbOrTx, campaignId: string, uploadId: string, jobId: string): IntakeJobView {
  return getJob(db, campaignId, uploadId, jobId);
}

export function campaignCounts(db: DbOrTx, campaignId: string): { stars: number; measurements: number } {
  const s = db.select({ n: count() }).from(stars).where(eq(stars.campaignId, campaignId)).get()?.n ?? 0;
  const ids = db.select({ id: stars.id }).from(stars).where(eq(stars.campaignId, campaignId));
  const m = db.select({ n: count() }).from(measurements).where(inArray(measurements.starId, ids)).get()?.n ?? 0;
  return { stars: s, measurements: m };
}
