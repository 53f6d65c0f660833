// Starts and keeps alive the web process's intake thread (intake-thread.ts, run through tsx like
// the workers). A thread that dies (a job beyond its memory limit) fails the job it held, with a
// message, and is started again. Decision record 0023.
import { Worker } from 'node:worker_threads';
import { createRequire } from 'node:module';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { eq } from 'drizzle-orm';
import type { AppDatabase } from '../db/client';
import { projectRoot } from '../db/paths';
import { intakeJobs } from '../db/schema';
import { finishJob, reportProgress, setIntakeRunner } from '../server/intake/jobs';
import type { Progress } from '../server/intake/run';
import type { InputLimits } from '../core/input/limits';

/** Heap limit of the intake thread: a job beyond it ends the thread, not the web server. */
const THREAD_HEAP_MB = 1024;

let started = false;

export function startIntakeThread(db: AppDatabase, databasePath: string, inputLimits?: Partial<InputLimits>): void {
  if (started) return;
  started = true;
  let worker: Worker | null = null;
  let current: string | null = null;
  const spawn = () => {
    const root = projectRoot();
    const entry = pathToFileURL(path.join(root, 'src/app/intake-thread.ts')).href;
    // require.resolve gives tsx's CommonJS build of its ESM API; the ES module one sits beside it.
    const tsx = pathToFileURL(createRequire(path.join(root, 'package.json')).resolve('tsx/esm/api').replace(/\.cjs$/, '.mjs')).href;
    // tsx compiles the TypeScript thread body, as `npm run worker` does for the fit workers.
    const w = new Worker(`import(${JSON.stringify(tsx)}).then((api) => { api.register(); return import(${JSON.stringify(entry)}); });`, {
      eval: true,
      workerData: { databasePath, pollMs: 2000, inputLimits: { ...inputLimits } },
      resourceLimits: { maxOldGenerationSizeMb: THREAD_HEAP_MB },
    });
    w.unref();
    w.on('message', (m: { type: string; jobId: string; p?: Progress }) => {
      if (m.type === 'started') current = m.jobId;
      else if (m.type === 'finished') current = null;
      else if (m.type === 'progress' && m.p) reportProgress(m.jobId, m.p);
    });
    w.on('error', (err) => console.error('intake thread failed:', err));
    w.on('exit', (code) => {
      worker = null;
      const held = current;
      current = null;
      if (held) {
        const j = db.select({ status: intakeJobs.status }).from(intakeJobs).where(eq(intakeJobs.id, held)).get();
        if (j?.status === 'running') {
          finishJob(db, held, 'failed', { refusal: { status: 500, error: { code: 'internal', message: `The job stopped the intake thread (exit ${code}; it may need more than ${THREAD_HEAP_MB} MB); nothing was imported.` } } }, 0);
        }
      }
      setTimeout(spawn, 1000).unref();
    });
    worker = w;
  };
  spawn();
  setIntakeRunner({ wake: () => worker?.postMessage({ type: 'wake' }) });
}
