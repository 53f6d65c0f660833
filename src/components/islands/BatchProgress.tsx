// The live view of one batch: a bar split into fitted / could not be fitted / running / waiting,
// the counts, the rate and the time left, and the stars that could not be fitted with their
// reasons. Polls GET /api/batches/:id/progress (and …/failures) until the batch has finished.
import { QueryClientProvider } from '@tanstack/react-query';
import { useState } from 'react';
import { getQueryClient } from '../../browser/query-client';
import { useBatchFailures, useBatchProgress, type BatchFailuresPage, type BatchProgress as BatchProgressView } from '../../browser/batches';

interface Props {
  batchId: string;
  initial: BatchProgressView;
  initialFailures: BatchFailuresPage;
  /** The viewer may cancel (analysts, admins): the form is offered while the batch has not ended. */
  canCancel?: boolean;
}

export default function BatchProgress(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Progress {...props} />
    </QueryClientProvider>
  );
}

function duration(seconds: number | null): string {
  if (seconds === null || !Number.isFinite(seconds)) return 'not known yet';
  if (seconds < 1) return 'under a second';
  if (seconds < 90) return `${Math.round(seconds)} s`;
  if (seconds < 5400) return `${Math.round(seconds / 60)} min`;
  return `${(seconds / 3600).toFixed(1)} h`;
}

const pct = (n: number, total: number) => (total > 0 ? (100 * n) / total : 0);

const STATUS_WORDS: Record<string, string> = {
  queued: 'waiting for a worker',
  running: 'running',
  finished: 'finished',
  cancelled: 'cancelled',
};

function Progress({ batchId, initial, initialFailures, canCancel = false }: Props) {
  const progress = useBatchProgress(batchId, initial);
  const p = progress.data ?? initial;
  const running = p.status !== 'finished' && p.status !== 'cancelled';
  const [offset, setOffset] = useState(0);
  const failures = useBatchFailures(batchId, running, offset, initialFailures);
  const f = failures.data;
  const done = p.fitted + p.failed;
  const segments = [
    { key: 'fitted', n: p.fitted, cls: 'bg-moss-700', label: 'fitted' },
    { key: 'failed', n: p.failed, cls: 'bg-alarm-700', label: 'could not be fitted' },
    { key: 'running', n: p.running, cls: 'bg-glacier-500', label: 'being fitted now' },
  ];

  return (
    <div className="flex flex-col gap-6">
      {canCancel && running && (
        // A plain form post to the batch page (works without JavaScript); gone as soon as the batch ends.
        <form method="post" className="-mb-2 flex items-center gap-3 text-sm" data-testid="cancel-form">
          <button type="submit" className="btn btn-quiet">
            Cancel this batch
          </button>
          <span className="text-ink-500">Waiting stars are dropped from it; stars already fitted keep their results.</span>
        </form>
      )}
      <section className="card p-5" aria-labelledby="progress-heading">
        <div className="flex items-baseline justify-between gap-4 flex-wrap mb-3">
          <h2 id="progress-heading" className="text-xl">
            Progress <span className="text-base text-ink-500">— {STATUS_WORDS[p.status] ?? p.status}</span>
          </h2>
          <p className="num text-sm text-ink-600" data-testid="batch-done">
            {done.toLocaleString('en')} / {p.starCount.toLocaleString('en')} stars · {pct(done, p.starCount).toFixed(1)} %
          </p>
        </div>
        <div
          className="h-4 w-full rounded-full bg-paper-deep overflow-hidden flex"
          role="progressbar"
          aria-label="Stars finished"
          aria-valuemin={0}
          aria-valuemax={p.starCount}
          aria-valuenow={done}
        >
          {segments.map((s) => (
            <div key={s.key} className={`${s.cls} h-full transition-[width] duration-700`} style={{ width: `${pct(s.n, p.starCount)}%` }} title={`${s.n} ${s.label}`} />
          ))}
        </div>
        <dl className="mt-4 grid grid-cols-2 md:grid-cols-6 gap-3 text-sm">
          <Stat label="Fitted" value={p.fitted} dot="bg-moss-700" />
          <Stat label="Could not be fitted" value={p.failed} dot="bg-alarm-700" />
          <Stat label="Being fitted" value={p.running} dot="bg-glacier-500" />
          <Stat label="Waiting" value={p.waiting} dot="bg-paper-deep border border-rule" note={p.retrying > 0 ? `${p.retrying} to try again` : undefined} />
          <div>
            <dt className="text-ink-500">Rate</dt>
            <dd className="num text-lg">{p.ratePerSecond >= 10 ? Math.round(p.ratePerSecond).toLocaleString('en') : p.ratePerSecond.toFixed(1)} <span className="text-xs text-ink-500">stars/s</span></dd>
          </div>
          <div>
            <dt className="text-ink-500">{running ? 'Time left' : 'Took'}</dt>
            <dd className="num text-lg">
              {running
                ? duration(p.secondsLeft)
                : p.finishedAt
                  ? duration((Date.parse(p.finishedAt) - Date.parse(p.createdAt)) / 1000)
                  : '—'}
            </dd>
          </div>
        </dl>
        {running && p.running === 0 && p.waiting > 0 && done === 0 && (
          <p className="notice notice-info mt-4 text-sm">
            No worker has picked this batch up yet. Workers run next to the server (<code>npm run worker</code>); the demo starts one.
          </p>
        )}
        {progress.isError && (
          <p className="notice notice-error mt-4 text-sm" role="alert">
            Could not refresh the progress: {progress.error.message}
          </p>
        )}
      </section>

      <section className="card overflow-hidden" aria-labelledby="failures-heading">
        <h2 id="failures-heading" className="text-xl px-5 pt-5 pb-1">
          Stars that could not be fitted <span className="num text-base text-ink-500">({f?.total ?? 0})</span>
        </h2>
        <p className="px-5 pb-3 text-sm text-ink-600">
          Each keeps its reason. Too few usable bands is a property of the data; “gave up” means the job failed on every attempt.
        </p>
        {f && f.failures.length > 0 ? (
          <table className="w-full text-sm" data-testid="failure-table">
            <thead className="bg-paper-deep text-ink-600 text-left">
              <tr>
                <th className="px-5 py-2 font-semibold">Star</th>
                <th className="px-3 py-2 font-semibold">Reason</th>
              </tr>
            </thead>
            <tbody>
              {f.failures.map((x) => (
                <tr key={x.starId} className="border-t border-rule align-top">
                  <td className="px-5 py-2 num whitespace-nowrap">
                    <a href={`/campaigns/${p.campaignId}/stars/${x.starId}`}>{x.starKey}</a>
                  </td>
                  <td className="px-3 py-2 text-ink-700">
                    {x.kind === 'job' && <span className="role-chip bg-alarm-100 text-alarm-700 mr-2">job</span>}
                    {x.reason}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        ) : (
          <p className="px-5 pb-5 text-sm text-ink-500">{running ? 'None so far.' : p.status === 'cancelled' ? 'None.' : 'None: every star was fitted.'}</p>
        )}
        {f && f.total > 50 && (
          <div className="flex items-center justify-between px-5 py-3 border-t border-rule text-sm">
            <button type="button" className="btn btn-quiet" disabled={offset === 0} onClick={() => setOffset(Math.max(0, offset - 50))}>
              Previous
            </button>
            <span className="num text-ink-500">
              {offset + 1}–{Math.min(offset + 50, f.total)} of {f.total}
            </span>
            <button type="button" className="btn btn-quiet" disabled={offset + 50 >= f.total} onClick={() => setOffset(offset + 50)}>
              Next
            </button>
          </div>
        )}
        {f && f.retrying.length > 0 && (
          <div className="border-t border-rule px-5 py-4">
            <h3 className="text-base mb-2">Waiting to be tried again</h3>
            <ul className="text-sm flex flex-col gap-1">
              {f.retrying.map((r) => (
                <li key={r.starKey}>
                  <span className="num">{r.starKey}</span>
                  {r.stars > 1 && <span className="text-ink-500"> and {(r.stars - 1).toLocaleString('en')} more</span>}{' '}
                  <span className="text-ink-500">attempt {r.attempts} of {r.maxAttempts}:</span> {r.lastError}
                </li>
              ))}
            </ul>
          </div>
        )}
      </section>
    </div>
  );
}

function Stat({ label, value, dot, note }: { label: string; value: number; dot: string; note?: string }) {
  return (
    <div>
      <dt className="text-ink-500 flex items-center gap-1.5">
        <span className={`inline-block w-2.5 h-2.5 rounded-sm ${dot}`} aria-hidden="true" />
        {label}
      </dt>
      <dd className="num text-lg">{value.toLocaleString('en')}</dd>
      {note && <dd className="text-xs text-ink-500">{note}</dd>}
    </div>
  );
}
