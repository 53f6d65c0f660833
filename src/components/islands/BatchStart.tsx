// The analyst's form to start a batch with its fit options. Posts JSON to
// POST /api/campaigns/:id/batches and opens the new batch's page; without JavaScript the same
// form posts to the page, which starts the batch the same way.
import { QueryClientProvider } from '@tanstack/react-query';
import { useState, type SubmitEvent } from 'react';
import { ApiError } from '../../browser/api';
import { starKeysFromText, useStartBatch, type StartBatchBody } from '../../browser/batches';
import { getQueryClient } from '../../browser/query-client';

interface Props {
  campaignId: string;
  starCount: number;
  /** Band keys of the band library, in their documented order. */
  bandKeys: string[];
  serverError?: { field?: string; message: string } | null;
}

export default function BatchStart(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <StartForm {...props} />
    </QueryClientProvider>
  );
}

const LAWS = [
  { key: 'f99', label: 'Fitzpatrick (1999)' },
  { key: 'ccm89', label: 'Cardelli, Clayton & Mathis (1989)' },
  { key: 'od94', label: 'O’Donnell (1994)' },
];

function StartForm({ campaignId, starCount, bandKeys, serverError }: Props) {
  const start = useStartBatch(campaignId);
  const [avMode, setAvMode] = useState<'fixed' | 'fitted'>('fixed');
  const error = start.error instanceof ApiError ? { field: start.error.field, message: start.error.message } : start.error ? { message: start.error.message } : serverError ?? null;
  const fieldError = (name: string) => (error?.field === `options.${name}` || error?.field?.startsWith(`options.${name}.`) ? error.message : null);

  async function onSubmit(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = new FormData(e.currentTarget);
    const num = (name: string) => {
      const v = String(form.get(name) ?? '').trim();
      return v === '' ? Number.NaN : Number(v);
    };
    const body: StartBatchBody = {
      options: {
        law: String(form.get('law')),
        rv: num('rv'),
        avMode,
        avMag: avMode === 'fixed' ? num('avMag') : 0,
        avMaxMag: avMode === 'fitted' ? num('avMaxMag') : 10,
        floorFraction: num('floorPercent') / 100,
        excludeBands: form.getAll('excludeBands').map(String),
        clip: form.get('clip') === 'on',
        reject: form.get('noReject') !== 'on',
        includeLongBands: form.get('includeLongBands') === 'on',
        planckOnly: form.get('planckOnly') === 'on',
        lumClass: (String(form.get('lumClass') ?? 'auto') as 'auto' | 'dwarf' | 'giant'),
      },
      starKeys: starKeysFromText(String(form.get('starKeys') ?? '')),
    };
    try {
      const batch = await start.mutateAsync(body);
      window.location.assign(`/campaigns/${encodeURIComponent(campaignId)}/batches/${encodeURIComponent(batch.id)}`);
    } catch {
      // shown from start.error
    }
  }

  return (
    <form method="post" onSubmit={onSubmit} className="card p-5 flex flex-col gap-4" noValidate aria-labelledby="start-heading">
      <h2 id="start-heading" className="text-xl">
        Start a batch
      </h2>
      <p className="text-sm text-ink-600 -mt-2">
        Fits all <span className="num">{starCount.toLocaleString('en')}</span> stars of the campaign (or the ones you list below) with these options. Every
        result keeps them, with the band library and software versions.
      </p>
      {error && !error.field?.startsWith('options.') && error.field !== 'starKeys' && (
        <p className="notice notice-error" role="alert">
          {error.message}
        </p>
      )}
      <div>
        <label className="field-label" htmlFor="batch-law">
          Extinction law
        </label>
        <select id="batch-law" name="law" className="field-input" defaultValue="f99">
          {LAWS.map((l) => (
            <option key={l.key} value={l.key}>
              {l.label}
            </option>
          ))}
        </select>
      </div>
      <div>
        <label className="field-label" htmlFor="batch-rv">
          R<sub>V</sub>
        </label>
        <input id="batch-rv" name="rv" type="number" step="0.01" min="2" max="6" defaultValue="3.1" className="field-input num" aria-invalid={!!fieldError('rv')} />
        {fieldError('rv') && <p className="field-error" role="alert">{fieldError('rv')}</p>}
      </div>
      <fieldset>
        <legend className="field-label">
          A<sub>V</sub>
        </legend>
        <div className="flex gap-4 text-sm mb-2">
          <label className="flex items-center gap-2">
            <input type="radio" name="avMode" value="fixed" checked={avMode === 'fixed'} onChange={() => setAvMode('fixed')} className="accent-ember-600" /> known (fixed)
          </label>
          <label className="flex items-center gap-2">
            <input type="radio" name="avMode" value="fitted" checked={avMode === 'fitted'} onChange={() => setAvMode('fitted')} className="accent-ember-600" /> fitted
          </label>
        </div>
        {avMode === 'fixed' ? (
          <>
            <label className="text-xs text-ink-600" htmlFor="batch-av">
              A<sub>V</sub> in mag for stars without their own value
            </label>
            <input id="batch-av" name="avMag" type="number" step="0.01" min="0" max="20" defaultValue="0" className="field-input num" aria-invalid={!!fieldError('avMag')} />
            {fieldError('avMag') && <p className="field-error" role="alert">{fieldError('avMag')}</p>}
          </>
        ) : (
          <>
            <label className="text-xs text-ink-600" htmlFor="batch-avmax">
              Largest A<sub>V</sub> allowed, mag (the fit searches 0 to this)
            </label>
            <input id="batch-avmax" name="avMaxMag" type="number" step="0.1" min="0.1" max="20" defaultValue="10" className="field-input num" aria-invalid={!!fieldError('avMaxMag')} />
            {fieldError('avMaxMag') && <p className="field-error" role="alert">{fieldError('avMaxMag')}</p>}
          </>
        )}
      </fieldset>
      <div>
        <label className="field-label" htmlFor="batch-floor">
          Error floor, % of each band’s flux
        </label>
        <input id="batch-floor" name="floorPercent" type="number" step="0.1" min="0" max="50" defaultValue="2" className="field-input num" aria-invalid={!!fieldError('floorFraction')} />
        {fieldError('floorFraction') && <p className="field-error" role="alert">{fieldError('floorFraction')}</p>}
      </div>
      <fieldset>
        <legend className="field-label">Leave these bands out of the fit</legend>
        <div className="grid grid-cols-5 gap-x-2 gap-y-1 text-sm">
          {bandKeys.map((k) => (
            <label key={k} className="flex items-center gap-1.5 num">
              <input type="checkbox" name="excludeBands" value={k} className="accent-ember-600" /> {k}
            </label>
          ))}
        </div>
        {fieldError('excludeBands') && <p className="field-error" role="alert">{fieldError('excludeBands')}</p>}
      </fieldset>
      <label className="flex items-start gap-2 text-sm">
        <input type="checkbox" name="noReject" className="mt-1 accent-ember-600" />
        <span>Keep every band. By default one or two bands that disagree with the others beyond their errors (a test on the calibrated fit, at most 0.1 % of clean stars lose a band by chance) are left out, each with its reason on the star sheet.</span>
      </label>
      <label className="flex items-start gap-2 text-sm">
        <input type="checkbox" name="clip" className="mt-1 accent-ember-600" />
        <span>Only with every band kept or Planck only: drop the worst band (at most two) when it lies more than 3σ off, and fit again</span>
      </label>
      <label className="flex items-start gap-2 text-sm">
        <input type="checkbox" name="includeLongBands" className="mt-1 accent-ember-600" />
        <span>Fit bands beyond ~5 µm too (by default they only show infrared excess)</span>
      </label>
      <label className="flex items-start gap-2 text-sm">
        <input type="checkbox" name="planckOnly" className="mt-1 accent-ember-600" />
        <span>Planck only: fit a blackbody, no photosphere model (Teff is then a colour temperature, see About). By default Teff comes from the calibrated Kiln photosphere, with the Planck fit beside it.</span>
      </label>
      <div>
        <label className="field-label" htmlFor="batch-lum-class">
          Luminosity class <span className="font-normal text-ink-500">(for stars without a lum_class column)</span>
        </label>
        <select id="batch-lum-class" name="lumClass" className="field-input" defaultValue="auto">
          <option value="auto">from the parallax radius (dwarf without a parallax)</option>
          <option value="dwarf">dwarf</option>
          <option value="giant">giant</option>
        </select>
      </div>
      <div>
        <label className="field-label" htmlFor="batch-stars">
          Only these stars <span className="font-normal text-ink-500">(optional; one star id per line)</span>
        </label>
        <textarea id="batch-stars" name="starKeys" rows={3} className="field-input num" placeholder="empty: every star" aria-invalid={error?.field === 'starKeys'} />
        {error?.field === 'starKeys' && (
          <p className="field-error" role="alert">
            {error.message}
          </p>
        )}
      </div>
      <button type="submit" className="btn btn-primary justify-center" disabled={start.isPending || starCount === 0}>
        {start.isPending ? 'Starting…' : 'Start the batch'}
      </button>
    </form>
  );
}
