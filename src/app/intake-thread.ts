// The intake thread's body: a worker thread of the web process that runs intake jobs (reading,
// checking, importing uploads) one at a time on its own database connection, so parsing and
// import never run on the web server's event loop (decision record 0023). Started by
// intake-runner.ts; tells the web process each job's progress.
import { parentPort, workerData } from 'node:worker_threads';
import { openDatabase } from '../db/client';
import { claimJob, requeueInterrupted } from '../server/intake/jobs';
import { runIntakeJob } from '../server/intake/run';
import type { InputLimits } from '../core/input/limits';

const { databasePath, pollMs, inputLimits } = workerData as { databasePath: string; pollMs: number; inputLimits?: Partial<InputLimits> };
const { db } = openDatabase(databasePath);
// One web process serves a database: a job it left running (the process stopped) starts again.
requeueInterrupted(db);

let wake: (() => void) | null = null;
parentPort!.on('message', (m: { type: string }) => {
  if (m.type === 'wake') wake?.();
});

for (;;) {
  const job = claimJob(db);
  if (!job) {
    await new Promise<void>((resolve) => {
      const timer = setTimeout(resolve, pollMs);
      wake = () => {
        clearTimeout(timer);
        resolve();
      };
    });
    wake = null;
    continue;
  }
  parentPort!.postMessage({ type: 'started', jobId: job.id });
  await runIntakeJob(db, job, { limits: inputLimits, progress: (jobId, p) => parentPort!.postMessage({ type: 'progress', jobId, p }) });
  parentPort!.postMessage({ type: 'finished', jobId: job.id });
}
