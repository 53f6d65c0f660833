// Adding a band: choose a curve file (ECSV, CSV or two-column text), say its wavelength unit and
// whether the response is per photon or energy-type, and see the parsed curve with its pivot
// wavelength before anything is saved. Then describe the band (key, system, zero-point, citation)
// and save it with a reason — a new band library version. Hydrated with client:only="react".
import { QueryClientProvider } from '@tanstack/react-query';
import { useRef, useState, type SubmitEvent } from 'react';
import { ApiError } from '../../browser/api';
import { useCreateBand, usePreviewCurve, type CurveUpload } from '../../browser/bands';
import { getQueryClient } from '../../browser/query-client';
import BandCurvePlot from './BandCurvePlot';
import { readZeroPoint, ZeroPointFields } from './BandZeroPointForm';

export default function BandUpload() {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Upload />
    </QueryClientProvider>
  );
}

const UNITS = [
  { key: 'angstrom', label: 'Å (ångström)' },
  { key: 'nm', label: 'nm' },
  { key: 'um', label: 'µm (micron)' },
] as const;

function Upload() {
  const preview = usePreviewCurve();
  const create = useCreateBand();
  const [file, setFile] = useState<{ name: string; content: string } | null>(null);
  const [unit, setUnit] = useState<CurveUpload['wavelengthUnit']>('angstrom');
  const [convention, setConvention] = useState<CurveUpload['convention']>('photon');
  const [magnitudeSystem, setMagnitudeSystem] = useState<'vega' | 'ab'>('vega');
  const lastAsked = useRef<string>('');

  function ask(next: { file?: { name: string; content: string } | null; unit?: CurveUpload['wavelengthUnit']; convention?: CurveUpload['convention'] }) {
    const f = next.file === undefined ? file : next.file;
    const body = { wavelengthUnit: next.unit ?? unit, convention: next.convention ?? convention };
    if (!f) return;
    const req: CurveUpload = { fileName: f.name, content: f.content, ...body };
    lastAsked.current = JSON.stringify([f.name, body]);
    preview.mutate(req);
  }

  async function onFile(list: FileList | null) {
    const f = list?.[0];
    if (!f) return;
    const content = await f.text();
    const next = { name: f.name, content };
    setFile(next);
    ask({ file: next });
  }

  const curve = preview.data && !preview.isError ? preview.data : null;
  const previewError = preview.error instanceof ApiError || preview.error ? preview.error.message : null;
  const saveError = create.error instanceof ApiError ? { field: create.error.field, message: create.error.message } : create.error ? { message: create.error.message } : null;
  const fieldError = (name: string) => (saveError?.field === `band.${name}` ? saveError.message : null);

  async function onSave(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    if (!file || !curve) return;
    const form = new FormData(e.currentTarget);
    const s = (name: string) => String(form.get(name) ?? '');
    try {
      const saved = await create.mutateAsync({
        band: {
          key: s('key'),
          label: s('label'),
          system: s('system'),
          magnitudeSystem,
          zeroPoint: readZeroPoint(form),
          citation: s('citation'),
          licence: s('licence'),
        },
        curve: { fileName: file.name, content: file.content, wavelengthUnit: unit, convention },
        reason: s('reason'),
      });
      window.location.assign(`/admin/bands/${encodeURIComponent(saved.band.key)}?saved=${encodeURIComponent(saved.version.label)}`);
    } catch {
      // shown from create.error
    }
  }

  return (
    <div className="grid lg:grid-cols-[1fr_1fr] gap-8 items-start">
      <section className="card p-5 flex flex-col gap-4" aria-labelledby="curve-heading">
        <h2 id="curve-heading" className="text-xl">
          1 · The curve
        </h2>
        <div>
          <label className="field-label" htmlFor="curveFile">
            Curve file (ECSV, CSV with a header, or two columns of numbers)
          </label>
          <input id="curveFile" name="curveFile" type="file" accept=".ecsv,.csv,.txt,.dat,.tsv,text/plain,text/csv" className="text-sm" onChange={(e) => void onFile(e.currentTarget.files)} />
        </div>
        <div className="grid grid-cols-2 gap-4">
          <div>
            <label className="field-label" htmlFor="unit">
              Wavelength unit in the file
            </label>
            <select
              id="unit"
              className="field-input"
              value={unit}
              onChange={(e) => {
                const u = e.currentTarget.value as CurveUpload['wavelengthUnit'];
                setUnit(u);
                ask({ unit: u });
              }}
            >
              {UNITS.map((u) => (
                <option key={u.key} value={u.key}>
                  {u.label}
                </option>
              ))}
            </select>
          </div>
          <fieldset>
            <legend className="field-label">The response is</legend>
            <label className="flex items-center gap-1.5 text-sm">
              <input
                type="radio"
                name="convention"
                value="photon"
                checked={convention === 'photon'}
                onChange={() => {
                  setConvention('photon');
                  ask({ convention: 'photon' });
                }}
              />
              per photon (most modern curves)
            </label>
            <label className="flex items-center gap-1.5 text-sm">
              <input
                type="radio"
                name="convention"
                value="energy"
                checked={convention === 'energy'}
                onChange={() => {
                  setConvention('energy');
                  ask({ convention: 'energy' });
                }}
              />
              energy-type (e.g. Bessell 1990 tables)
            </label>
          </fieldset>
        </div>
        <p className="text-xs text-ink-600">
          The convention decides how the band weights a spectrum: the same table read the wrong way moves broad-band fluxes by several per cent. Nothing is saved until
          you press “Add the band”.
        </p>
        {preview.isPending && <p className="text-sm text-ink-600">Reading the curve…</p>}
        {previewError && (
          <p className="notice notice-error" role="alert" data-testid="curve-error">
            {previewError}
          </p>
        )}
        {curve && (
          <div data-testid="curve-preview" className="flex flex-col gap-2">
            <dl className="grid grid-cols-2 gap-x-4 gap-y-1 text-sm">
              <dt className="text-ink-600">Pivot wavelength</dt>
              <dd className="num" data-testid="preview-pivot">
                {curve.pivotAngstrom.toFixed(1)} Å
              </dd>
              <dt className="text-ink-600">Nodes</dt>
              <dd className="num">{curve.wavelengthAngstrom.length}</dd>
              <dt className="text-ink-600">Range</dt>
              <dd className="num">
                {curve.wavelengthAngstrom[0].toFixed(1)}–{curve.wavelengthAngstrom[curve.wavelengthAngstrom.length - 1].toFixed(1)} Å
              </dd>
              <dt className="text-ink-600">Columns read</dt>
              <dd>
                {curve.wavelengthColumn}, {curve.responseColumn} ({curve.format})
              </dd>
            </dl>
            {curve.notes.map((n) => (
              <p key={n} className="notice notice-info">
                {n}
              </p>
            ))}
            <BandCurvePlot curves={[{ name: curve.fileName, wavelengthAngstrom: curve.wavelengthAngstrom, response: curve.response, pivotAngstrom: curve.pivotAngstrom }]} height={260} />
          </div>
        )}
      </section>

      <form onSubmit={onSave} className="card p-5 flex flex-col gap-4" noValidate aria-labelledby="band-heading">
        <h2 id="band-heading" className="text-xl">
          2 · The band
        </h2>
        <div className="grid grid-cols-2 gap-4">
          <div>
            <label className="field-label" htmlFor="key">
              Key (column name in tables, case-sensitive)
            </label>
            <input id="key" name="key" className="field-input num" placeholder="e.g. Lz" aria-invalid={!!fieldError('key')} />
            {fieldError('key') && <p className="field-error">{fieldError('key')}</p>}
          </div>
          <div>
            <label className="field-label" htmlFor="label">
              Name
            </label>
            <input id="label" name="label" className="field-input" placeholder="e.g. Lanternfield z" />
            {fieldError('label') && <p className="field-error">{fieldError('label')}</p>}
          </div>
          <div>
            <label className="field-label" htmlFor="system">
              System or instrument family
            </label>
            <input id="system" name="system" className="field-input" />
            {fieldError('system') && <p className="field-error">{fieldError('system')}</p>}
          </div>
          <div>
            <label className="field-label" htmlFor="magnitudeSystem">
              Magnitudes are
            </label>
            <select id="magnitudeSystem" className="field-input" value={magnitudeSystem} onChange={(e) => setMagnitudeSystem(e.currentTarget.value as 'vega' | 'ab')}>
              <option value="vega">Vega-based</option>
              <option value="ab">AB</option>
            </select>
          </div>
        </div>
        <ZeroPointFields key={magnitudeSystem} current={magnitudeSystem === 'ab' ? { fnuJy: 3631, relErr: 0, source: 'AB system (Oke & Gunn 1983)' } : null} magnitudeSystem={magnitudeSystem} allowNone error={saveError} />
        <div>
          <label className="field-label" htmlFor="citation">
            Where the curve was published
          </label>
          <textarea id="citation" name="citation" className="field-input" rows={2} />
          {fieldError('citation') && <p className="field-error">{fieldError('citation')}</p>}
        </div>
        <div>
          <label className="field-label" htmlFor="licence">
            Licence notice of the curve file (if any)
          </label>
          <textarea id="licence" name="licence" className="field-input" rows={2} />
        </div>
        <div>
          <label className="field-label" htmlFor="reason">
            Reason for adding it (kept with the new version)
          </label>
          <textarea id="reason" name="reason" className="field-input" rows={2} />
          {saveError?.field === 'reason' && <p className="field-error">{saveError.message}</p>}
        </div>
        {saveError && !saveError.field?.startsWith('band.') && saveError.field !== 'reason' && (
          <p className="notice notice-error" role="alert" data-testid="save-error">
            {saveError.message}
          </p>
        )}
        {saveError && saveError.field?.startsWith('band.') && !['band.key', 'band.label', 'band.system', 'band.citation'].includes(saveError.field) && !saveError.field.startsWith('band.zeroPoint') && (
          <p className="notice notice-error" role="alert">
            {saveError.message}
          </p>
        )}
        <div>
          <button type="submit" className="btn btn-primary" disabled={!curve || create.isPending}>
            {create.isPending ? 'Saving…' : 'Add the band'}
          </button>
          {!curve && <span className="ml-3 text-sm text-ink-600">Choose a curve file that reads without errors first.</span>}
        </div>
      </form>
    </div>
  );
}
