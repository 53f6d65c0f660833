// The zero-point of a band: the admin's form to set a new value or source, with the reason that
// every band library change needs. Saving makes a new band library version; fits that used the old
// numbers are then marked stale (never changed). Also exports the zero-point fields for the
// new-band form.
import { QueryClientProvider } from '@tanstack/react-query';
import { useState, type SubmitEvent } from 'react';
import { ApiError } from '../../browser/api';
import { useUpdateZeroPoint, type ZeroPointBody } from '../../browser/bands';
import { getQueryClient } from '../../browser/query-client';

export type ZeroPointKind = 'none' | 'flambda' | 'fnu';

type ZeroPointValue = ZeroPointBody;

/** The zero-point inputs (names zp*), prefilled from a current value. */
export function ZeroPointFields({ current, magnitudeSystem, allowNone, error }: { current: ZeroPointValue | null; magnitudeSystem: 'vega' | 'ab'; allowNone: boolean; error?: { field?: string; message: string } | null }) {
  const initial: ZeroPointKind = current?.fLambdaCgs !== undefined ? 'flambda' : current?.fnuJy !== undefined ? 'fnu' : allowNone ? 'none' : magnitudeSystem === 'ab' ? 'fnu' : 'flambda';
  const [kind, setKind] = useState<ZeroPointKind>(initial);
  const fieldError = error?.field?.startsWith('zeroPoint') || error?.field?.startsWith('band.zeroPoint') ? error.message : null;
  const raw = kind === 'flambda' ? current?.fLambdaCgs : kind === 'fnu' ? (current?.fnuJy ?? (magnitudeSystem === 'ab' ? 3631 : undefined)) : undefined;
  // Stored values can carry binary noise from unit conversions (4.2829999999999996e-11): show 10 digits.
  const value = raw === undefined ? undefined : Number(raw.toPrecision(10));
  return (
    <fieldset className="flex flex-col gap-3">
      <legend className="field-label">Zero-point (flux of magnitude 0)</legend>
      <div className="flex flex-wrap gap-4 text-sm">
        {allowNone && (
          <label className="flex items-center gap-1.5">
            <input type="radio" name="zpKind" value="none" checked={kind === 'none'} onChange={() => setKind('none')} /> none yet (flux input only)
          </label>
        )}
        <label className="flex items-center gap-1.5">
          <input type="radio" name="zpKind" value="flambda" checked={kind === 'flambda'} onChange={() => setKind('flambda')} /> F<sub>λ,0</sub> in erg s⁻¹ cm⁻² Å⁻¹
        </label>
        <label className="flex items-center gap-1.5">
          <input type="radio" name="zpKind" value="fnu" checked={kind === 'fnu'} onChange={() => setKind('fnu')} /> F<sub>ν,0</sub> in Jy
        </label>
      </div>
      {kind !== 'none' && (
        <>
          <div className="grid grid-cols-2 gap-3">
            <div>
              <label className="field-label" htmlFor="zpValue">
                {kind === 'flambda' ? 'F_λ,0 (erg s⁻¹ cm⁻² Å⁻¹)' : 'F_ν,0 (Jy)'}
              </label>
              <input id="zpValue" name="zpValue" className="field-input num" inputMode="decimal" defaultValue={value ?? ''} key={kind} aria-invalid={!!fieldError} />
            </div>
            <div>
              <label className="field-label" htmlFor="zpRelErrPercent">
                Uncertainty (%)
              </label>
              <input id="zpRelErrPercent" name="zpRelErrPercent" className="field-input num" inputMode="decimal" defaultValue={current ? String(Math.round(current.relErr * 1e6) / 1e4) : '0'} />
            </div>
            <div>
              <label className="field-label" htmlFor="zpOffset">
                Catalogue offset (mag, added to catalogue magnitudes)
              </label>
              <input id="zpOffset" name="zpOffset" className="field-input num" inputMode="decimal" defaultValue={current?.catalogueOffsetMag ?? ''} />
            </div>
            {kind === 'fnu' && magnitudeSystem === 'vega' && (
              <div>
                <label className="field-label" htmlFor="zpIso">
                  Isophotal wavelength (Å, for F<sub>ν</sub> ∝ ν⁻² calibrations; empty if band-mean)
                </label>
                <input id="zpIso" name="zpIso" className="field-input num" inputMode="decimal" defaultValue={current?.isophotalWavelengthAngstrom ?? ''} />
              </div>
            )}
          </div>
          <div>
            <label className="field-label" htmlFor="zpSource">
              Source of the zero-point
            </label>
            <input id="zpSource" name="zpSource" className="field-input" defaultValue={current?.source ?? ''} placeholder="Publication, table, or your team's calibration note" />
          </div>
        </>
      )}
      {fieldError && <p className="field-error" role="alert">{fieldError}</p>}
    </fieldset>
  );
}

/** Reads the zp* fields; NaN where a number could not be read (the server names the field). */
export function readZeroPoint(form: FormData): ZeroPointBody | null {
  const kind = String(form.get('zpKind') ?? 'none');
  if (kind === 'none') return null;
  const num = (name: string) => {
    const v = String(form.get(name) ?? '').trim();
    return v === '' ? undefined : Number(v);
  };
  const value = num('zpValue') ?? Number.NaN;
  const zp: ZeroPointBody = { relErr: (num('zpRelErrPercent') ?? 0) / 100, source: String(form.get('zpSource') ?? '') };
  if (kind === 'flambda') zp.fLambdaCgs = value;
  else zp.fnuJy = value;
  const offset = num('zpOffset');
  if (offset !== undefined) zp.catalogueOffsetMag = offset;
  const iso = num('zpIso');
  if (iso !== undefined) zp.isophotalWavelengthAngstrom = iso;
  return zp;
}

interface Props {
  bandKey: string;
  magnitudeSystem: 'vega' | 'ab';
  current: ZeroPointValue | null;
}

export default function BandZeroPointForm(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <EditForm {...props} />
    </QueryClientProvider>
  );
}

function EditForm({ bandKey, magnitudeSystem, current }: Props) {
  const save = useUpdateZeroPoint(bandKey);
  const [localError, setLocalError] = useState<string | null>(null);
  const error = save.error instanceof ApiError ? { field: save.error.field, message: save.error.message } : save.error ? { message: save.error.message } : null;

  async function onSubmit(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    setLocalError(null);
    const form = new FormData(e.currentTarget);
    const zeroPoint = readZeroPoint(form);
    if (!zeroPoint) {
      setLocalError('Choose F_λ,0 or F_ν,0 and give its value and source.');
      return;
    }
    try {
      const saved = await save.mutateAsync({ zeroPoint, reason: String(form.get('reason') ?? '') });
      window.location.assign(`/admin/bands/${encodeURIComponent(bandKey)}?saved=${encodeURIComponent(saved.version.label)}`);
    } catch {
      // shown from save.error
    }
  }

  return (
    <form onSubmit={onSubmit} className="flex flex-col gap-4" noValidate data-testid="zero-point-form">
      <ZeroPointFields current={current} magnitudeSystem={magnitudeSystem} allowNone={false} error={error} />
      <div>
        <label className="field-label" htmlFor="reason">
          Reason for the change (required, kept with the new version)
        </label>
        <textarea id="reason" name="reason" className="field-input" rows={2} aria-invalid={error?.field === 'reason'} />
        {error?.field === 'reason' && (
          <p className="field-error" role="alert">
            {error.message}
          </p>
        )}
      </div>
      {(localError || (error && !error.field?.startsWith('zeroPoint') && error.field !== 'reason')) && (
        <p className="notice notice-error" role="alert">
          {localError ?? error?.message}
        </p>
      )}
      <p className="text-xs text-ink-600">Saving makes a new band library version. Results already made keep the version they were made with; those that used this band are marked stale.</p>
      <div>
        <button type="submit" className="btn btn-primary" disabled={save.isPending}>
          {save.isPending ? 'Saving…' : 'Save as a new version'}
        </button>
      </div>
    </form>
  );
}
