// The bodies of the intake jobs (decision record 0023). Each reads the upload at most once, row by
// row: the rows go through the column mapping into a staging file beside the upload, problems are
// counted and the first ones kept, and only the summary and report enter the database. An import
// then writes the staged stars in one IMMEDIATE transaction. They run in the web process's intake
// thread (src/app/intake-thread.ts), or inline in tests and scripts (drainIntakeJobs).
import { createHash } from 'node:crypto';
import { existsSync, rmSync } from 'node:fs';
import { eq } from 'drizzle-orm';
import { RowMapper, type MappedStar } from '../../core/input/apply-mapping';
import { detectMapping, type Mapping, type MappingRules, type TableCell } from '../../core/input/mapping';
import { previewRows } from '../../core/input/cells';
import { UnreadableFile, type ImageObservation } from '../../core/input/table-file';
import type { AppDatabase } from '../../db/client';
import { intakeJobs, uploads } from '../../db/schema';
import type { CheckSummary, ImportSummary, IntakeJobView } from '../../contracts/intake';
import { IntakeError } from './errors';
import { claimJob, finishJob } from './jobs';
import { readTableFile, type TableHead } from './read-table';
import { CappedProblems, fileProblem, type ReportEntry } from './report';
import { readStaged, removeStaging, stagingPathFor, StagingWriter } from './staging';
import { bandForFilter, bandKeys, campaignCounts, importInput, mappingInput, PREVIEW_ROWS, rulesInput, unreadableAnswer } from './intake';
import { recordAuditSql } from '../audit';
import { DEFAULT_INPUT_LIMITS, type InputLimits } from '../../core/input/limits';

type JobRow = typeof intakeJobs.$inferSelect;
type UploadRow = typeof uploads.$inferSelect;

/** Rows kept from the start of a file for column detection (as the synchronous intake used). */
const SAMPLE_ROWS = 50;

export interface Progress {
  rowsRead: number;
  starsWritten: number;
  phase: IntakeJobView['phase'];
}

export interface RunHooks {
  /** Called inside the import transaction after each star (tests use it to fail mid-import). */
  afterStar?: (starKey: string) => void;
  progress?: (jobId: string, p: Progress) => void;
  /** The reader limits (INPUT_MAX_*) of the process running the job; the defaults when absent. */
  limits?: Partial<InputLimits>;
}

/** What the upload view shows without reading the file again. */
export interface Inspection {
  columns: string[];
  units: (string | null)[];
  preview: string[][];
  detected: ReturnType<typeof detectMapping> | null;
  observation?: ImageObservation;
  suggestedBand?: string;
}

export interface StoredCheck {
  key: string;
  summary: CheckSummary;
  /** Whether the staging file beside the upload holds this check's good stars. */
  staged: boolean;
  /** The mapping and rules checked (absent from checks stored before they were kept). */
  mapping?: Mapping;
  rules?: MappingRules;
}

/**
 * Identifies a check: the mapping and rules as validated, the band keys they were checked against
 * and the reader limits it was read under (a limit changed since means reading the file again).
 */
export function checkKey(mapping: Mapping, rules: MappingRules, keys: readonly string[], limits?: Partial<InputLimits>): string {
  const pm = mappingInput.safeParse(mapping);
  const pr = rulesInput.safeParse(rules);
  const m = pm.success ? pm.data : mapping;
  const r = pr.success ? pr.data : rules;
  const l = { ...DEFAULT_INPUT_LIMITS, ...limits };
  return createHash('sha256').update(JSON.stringify({ m, r, keys, l: [l.maxBytes, l.maxRows, l.maxColumns, l.maxCells, l.maxSeconds] })).digest('hex');
}

function uploadOf(db: AppDatabase, id: string): UploadRow {
  const u = db.select().from(uploads).where(eq(uploads.id, id)).get();
  if (!u) throw new IntakeError(404, 'not_found', 'The upload no longer exists.');
  return u;
}

interface PassResult {
  head: TableHead | null;
  image?: ImageObservation;
  sample: { cells: TableCell[]; line: number | undefined }[];
  summary: CheckSummary | null;
  rowCount: number;
  key: string | null;
  mapping: Mapping | null;
  rules: MappingRules | null;
}

/**
 * One pass over the file: the header, the first rows (for detection and preview) and, when a
 * mapping is given or `detect` is set, every row through the mapping into the staging file.
 */
async function pass(db: AppDatabase, job: JobRow, u: UploadRow, chosen: { mapping: Mapping; rules: MappingRules } | 'detect', hooks: RunHooks): Promise<PassResult> {
  const keys = bandKeys(db);
  const report = (rowsRead: number) => hooks.progress?.(job.id, { rowsRead, starsWritten: 0, phase: 'reading' });
  const sample: PassResult['sample'] = [];
  let head: TableHead | null = null;
  let mapper: RowMapper | null = null;
  let staging: StagingWriter | null = null;
  let problems: CappedProblems | null = null;
  let mapping: Mapping | null = null;
  let rules: MappingRules | null = null;
  const startMapping = () => {
    if (mapper || !head) return;
    if (chosen === 'detect') {
      const d = detectMapping(head.columns, sample.map((s) => s.cells), keys);
      mapping = { layout: d.layout, columns: d.columns };
      rules = d.rules;
    } else {
      mapping = chosen.mapping;
      rules = chosen.rules;
    }
    problems = new CappedProblems();
    // The stored check no longer holds once its staging file is rebuilt (a stop half-way leaves it partial).
    markUnstaged(db, u.id);
    staging = new StagingWriter(stagingPathFor(u.storedPath));
    mapper = new RowMapper(head.columns, u.originalName, mapping, rules, { bandKeys: keys }, staging, problems);
    for (const s of sample) mapper.row(s.cells, s.line);
  };
  try {
    const result = await readTableFile(
      u.storedPath,
      u.originalName,
      {
        head: (h) => {
          head = h;
        },
        row: (cells, line) => {
          if (mapper) mapper.row(cells, line);
          else {
            sample.push({ cells, line });
            if (sample.length >= SAMPLE_ROWS) startMapping();
          }
        },
        progress: report,
      },
      hooks.limits,
    );
    if (result.kind === 'image') return { head: null, image: result.observation, sample: [], summary: null, rowCount: 1, key: null, mapping: null, rules: null };
    startMapping();
    const counts = mapper!.finish();
    const staged = staging!.close();
    staging = null;
    const p = problems!;
    const summary: CheckSummary = {
      uploadId: u.id,
      rowCount: counts.rowCount,
      starCount: staged.stars,
      measurementCount: staged.measurements,
      rejectedRows: counts.rejectedRows,
      excludedByQuality: counts.excludedByQuality,
      leftOutBySurveyRules: counts.leftOutBySurveyRules,
      nativeUpperLimits: counts.nativeUpperLimits,
      possibleCompanions: counts.possibleCompanions,
      errorCount: p.errorCount,
      warningCount: p.warningCount,
      report: p.report(),
    };
    report(counts.rowCount);
    return { head, sample, summary, rowCount: counts.rowCount, key: checkKey(mapping!, rules!, keys, hooks.limits), mapping, rules };
  } catch (err) {
    (staging as StagingWriter | null)?.abandon();
    throw err;
  }
}

function markUnstaged(db: AppDatabase, uploadId: string): void {
  const stored = db.select({ lastCheck: uploads.lastCheck }).from(uploads).where(eq(uploads.id, uploadId)).get()?.lastCheck as unknown as StoredCheck | null | undefined;
  if (stored?.staged) db.update(uploads).set({ lastCheck: { ...stored, staged: false } as unknown as Record<string, unknown> }).where(eq(uploads.id, uploadId)).run();
}

function storeCheck(db: AppDatabase, u: UploadRow, key: string, summary: CheckSummary, checked: { mapping: Mapping; rules: MappingRules }, extra: Partial<typeof uploads.$inferInsert> = {}): void {
  const lastCheck: StoredCheck = { key, summary, staged: true, mapping: checked.mapping, rules: checked.rules };
  db.update(uploads)
    .set({ lastCheck: lastCheck as unknown as Record<string, unknown>, ...extra })
    .where(eq(uploads.id, u.id))
    .run();
}

/** The arrival job: format, columns, preview and detected mapping stored, and a check with that mapping staged. */
async function readJob(db: AppDatabase, job: JobRow, u: UploadRow, hooks: RunHooks): Promise<Record<string, unknown>> {
  let r: PassResult;
  try {
    r = await pass(db, job, u, 'detect', hooks);
  } catch (err) {
    if (!(err instanceof UnreadableFile)) throw err;
    // The content is useless; keep the record and report, not the bytes.
    const report = fileProblem(u.originalName, err.message);
    db.transaction(
      (tx) => {
        tx.update(uploads).set({ status: 'rejected', report, rowCount: null }).where(eq(uploads.id, u.id)).run();
      },
      { behavior: 'immediate' },
    );
    rmSync(u.storedPath, { force: true });
    removeStaging(u.storedPath);
    const answer = unreadableAnswer(err);
    throw new IntakeError(answer.status, answer.code, err.message, { report, uploadId: u.id });
  }
  const keys = bandKeys(db);
  if (r.image) {
    const inspection: Inspection = { columns: [], units: [], preview: [], detected: null, observation: r.image, suggestedBand: bandForFilter(r.image.filter, keys) };
    db.update(uploads).set({ detectedFormat: 'fits-image', rowCount: 1, inspection: inspection as unknown as Record<string, unknown> }).where(eq(uploads.id, u.id)).run();
    return { inspection };
  }
  const head = r.head!;
  const sampleTable = { file: u.originalName, columns: head.columns, rows: r.sample.map((s) => s.cells) };
  const detected = detectMapping(head.columns, sampleTable.rows, keys);
  const inspection: Inspection = {
    columns: head.columns,
    units: head.units.map((x) => x ?? null),
    preview: previewRows(sampleTable, PREVIEW_ROWS),
    detected,
  };
  storeCheck(db, u, r.key!, r.summary!, { mapping: r.mapping!, rules: r.rules! }, { detectedFormat: head.format, rowCount: r.rowCount, inspection: inspection as unknown as Record<string, unknown> });
  return { rowsRead: r.rowCount };
}

function assertCheckable(u: UploadRow): void {
  if (u.status === 'rejected') throw new IntakeError(409, 'conflict', `${u.originalName} was rejected when it arrived and cannot be checked or imported; upload a corrected file.`);
  if (u.detectedFormat === 'fits-image') throw new IntakeError(400, 'bad_request', `${u.originalName} is a FITS image: import it with a star id, band and magnitude, not a column mapping.`);
}

/** The stored check for this mapping when it is still staged, else a new pass over the file. */
async function ensureChecked(db: AppDatabase, job: JobRow, u: UploadRow, mapping: Mapping, rules: MappingRules, hooks: RunHooks): Promise<CheckSummary> {
  const key = checkKey(mapping, rules, bandKeys(db), hooks.limits);
  const stored = u.lastCheck as unknown as StoredCheck | null;
  if (stored && stored.key === key && stored.staged && existsSync(stagingPathFor(u.storedPath))) return stored.summary;
  const r = await pass(db, job, u, { mapping, rules }, hooks);
  storeCheck(db, u, key, r.summary!, { mapping, rules });
  return r.summary!;
}

async function checkJob(db: AppDatabase, job: JobRow, u: UploadRow, hooks: RunHooks): Promise<Record<string, unknown>> {
  assertCheckable(u);
  const input = job.input as { mapping: Mapping; rules: MappingRules };
  const summary = await ensureChecked(db, job, u, input.mapping, input.rules, hooks);
  const fresh = uploadOf(db, u.id);
  db.update(uploads)
    .set({ report: summary.report, ...(fresh.status === 'imported' ? {} : { status: 'checked' as const }) })
    .where(eq(uploads.id, u.id))
    .run();
  return { check: summary };
}

async function importJob(db: AppDatabase, job: JobRow, u: UploadRow, hooks: RunHooks): Promise<Record<string, unknown>> {
  const input = importInput.parse(job.input);
  const source = input.source && input.source !== '' ? input.source : u.originalName;
  const keys = bandKeys(db);
  let check: CheckSummary;
  let stars: Iterable<
    Pick<MappedStar, 'id' | 'raDeg' | 'decDeg' | 'parallaxMas' | 'parallaxErrMas' | 'avMag' | 'lumClass' | 'fehDex' | 'distancePc' | 'distanceLoPc' | 'distanceHiPc' | 'parallaxOrigin' | 'possibleCompanion' | 'leftOut'> & {
      measurements: { bandKey: string; mag?: number; magErr?: number; fnuJy?: number; fnuErrJy?: number; upperLimit?: boolean; quality?: string }[];
    }
  >;
  let observationJson: string | null = null;
  let fromStaging = false;
  if (u.detectedFormat === 'fits-image' && u.status !== 'rejected') {
    const observation = (u.inspection as unknown as Inspection | null)?.observation ?? {};
    if (!input.image) throw new IntakeError(400, 'validation_failed', 'A FITS image needs the star id, band and magnitude measured on it (image.starId, image.band, image.mag, image.magErr).');
    const problems: ReportEntry[] = keys.includes(input.image.band)
      ? []
      : [{ file: u.originalName, row: 0, severity: 'error', message: `unknown band "${input.image.band}" (band keys are case-sensitive; known bands: ${keys.join(' ')})` }];
    observationJson = JSON.stringify({ ...observation, image: u.originalName });
    // The image's pointing is observation metadata (kept with the measurement), never the star's
    // catalogue position: a frame is centred on the field, not on the star.
    const star = { id: input.image.starId, measurements: [{ bandKey: input.image.band, mag: input.image.mag, magErr: input.image.magErr }] };
    stars = problems.length ? [] : [star];
    check = { uploadId: u.id, rowCount: 1, starCount: problems.length ? 0 : 1, measurementCount: problems.length ? 0 : 1, rejectedRows: problems.length ? 1 : 0, excludedByQuality: 0, errorCount: problems.length, warningCount: 0, report: problems };
  } else {
    assertCheckable(u);
    if (!input.mapping) throw new IntakeError(400, 'validation_failed', 'mapping is required.');
    check = await ensureChecked(db, job, u, input.mapping as Mapping, input.rules, hooks);
    stars = readStaged(stagingPathFor(u.storedPath));
    fromStaging = true;
  }
  const fresh = uploadOf(db, u.id);
  if (check.errorCount > 0 && !input.importValidRows) {
    db.update(uploads).set({ report: check.report, status: fresh.status === 'imported' ? 'imported' : 'checked' }).where(eq(uploads.id, u.id)).run();
    throw new IntakeError(
      422,
      'validation_failed',
      `${u.originalName} has ${check.errorCount} problem${check.errorCount === 1 ? '' : 's'}; nothing was imported. Fix the file or mapping, or choose to import the valid rows and keep the report.`,
      { report: check.report, summary: { ...check, report: undefined } },
    );
  }
  if (check.starCount === 0) {
    throw new IntakeError(422, 'nothing_to_import', `${u.originalName}: no valid star to import; nothing was imported.`, { report: check.report, summary: { ...check, report: undefined } });
  }

  const sqlite = db.$client;
  const nowMs = Date.now();
  const findStar = sqlite.prepare('SELECT id FROM stars WHERE campaign_id = ? AND star_key = ?');
  const insertStar = sqlite.prepare(
    `INSERT INTO stars (campaign_id, star_key, ra_deg, dec_deg, parallax_mas, parallax_err_mas, av_mag, lum_class, feh_dex,
       distance_pc, distance_lo_pc, distance_hi_pc, parallax_origin, possible_companion, created_at, updated_at)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, coalesce(?, 0), ?, ?)`,
  );
  // Re-uploading a star keeps what it had where the new file is empty, and takes the new value elsewhere.
  const updateStar = sqlite.prepare(
    `UPDATE stars SET ra_deg = coalesce(?, ra_deg), dec_deg = coalesce(?, dec_deg), parallax_mas = coalesce(?, parallax_mas), parallax_err_mas = coalesce(?, parallax_err_mas),
       av_mag = coalesce(?, av_mag), lum_class = coalesce(?, lum_class), feh_dex = coalesce(?, feh_dex), distance_pc = coalesce(?, distance_pc),
       distance_lo_pc = coalesce(?, distance_lo_pc), distance_hi_pc = coalesce(?, distance_hi_pc), parallax_origin = coalesce(?, parallax_origin),
       possible_companion = coalesce(?, possible_companion), updated_at = ? WHERE id = ?`,
  );
  // A value the input rules left out replaces what the same source gave before for that band, and
  // a value given again clears an earlier left-out mark of the same source (decision 0028).
  const upsertLeftOut = sqlite.prepare(
    `INSERT INTO left_out_values (star_id, band_key, source, upload_id, reason, detail, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)
     ON CONFLICT (star_id, band_key, source) DO UPDATE SET upload_id = excluded.upload_id, reason = excluded.reason, detail = excluded.detail, created_at = excluded.created_at`,
  );
  const dropMeasurement = sqlite.prepare('DELETE FROM measurements WHERE star_id = ? AND band_key = ? AND source = ?');
  const dropLeftOut = sqlite.prepare('DELETE FROM left_out_values WHERE star_id = ? AND band_key = ? AND source = ?');
  const findMeasurement = sqlite.prepare('SELECT id FROM measurements WHERE star_id = ? AND band_key = ? AND source = ?');
  const insertMeasurement = sqlite.prepare(
    'INSERT INTO measurements (star_id, band_key, source, upload_id, mag, mag_err, fnu_jy, fnu_err_jy, upper_limit, quality, observation, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)',
  );
  const updateMeasurement = sqlite.prepare(
    'UPDATE measurements SET upload_id = ?, mag = ?, mag_err = ?, fnu_jy = ?, fnu_err_jy = ?, upper_limit = ?, quality = ?, observation = ? WHERE id = ?',
  );
  const counts = { starsCreated: 0, starsUpdated: 0, measurementsCreated: 0, measurementsUpdated: 0, valuesLeftOut: 0 };
  const n = <T>(v: T | undefined): T | null => (v === undefined ? null : v);
  const campaignId = u.campaignId;
  hooks.progress?.(job.id, { rowsRead: check.rowCount, starsWritten: 0, phase: 'importing' });

  sqlite
    .transaction(() => {
      let written = 0;
      for (const s of stars) {
        const existing = findStar.get(campaignId, s.id) as { id: number } | undefined;
        let starId: number;
        const companion = s.possibleCompanion === undefined ? null : s.possibleCompanion ? 1 : 0;
        const starValues = [n(s.raDeg), n(s.decDeg), n(s.parallaxMas), n(s.parallaxErrMas), n(s.avMag), n(s.lumClass), n(s.fehDex), n(s.distancePc), n(s.distanceLoPc), n(s.distanceHiPc), n(s.parallaxOrigin), companion] as const;
        if (existing) {
          updateStar.run(...starValues, nowMs, existing.id);
          starId = existing.id;
          counts.starsUpdated++;
        } else {
          starId = Number(insertStar.run(campaignId, s.id, ...starValues, nowMs, nowMs).lastInsertRowid);
          counts.starsCreated++;
        }
        for (const l of s.leftOut ?? []) {
          if (existing) dropMeasurement.run(starId, l.bandKey, source);
          upsertLeftOut.run(starId, l.bandKey, source, u.id, l.reason, l.detail, nowMs);
          counts.valuesLeftOut++;
        }
        for (const m of s.measurements) {
          const values = [u.id, n(m.mag), n(m.magErr), n(m.fnuJy), n(m.fnuErrJy), m.upperLimit ? 1 : 0, m.quality ?? null, observationJson] as const;
          // A star created just now has no measurements yet: no lookup needed.
          const prior = existing ? (findMeasurement.get(starId, m.bandKey, source) as { id: number } | undefined) : undefined;
          if (existing) dropLeftOut.run(starId, m.bandKey, source);
          if (prior) {
            updateMeasurement.run(...values, prior.id);
            counts.measurementsUpdated++;
          } else {
            insertMeasurement.run(starId, m.bandKey, source, ...values, nowMs);
            counts.measurementsCreated++;
          }
        }
        hooks.afterStar?.(s.id);
        if (++written % 5000 === 0) hooks.progress?.(job.id, { rowsRead: check.rowCount, starsWritten: written, phase: 'importing' });
      }
      sqlite
        .prepare('UPDATE uploads SET status = ?, report = ?, imported_row_count = ?, imported_at = ? WHERE id = ?')
        .run('imported', JSON.stringify(check.report), check.rowCount - check.rejectedRows, nowMs, u.id);
      recordAuditSql(sqlite, { actorId: job.actorId, action: 'upload.imported', campaignId, details: { uploadId: u.id, source, ...counts, problems: check.errorCount } });
    })
    .immediate();
  if (fromStaging) {
    // The stars are in the campaign now; the staged copy is no longer needed.
    removeStaging(u.storedPath);
    const stored = uploadOf(db, u.id).lastCheck as unknown as StoredCheck | null;
    if (stored) db.update(uploads).set({ lastCheck: { ...stored, staged: false } as unknown as Record<string, unknown> }).where(eq(uploads.id, u.id)).run();
  }
  const totals = campaignCounts(db, campaignId);
  const summary: ImportSummary = { ...check, source, ...counts, campaignStars: totals.stars, campaignMeasurements: totals.measurements };
  return { import: summary };
}

/** Runs one claimed job to its end and records the outcome; never throws for the job's own failures. */
export async function runIntakeJob(db: AppDatabase, job: JobRow, hooks: RunHooks = {}): Promise<void> {
  let rowsRead = 0;
  const track: RunHooks = {
    ...hooks,
    progress: (id, p) => {
      rowsRead = Math.max(rowsRead, p.rowsRead);
      hooks.progress?.(id, p);
    },
  };
  try {
    const u = uploadOf(db, job.uploadId);
    const outcome = job.kind === 'read' ? await readJob(db, job, u, track) : job.kind === 'check' ? await checkJob(db, job, u, track) : await importJob(db, job, u, track);
    finishJob(db, job.id, 'done', outcome, rowsRead);
  } catch (err) {
    if (err instanceof IntakeError) {
      // The answer the route would have given: its status, error and report.
      finishJob(db, job.id, 'failed', { refusal: { status: err.status, ...err.toJSON() } }, rowsRead);
      return;
    }
    if (err instanceof UnreadableFile) {
      // Read when it arrived, so a limit lowered since (or the time limit on a busy machine).
      const answer = unreadableAnswer(err);
      finishJob(db, job.id, 'failed', { refusal: { status: answer.status, error: { code: answer.code, message: err.message } } }, rowsRead);
      return;
    }
    console.error(`intake job ${job.id} (${job.kind}) failed:`, err);
    const what = job.kind === 'import' ? 'The import' : job.kind === 'check' ? 'The check' : 'Reading the file';
    finishJob(
      db,
      job.id,
      'failed',
      { refusal: { status: 500, error: { code: 'internal', message: `${what} failed on the server; nothing was imported. The problem has been logged.` } }, detail: err instanceof Error ? err.message : String(err) },
      rowsRead,
    );
  }
}

/** Runs every pending job in this thread, oldest first (tests, the bench and scripts); how many ran. */
export async function drainIntakeJobs(db: AppDatabase, hooks: RunHooks = {}): Promise<number> {
  let ran = 0;
  for (let job = claimJob(db); job; job = claimJob(db)) {
    await runIntakeJob(db, job, hooks);
    ran++;
  }
  return ran;
}
