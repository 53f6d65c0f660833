// Intake jobs: the record of each reading, check and import of an upload (table intake_jobs), how
// one is claimed by the runner, and its progress. Decision record 0023.
import { and, desc, eq } from 'drizzle-orm';
import type { DbOrTx } from '../../db/client';
import { intakeJobs, uploads, type IntakeJobKind } from '../../db/schema';
import type { IntakeJobView } from '../../contracts/intake';
import { newId } from '../ids';
import { IntakeError } from './errors';

type JobRow = typeof intakeJobs.$inferSelect;

/** Progress of running jobs, reported by the runner (the intake thread posts it to the web process). */
const live = new Map<string, { rowsRead: number; starsWritten: number; phase: IntakeJobView['phase'] }>();

export function reportProgress(jobId: string, p: { rowsRead: number; starsWritten: number; phase: IntakeJobView['phase'] }): void {
  live.set(jobId, p);
}

/** Who runs jobs in this process: the web server's intake thread; absent in tests and scripts (they drain inline). */
export interface IntakeRunner {
  wake(): void;
}
let runner: IntakeRunner | null = null;
export function setIntakeRunner(r: IntakeRunner | null): void {
  runner = r;
}
export function wakeIntakeRunner(): void {
  runner?.wake();
}

export function enqueueJob(db: DbOrTx, job: { uploadId: string; campaignId: string; kind: IntakeJobKind; input: Record<string, unknown>; actorId: string | null; done?: Record<string, unknown> }): JobRow {
  const now = new Date();
  const row = {
    id: newId(),
    uploadId: job.uploadId,
    campaignId: job.campaignId,
    kind: job.kind,
    input: job.input,
    actorId: job.actorId,
    createdAt: now,
    ...(job.done ? { status: 'done' as const, outcome: job.done, startedAt: now, finishedAt: now } : {}),
  };
  db.insert(intakeJobs).values(row).run();
  return db.select().from(intakeJobs).where(eq(intakeJobs.id, row.id)).get()!;
}

/** The oldest pending job, marked running (IMMEDIATE, so two runners never take the same one). */
export function claimJob(db: DbOrTx & { $client: import('better-sqlite3').Database }): JobRow | undefined {
  const sqlite = db.$client;
  const id = sqlite
    .transaction(() => {
      const next = sqlite.prepare("SELECT id FROM intake_jobs WHERE status = 'pending' ORDER BY created_at, id LIMIT 1").pluck().get() as string | undefined;
      if (next) sqlite.prepare("UPDATE intake_jobs SET status = 'running', started_at = ? WHERE id = ?").run(Date.now(), next);
      return next;
    })
    .immediate();
  return id ? db.select().from(intakeJobs).where(eq(intakeJobs.id, id)).get() : undefined;
}

/** Jobs left running by a process that stopped go back to the queue (each job is all-or-nothing). */
export function requeueInterrupted(db: DbOrTx): number {
  return db.update(intakeJobs).set({ status: 'pending', startedAt: null }).where(eq(intakeJobs.status, 'running')).run().changes;
}

export function finishJob(db: DbOrTx, jobId: string, status: 'done' | 'failed', outcome: Record<string, unknown>, rowsRead: number): void {
  db.update(intakeJobs).set({ status, outcome, rowsRead, finishedAt: new Date() }).where(eq(intakeJobs.id, jobId)).run();
  live.delete(jobId);
}

export function jobView(j: JobRow): IntakeJobView {
  const p = live.get(j.id);
  const o = (j.outcome ?? {}) as Record<string, unknown>;
  const imported = o.import as IntakeJobView['import'] | undefined;
  const running = j.status === 'running';
  const view: IntakeJobView = {
    id: j.id,
    uploadId: j.uploadId,
    kind: j.kind,
    status: j.status,
    phase: j.status === 'pending' ? 'waiting' : running ? (p?.phase ?? 'reading') : 'finished',
    rowsRead: running && p ? Math.max(p.rowsRead, j.rowsRead) : j.rowsRead,
    starsWritten: running && p ? p.starsWritten : (imported?.starsCreated ?? 0) + (imported?.starsUpdated ?? 0),
    createdAt: j.createdAt.toISOString(),
    startedAt: j.startedAt ? j.startedAt.toISOString() : null,
    finishedAt: j.finishedAt ? j.finishedAt.toISOString() : null,
  };
  if (j.status === 'done' && o.check) view.check = o.check as IntakeJobView['check'];
  if (j.status === 'done' && imported) view.import = imported;
  if (j.status === 'failed' && o.refusal) view.refusal = o.refusal as IntakeJobView['refusal'];
  return view;
}

export function getJob(db: DbOrTx, campaignId: string, uploadId: string, jobId: string): IntakeJobView {
  const j = db.select().from(intakeJobs).where(and(eq(intakeJobs.id, jobId), eq(intakeJobs.uploadId, uploadId), eq(intakeJobs.campaignId, campaignId))).get();
  if (!j) throw new IntakeError(404, 'not_found', 'No intake job with that id for this upload.');
  return jobView(j);
}

export function latestJob(db: DbOrTx, uploadId: string): IntakeJobView | null {
  const j = db.select().from(intakeJobs).where(eq(intakeJobs.uploadId, uploadId)).orderBy(desc(intakeJobs.createdAt), desc(intakeJobs.id)).limit(1).get();
  return j ? jobView(j) : null;
}

/**
 * The answer of a finished job as the synchronous use case gave it: the summary, or the refusal
 * thrown as the IntakeError it was (an unexpected failure as an Error with its message).
 */
export function outcomeOf(db: DbOrTx, jobId: string): Record<string, unknown> {
  const j = db.select().from(intakeJobs).where(eq(intakeJobs.id, jobId)).get();
  if (!j) throw new Error(`no intake job ${jobId}`);
  if (j.status === 'pending' || j.status === 'running') throw new Error(`intake job ${jobId} is still ${j.status}`);
  const o = (j.outcome ?? {}) as Record<string, unknown>;
  if (j.status === 'failed') {
    const r = o.refusal as { status: number; error: { code: string; message: string }; report?: never; summary?: unknown; uploadId?: string } | undefined;
    if (r && r.status < 500) throw new IntakeError(r.status, r.error.code, r.error.message, { report: r.report, summary: r.summary, uploadId: r.uploadId });
    throw new Error(String(o.detail ?? r?.error.message ?? 'intake job failed'));
  }
  return o;
}

/** The campaign's recent intake jobs, newest first, with the name of each one's upload. */
export function listJobs(db: DbOrTx, campaignId: string, limit = 20): (IntakeJobView & { uploadName: string })[] {
  const rows = db
    .select({ job: intakeJobs, uploadName: uploads.originalName })
    .from(intakeJobs)
    .innerJoin(uploads, eq(uploads.id, intakeJobs.uploadId))
    .where(eq(intakeJobs.campaignId, campaignId))
    .orderBy(desc(intakeJobs.createdAt), desc(intakeJobs.id))
    .limit(limit)
    .all();
  return rows.map((r) => ({ ...jobView(r.job), uploadName: r.uploadName }));
}
