// The review desk: the queue of fits waiting for review (server-paged and filtered), the current
// star's numbers, flags and small SED, what FITS images gave the fit (analysts set such a value
// aside there), and decisions from the keyboard — a accept, f flag (then 1–7 for the reason, a
// comment, Enter), j/k or the arrow keys next/previous, ? the list of keys.
// Bulk actions apply one decision to every fit the filter selects. Hydrated with client:only="react"
// (the plot needs the browser); the page renders the queue as plain links without JavaScript.
import { QueryClientProvider } from '@tanstack/react-query';
import { useCallback, useEffect, useMemo, useRef, useState, type SubmitEvent } from 'react';
import { ApiError } from '../../browser/api';
import { useBulkDecide, useDecide, useReviewQueue, useStarSheet } from '../../browser/review';
import { getQueryClient } from '../../browser/query-client';
import { REVIEW_REASONS, type ReviewFilter, type ReviewReason } from '../../contracts/review-reasons';
import type { QueueItem } from '../../contracts/review';
import { formatDate } from '../ui/formatDate';
import ImageValues from '../ui/review/ImageValues';
import StarSedPlot from './StarSedPlot';

interface Props {
  campaignId: string;
  actorId: string;
  canDecide: boolean;
  /** May set values aside (the campaign's analysts, admins): offered beside a value an image gave the fit. */
  canSetAside?: boolean;
  fourEyes: boolean;
  initialFilter?: ReviewFilter;
}

export default function ReviewDesk(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Desk {...props} />
    </QueryClientProvider>
  );
}

const num = (v: number | null | undefined, digits = 0) => (v === null || v === undefined ? '—' : v.toFixed(digits));
const sig = (v: number | null | undefined, digits = 3) => (v === null || v === undefined ? '—' : v.toPrecision(digits));

function isTyping(target: EventTarget | null): boolean {
  if (!(target instanceof HTMLElement)) return false;
  // Radio buttons and checkboxes take no text: the desk's keys still work while one has focus.
  if (target instanceof HTMLInputElement && (target.type === 'radio' || target.type === 'checkbox')) return false;
  return target.isContentEditable || ['INPUT', 'TEXTAREA', 'SELECT'].includes(target.tagName);
}

function Desk({ campaignId, actorId, canDecide, canSetAside = false, fourEyes, initialFilter = {} }: Props) {
  const [filter, setFilter] = useState<ReviewFilter>(initialFilter);
  const queue = useReviewQueue(campaignId, filter);
  const items = useMemo(() => queue.data?.pages.flatMap((p) => p.items) ?? [], [queue.data]);
  const total = queue.data?.pages[0]?.total ?? 0;
  const [selectedFitId, setSelectedFitId] = useState<number | null>(null);
  const index = Math.max(0, items.findIndex((i) => i.fitResultId === selectedFitId));
  const current: QueueItem | null = items[index] ?? null;
  const sheet = useStarSheet(campaignId, current?.starId ?? null);
  const decide = useDecide();
  const [mode, setMode] = useState<'browse' | 'flag'>('browse');
  const [reason, setReason] = useState<ReviewReason | null>(null);
  const [comment, setComment] = useState('');
  const [message, setMessage] = useState<{ kind: 'ok' | 'error'; text: string } | null>(null);
  const [help, setHelp] = useState(false);
  const listRef = useRef<HTMLUListElement>(null);
  const reasonRef = useRef<HTMLFieldSetElement>(null);
  const commentRef = useRef<HTMLTextAreaElement>(null);

  const ownBatch = !!current && fourEyes && current.batchStartedById === actorId;

  useEffect(() => {
    if (items.length && (selectedFitId === null || !items.some((i) => i.fitResultId === selectedFitId))) setSelectedFitId(items[Math.min(index, items.length - 1)].fitResultId);
  }, [items, selectedFitId, index]);

  useEffect(() => {
    listRef.current?.querySelector('[aria-selected="true"]')?.scrollIntoView({ block: 'nearest' });
  }, [selectedFitId]);

  const move = useCallback(
    (step: number) => {
      if (!items.length) return;
      const next = Math.min(items.length - 1, Math.max(0, index + step));
      setSelectedFitId(items[next].fitResultId);
      setMode('browse');
      if (step > 0 && next === items.length - 1 && queue.hasNextPage && !queue.isFetchingNextPage) void queue.fetchNextPage();
    },
    [items, index, queue],
  );

  const submit = useCallback(
    (decision: 'accepted' | 'flagged') => {
      if (!current || !canDecide || decide.isPending) return;
      if (decision === 'flagged' && !reason) {
        setMessage({ kind: 'error', text: 'Choose a reason (keys 1–7) before flagging.' });
        return;
      }
      const after = items[index + 1] ?? items[index - 1] ?? null;
      const who = current.starKey;
      decide.mutate(
        { fitId: current.fitResultId, decision, reason: decision === 'flagged' ? reason : null, comment: comment.trim() },
        {
          onSuccess: () => {
            setMessage({ kind: 'ok', text: decision === 'accepted' ? `Accepted ${who}.` : `Flagged ${who}: ${REVIEW_REASONS.find((r) => r.code === reason)?.label ?? reason}.` });
            setMode('browse');
            setReason(null);
            setComment('');
            setSelectedFitId(after?.fitResultId ?? null);
          },
          onError: (err) => setMessage({ kind: 'error', text: err instanceof ApiError ? err.message : String(err) }),
        },
      );
    },
    [current, canDecide, decide, reason, comment, items, index],
  );

  useEffect(() => {
    function onKey(e: KeyboardEvent) {
      if (e.ctrlKey || e.metaKey || e.altKey) return;
      if (e.key === 'Escape') {
        setMode('browse');
        setHelp(false);
        return;
      }
      if (mode === 'flag') {
        const n = Number(e.key);
        // A digit chooses the reason only outside the comment; then the comment takes the focus, so
        // what is typed next (digits too) goes into the comment and cannot re-choose the reason.
        const inText = e.target instanceof HTMLTextAreaElement || (e.target instanceof HTMLInputElement && e.target.type === 'text');
        if (!inText && !isTyping(e.target) && Number.isInteger(n) && n >= 1 && n <= REVIEW_REASONS.length) {
          e.preventDefault();
          setReason(REVIEW_REASONS[n - 1].code);
          commentRef.current?.focus();
          return;
        }
        const inComment = e.target instanceof HTMLTextAreaElement;
        if (e.key === 'Enter' && !e.shiftKey && (inComment || !isTyping(e.target))) {
          e.preventDefault();
          submit('flagged');
        }
        return;
      }
      if (isTyping(e.target)) return;
      switch (e.key) {
        case 'j':
        case 'ArrowDown':
          e.preventDefault();
          move(1);
          break;
        case 'k':
        case 'ArrowUp':
          e.preventDefault();
          move(-1);
          break;
        case 'a':
          if (!canDecide) return;
          e.preventDefault();
          if (ownBatch) setMessage({ kind: 'error', text: 'Four-eyes rule: you started this batch, so someone else must accept this fit. You may flag it.' });
          else submit('accepted');
          break;
        case 'f':
          if (!canDecide || !current) return;
          e.preventDefault();
          setMode('flag');
          setMessage(null);
          break;
        case '?':
          e.preventDefault();
          setHelp((h) => !h);
          break;
      }
    }
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [mode, move, submit, canDecide, ownBatch, current]);

  useEffect(() => {
    if (mode === 'flag') reasonRef.current?.querySelector('input')?.focus();
  }, [mode]);

  return (
    <div className="grid lg:grid-cols-[21rem_1fr] gap-6 items-start min-w-0" data-testid="review-desk">
      <div className="flex flex-col gap-4 min-w-0 order-2 lg:order-none">
        <FilterForm filter={filter} onApply={(f) => { setFilter(f); setSelectedFitId(null); }} />
        <section className="card overflow-hidden" aria-labelledby="queue-heading">
          <h2 id="queue-heading" className="text-lg px-4 pt-4 pb-2">
            Waiting for review <span className="num text-base text-ink-500" data-testid="queue-total">({total})</span>
          </h2>
          {queue.isError && <p className="notice notice-error m-3">{(queue.error as Error).message}</p>}
          {queue.isPending ? (
            <p className="px-4 pb-4 text-sm text-ink-500">Loading the queue…</p>
          ) : items.length === 0 ? (
            <p className="px-4 pb-4 text-sm text-ink-600">Nothing waits for review with this filter.</p>
          ) : (
            <ul ref={listRef} role="listbox" aria-label="Fits waiting for review" className="max-h-[28rem] overflow-y-auto text-sm" data-testid="queue-list">
              {items.map((it) => {
                const selected = it.fitResultId === current?.fitResultId;
                return (
                  <li
                    key={it.fitResultId}
                    role="option"
                    aria-selected={selected}
                    data-star={it.starKey}
                    onClick={() => { setSelectedFitId(it.fitResultId); setMode('browse'); }}
                    className={`px-4 py-2 border-t border-rule cursor-pointer flex items-baseline gap-2 ${selected ? 'bg-ember-100' : 'hover:bg-paper-deep'}`}
                  >
                    <span className="font-medium truncate">{it.starKey}</span>
                    <span className="num ml-auto text-ink-600 whitespace-nowrap">{it.teffK !== null ? `${num(it.teffK)} K` : it.teffLowerK !== null ? `> ${num(it.teffLowerK)} K` : '—'}</span>
                    <span className="num text-ink-500 w-24 text-right whitespace-nowrap" title="reduced χ²">χ²<sub>ν</sub> {num(it.chi2Red, 2)}</span>
                    {it.returned && <span className="role-chip bg-paper-deep text-ink-700" title={it.returned.text}>back</span>}
                    {it.flags.length > 0 && <span className="role-chip bg-alarm-100 text-alarm-700" title={it.flags.join(' ')}>{it.flags.length}</span>}
                  </li>
                );
              })}
            </ul>
          )}
          {queue.hasNextPage && (
            <div className="p-3 border-t border-rule">
              <button type="button" className="btn btn-quiet w-full justify-center" onClick={() => void queue.fetchNextPage()} disabled={queue.isFetchingNextPage}>
                {queue.isFetchingNextPage ? 'Loading…' : 'Load more'}
              </button>
            </div>
          )}
        </section>
        {canDecide && <BulkForm campaignId={campaignId} filter={filter} total={total} fourEyes={fourEyes} />}
      </div>

      {/* On a phone the fit under review comes first, the queue below it. */}
      <section className="card p-5 min-h-[24rem] min-w-0 order-1 lg:order-none" aria-labelledby="current-heading" data-testid="review-card">
        <div role="status" aria-live="polite" data-testid="desk-status">
          {message && <p className={`notice ${message.kind === 'ok' ? 'notice-ok' : 'notice-error'} mb-3`}>{message.text}</p>}
        </div>
        {!current ? (
          <p className="text-ink-600">Choose a star from the queue.</p>
        ) : (
          <>
            <header className="flex flex-wrap items-baseline gap-3 mb-3">
              <h2 id="current-heading" className="text-2xl" data-testid="current-star">{current.starKey}</h2>
              <a href={`/campaigns/${campaignId}/stars/${current.starId}`} className="text-sm">Open the star sheet</a>
              <span className="text-sm text-ink-500 ml-auto">
                batch <span className="num">{current.batchId}</span> · fitted {formatDate(current.createdAt)}
              </span>
            </header>
            {current.returned && <p className="notice notice-info mb-3 text-sm" data-testid="returned-note">{current.returned.text}</p>}
            <dl className="grid grid-cols-2 md:grid-cols-4 gap-x-4 gap-y-2 text-sm mb-4">
              <Value label={sheet.data?.fit && !sheet.data.fit.model ? 'Teff (Planck only: colour temperature)' : 'Teff'} value={current.teffK !== null ? `${num(current.teffK)} ± ${num(current.teffErrK)} K` : current.teffLowerK !== null ? `above ${num(current.teffLowerK)} K` : '—'} />
              <Value label="Tbb (Planck fit)" value={current.tbbK !== null ? `${num(current.tbbK)} K` : '—'} />
              <Value label="θ (angular diameter)" value={sheet.data?.fit ? `${sig(sheet.data.fit.thetaMas)} ± ${sig(sheet.data.fit.thetaErrMas, 2)} mas` : '…'} />
              <Value label="radius" value={sheet.data?.fit ? `${sig(sheet.data.fit.radiusRsun)} ± ${sig(sheet.data.fit.radiusErrRsun, 2)} R☉` : '…'} />
              <Value label="reduced χ²" value={num(current.chi2Red, 2)} />
            </dl>
            {sheet.data?.fit && sheet.data.fit.flags.length > 0 && (
              <ul className="text-sm mb-4 flex flex-col gap-1" data-testid="current-flags">
                {sheet.data.fit.flags.map((f) => (
                  <li key={f.code}>
                    <code className="text-alarm-700">{f.code}</code> — {f.explanation}
                  </li>
                ))}
              </ul>
            )}
            {sheet.isError && <p className="notice notice-error">{(sheet.error as Error).message}</p>}
            {sheet.data && <StarSedPlot key={current.fitResultId} starKey={current.starKey} bands={sheet.data.bands} curve={sheet.data.curve} compact />}
            {sheet.data && <ImageValues campaignId={campaignId} sheet={sheet.data} canSetAside={canSetAside} />}

            {canDecide ? (
              mode === 'flag' ? (
                <form
                  className="mt-4 border-t border-rule pt-4 flex flex-col gap-3"
                  onSubmit={(e: SubmitEvent) => { e.preventDefault(); submit('flagged'); }}
                  data-testid="flag-form"
                >
                  <fieldset ref={reasonRef} className="flex flex-col gap-1">
                    <legend className="field-label">Why flag this fit? (keys 1–{REVIEW_REASONS.length})</legend>
                    {REVIEW_REASONS.map((r, i) => (
                      <label key={r.code} className="flex items-center gap-2 text-sm">
                        <input type="radio" name="reason" value={r.code} checked={reason === r.code} onChange={() => setReason(r.code)} />
                        <kbd className="text-xs text-ink-500">{i + 1}</kbd> {r.label}
                      </label>
                    ))}
                  </fieldset>
                  <div>
                    <label htmlFor="flag-comment" className="field-label">Comment (Enter sends, Shift+Enter for a new line)</label>
                    <textarea id="flag-comment" ref={commentRef} className="field-input" rows={2} maxLength={2000} value={comment} onChange={(e) => setComment(e.target.value)} data-testid="flag-comment" />
                  </div>
                  <div className="flex gap-2">
                    <button type="submit" className="btn btn-primary" disabled={decide.isPending}>Flag this fit</button>
                    <button type="button" className="btn btn-quiet" onClick={() => setMode('browse')}>Cancel (Esc)</button>
                  </div>
                </form>
              ) : (
                <div className="mt-4 border-t border-rule pt-4 flex flex-wrap gap-2 items-center">
                  <button type="button" className="btn btn-primary" disabled={decide.isPending || ownBatch} onClick={() => submit('accepted')}>
                    Accept <kbd className="text-xs">a</kbd>
                  </button>
                  <button type="button" className="btn btn-quiet" onClick={() => setMode('flag')}>
                    Flag <kbd className="text-xs">f</kbd>
                  </button>
                  <button type="button" className="btn btn-quiet" onClick={() => move(-1)} aria-label="Previous fit">
                    ← <kbd className="text-xs">k</kbd>
                  </button>
                  <button type="button" className="btn btn-quiet" onClick={() => move(1)} aria-label="Next fit">
                    <kbd className="text-xs">j</kbd> →
                  </button>
                  <button type="button" className="btn btn-quiet ml-auto" onClick={() => setHelp(true)}>Keys <kbd className="text-xs">?</kbd></button>
                  {ownBatch && <p className="w-full text-sm text-ink-600">You started the batch of this fit: under the four-eyes rule someone else must accept it. You may flag it.</p>}
                </div>
              )
            ) : (
              <p className="mt-4 text-sm text-ink-600">You can read the queue; accepting and flagging is for the campaign’s reviewers.</p>
            )}
          </>
        )}
      </section>

      {help && (
        <div role="dialog" aria-modal="true" aria-labelledby="keys-heading" className="fixed inset-0 bg-ink-950/40 flex items-center justify-center p-4" onClick={() => setHelp(false)}>
          <div className="card p-6 max-w-sm w-full" onClick={(e) => e.stopPropagation()}>
            <h2 id="keys-heading" className="text-xl mb-3">Keys of the review desk</h2>
            <dl className="grid grid-cols-[5rem_1fr] gap-y-1 text-sm">
              <dt><kbd>a</kbd></dt><dd>accept the fit</dd>
              <dt><kbd>f</kbd></dt><dd>flag it: choose a reason with 1–{REVIEW_REASONS.length}, add a comment, Enter</dd>
              <dt><kbd>j</kbd> <kbd>↓</kbd></dt><dd>next star</dd>
              <dt><kbd>k</kbd> <kbd>↑</kbd></dt><dd>previous star</dd>
              <dt><kbd>Esc</kbd></dt><dd>cancel, close</dd>
              <dt><kbd>?</kbd></dt><dd>this list</dd>
            </dl>
            <button type="button" className="btn btn-quiet mt-4" onClick={() => setHelp(false)}>Close</button>
          </div>
        </div>
      )}
    </div>
  );
}

function Value({ label, value }: { label: string; value: string }) {
  return (
    <div>
      <dt className="text-ink-500 text-xs">{label}</dt>
      <dd className="num">{value}</dd>
    </div>
  );
}

function parseNumber(v: string): number | undefined {
  const t = v.trim();
  if (t === '') return undefined;
  const n = Number(t);
  return Number.isFinite(n) ? n : undefined;
}

function FilterForm({ filter, onApply }: { filter: ReviewFilter; onApply: (f: ReviewFilter) => void }) {
  const [chi2, setChi2] = useState(filter.chi2RedBelow?.toString() ?? '');
  const [noFlags, setNoFlags] = useState(!!filter.noFlags);
  const [tMin, setTMin] = useState(filter.teffMinK?.toString() ?? '');
  const [tMax, setTMax] = useState(filter.teffMaxK?.toString() ?? '');
  return (
    <form
      className="card p-4 grid grid-cols-2 gap-3 text-sm"
      aria-label="Filter the queue"
      onSubmit={(e) => {
        e.preventDefault();
        onApply({ chi2RedBelow: parseNumber(chi2), noFlags: noFlags || undefined, teffMinK: parseNumber(tMin), teffMaxK: parseNumber(tMax) });
      }}
    >
      <div className="col-span-2">
        <label htmlFor="f-chi2" className="field-label">Reduced χ² below</label>
        <input id="f-chi2" className="field-input num" inputMode="decimal" value={chi2} onChange={(e) => setChi2(e.target.value)} placeholder="e.g. 3" />
      </div>
      <div>
        <label htmlFor="f-tmin" className="field-label">Teff from (K)</label>
        <input id="f-tmin" className="field-input num" inputMode="numeric" value={tMin} onChange={(e) => setTMin(e.target.value)} />
      </div>
      <div>
        <label htmlFor="f-tmax" className="field-label">to (K)</label>
        <input id="f-tmax" className="field-input num" inputMode="numeric" value={tMax} onChange={(e) => setTMax(e.target.value)} />
      </div>
      <label className="col-span-2 flex items-center gap-2">
        <input type="checkbox" checked={noFlags} onChange={(e) => setNoFlags(e.target.checked)} /> only fits without flags
      </label>
      <button type="submit" className="btn btn-quiet col-span-2 justify-center">Apply filter</button>
    </form>
  );
}

function BulkForm({ campaignId, filter, total, fourEyes }: { campaignId: string; filter: ReviewFilter; total: number; fourEyes: boolean }) {
  const bulk = useBulkDecide(campaignId);
  const [decision, setDecision] = useState<'accepted' | 'flagged'>('accepted');
  const [reason, setReason] = useState<ReviewReason>('poor_fit');
  const [comment, setComment] = useState('');
  const [confirming, setConfirming] = useState(false);
  const [result, setResult] = useState<{ kind: 'ok' | 'error'; text: string } | null>(null);
  const hasFilter = filter.chi2RedBelow !== undefined || !!filter.noFlags || filter.teffMinK !== undefined || filter.teffMaxK !== undefined || !!filter.batchId;
  return (
    <section className="card p-4 text-sm flex flex-col gap-3" aria-labelledby="bulk-heading">
      <h2 id="bulk-heading" className="text-lg">All fits of this filter</h2>
      {!hasFilter ? (
        <p className="text-ink-600">Apply a filter first (reduced χ² below, no flags or a Teff range); a bulk decision never applies to the whole queue by accident.</p>
      ) : (
        <>
          <div className="flex gap-4">
            <label className="flex items-center gap-1"><input type="radio" name="bulk-decision" checked={decision === 'accepted'} onChange={() => setDecision('accepted')} /> accept</label>
            <label className="flex items-center gap-1"><input type="radio" name="bulk-decision" checked={decision === 'flagged'} onChange={() => setDecision('flagged')} /> flag</label>
          </div>
          {decision === 'flagged' && (
            <select className="field-input" aria-label="Reason" value={reason} onChange={(e) => setReason(e.target.value as ReviewReason)}>
              {REVIEW_REASONS.map((r) => <option key={r.code} value={r.code}>{r.label}</option>)}
            </select>
          )}
          <input className="field-input" aria-label="Comment for every decision" placeholder="comment (optional)" value={comment} onChange={(e) => setComment(e.target.value)} />
          {confirming ? (
            <div className="flex gap-2 items-center flex-wrap">
              <span>{decision === 'accepted' ? 'Accept' : 'Flag'} {total} fit{total === 1 ? '' : 's'}?</span>
              <button
                type="button"
                className="btn btn-primary"
                disabled={bulk.isPending}
                onClick={() =>
                  bulk.mutate(
                    { filter, decision, reason: decision === 'flagged' ? reason : null, comment },
                    {
                      onSuccess: (r) => {
                        setConfirming(false);
                        setResult({ kind: 'ok', text: `${r.decided} fit${r.decided === 1 ? '' : 's'} ${decision}.${r.skippedFourEyes ? ` ${r.skippedFourEyes} left for another reviewer (you started their batch; four-eyes rule).` : ''}` });
                      },
                      onError: (err) => setResult({ kind: 'error', text: err instanceof Error ? err.message : String(err) }),
                    },
                  )
                }
              >
                Confirm
              </button>
              <button type="button" className="btn btn-quiet" onClick={() => setConfirming(false)}>Cancel</button>
            </div>
          ) : (
            <button type="button" className="btn btn-quiet justify-center" disabled={total === 0} onClick={() => { setConfirming(true); setResult(null); }}>
              {decision === 'accepted' ? 'Accept' : 'Flag'} all {total} matching…
            </button>
          )}
          {fourEyes && decision === 'accepted' && <p className="text-xs text-ink-500">Fits of batches you started are left out (four-eyes rule).</p>}
        </>
      )}
      {result && <p role="status" className={`notice ${result.kind === 'ok' ? 'notice-ok' : 'notice-error'}`}>{result.text}</p>}
    </section>
  );
}
