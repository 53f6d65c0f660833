// One upload's mapping screen: every column with what it means (first guess from its name), the
// first rows, saved presets, quality rules, the check report and the import.
import { useEffect, useMemo, useState } from 'react';
import { BAND_ROLES, ROLE_LABELS, type ColumnAssignment, type ColumnRole, type Mapping, type MappingRules } from '../../core/input/mapping';
import { intakeApi, IntakeApiError, type CheckSummary, type ImportSummary, type IntakeJobView, type MappingPresetView, type ReportEntry, type UploadDetail } from '../../browser/intake';
import { CAMPAIGN_COUNTS_EVENT, type CampaignCounts } from '../../contracts/intake';

/** What a job is doing, in words: waiting, rows read so far, stars written. */
export function jobProgressText(j: IntakeJobView): string {
  if (j.status === 'pending') return 'Waiting for the intake to start…';
  if (j.phase === 'importing') return `Writing the stars: ${j.starsWritten.toLocaleString('en')} written`;
  return `Reading the file: ${j.rowsRead.toLocaleString('en')} rows so far`;
}

interface Props {
  campaignId: string;
  uploadId: string;
  onChanged: () => void;
}

const WIDE_ROLES: ColumnRole[] = [
  'ignore', 'id', 'ra', 'dec', 'parallax', 'parallax_err', 'distance', 'distance_lo', 'distance_hi', 'av', 'mag', 'mag_err', 'jy', 'jy_err', 'mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err',
  'quality', 'confusion', 'extended', 'ruwe', 'bp_rp_excess',
];
const LONG_ROLES: ColumnRole[] = ['ignore', 'id', 'band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul', 'ra', 'dec', 'parallax', 'parallax_err', 'av'];

export default function MappingEditor({ campaignId, uploadId, onChanged }: Props) {
  const [upload, setUpload] = useState<UploadDetail | null>(null);
  const [loadError, setLoadError] = useState<string | null>(null);
  const [reading, setReading] = useState<IntakeJobView | null>(null);
  useEffect(() => {
    intakeApi.get(campaignId, uploadId, setReading).then(
      (u) => {
        setUpload(u);
        onChanged();
      },
      (e: Error) => {
        setLoadError(e.message);
        onChanged();
      },
    );
    // onChanged only refreshes the list: a new function each render must not start this again.
  }, [campaignId, uploadId]);
  if (loadError) return <p className="notice notice-error" data-testid="mapping-load-error">{loadError}</p>;
  if (!upload)
    return (
      <p className="text-sm text-ink-500" data-testid="job-progress" aria-live="polite">
        {reading ? jobProgressText(reading) : 'Reading the file…'}
      </p>
    );
  if (upload.format === 'fits-image') return <ImageImport campaignId={campaignId} upload={upload} onChanged={onChanged} />;
  return <TableMapping campaignId={campaignId} upload={upload} onChanged={onChanged} />;
}

function TableMapping({ campaignId, upload, onChanged }: { campaignId: string; upload: UploadDetail; onChanged: () => void }) {
  // Reopened after a check: the mapping that was checked (the one an import uses), else the detected one.
  const [mapping, setMapping] = useState<Mapping>(() =>
    upload.checked ? { layout: upload.checked.mapping.layout, columns: { ...upload.checked.mapping.columns } } : { layout: upload.detected?.layout ?? 'wide', columns: { ...(upload.detected?.columns ?? {}) } },
  );
  const [rules, setRules] = useState<MappingRules>(() => upload.checked?.rules ?? upload.detected?.rules ?? { quality: [] });
  const [presets, setPresets] = useState<MappingPresetView[]>([]);
  const [presetName, setPresetName] = useState('');
  const [message, setMessage] = useState<{ kind: 'ok' | 'error'; text: string } | null>(null);
  const [check, setCheck] = useState<CheckSummary | null>(null);
  const [report, setReport] = useState<ReportEntry[]>(upload.report);
  const [source, setSource] = useState('');
  const [importValid, setImportValid] = useState(false);
  const [result, setResult] = useState<ImportSummary | null>(null);
  const [busy, setBusy] = useState(false);
  const [progress, setProgress] = useState<IntakeJobView | null>(null);

  useEffect(() => {
    intakeApi.presets(campaignId).then(setPresets, () => setPresets([]));
  }, [campaignId]);

  const roles = mapping.layout === 'long' ? LONG_ROLES : WIDE_ROLES;
  const setColumn = (name: string, a: ColumnAssignment) => {
    setMapping((m) => ({ ...m, columns: { ...m.columns, [name]: a } }));
    setCheck(null);
  };
  const qualityColumns = useMemo(() => Object.entries(mapping.columns).filter(([, a]) => a.role === 'quality').map(([n]) => n), [mapping]);

  const run = async (what: () => Promise<void>) => {
    setBusy(true);
    setMessage(null);
    try {
      await what();
    } catch (e) {
      if (e instanceof IntakeApiError) {
        if (e.report.length) setReport(e.report);
        setMessage({ kind: 'error', text: e.message });
      } else setMessage({ kind: 'error', text: (e as Error).message });
    } finally {
      setBusy(false);
      setProgress(null);
    }
  };
  const doCheck = () =>
    run(async () => {
      const c = await intakeApi.check(campaignId, upload.id, mapping, rules, setProgress);
      setCheck(c);
      setReport(c.report);
      onChanged();
    });
  const doImport = () =>
    run(async () => {
      const r = await intakeApi.import(campaignId, upload.id, { mapping, rules, source: source.trim() || undefined, importValidRows: importValid }, setProgress);
      setResult(r);
      setReport(r.report);
      // The page header's campaign counts (outside this island) follow the import.
      window.dispatchEvent(new CustomEvent<CampaignCounts>(CAMPAIGN_COUNTS_EVENT, { detail: { stars: r.campaignStars, measurements: r.campaignMeasurements } }));
      onChanged();
    });
  const doSavePreset = () =>
    run(async () => {
      const p = await intakeApi.savePreset(campaignId, presetName.trim(), mapping, rules);
      setPresets((old) => [...old.filter((o) => o.id !== p.id), p].sort((a, b) => a.name.localeCompare(b.name)));
      setMessage({ kind: 'ok', text: `Saved the mapping as “${p.name}”.` });
    });
  const applyPreset = (id: string) => {
    const p = presets.find((x) => x.id === id);
    if (!p) return;
    // Columns the preset does not know stay unused; columns it names that this file lacks are skipped.
    const columns: Record<string, ColumnAssignment> = {};
    for (const c of upload.columns) columns[c] = p.mapping.columns[c] ?? { role: 'ignore' };
    setMapping({ layout: p.mapping.layout, columns });
    setRules({ ...p.rules, quality: p.rules.quality.filter((q) => upload.columns.includes(q.column)) });
    setCheck(null);
    setMessage({ kind: 'ok', text: `Applied “${p.name}”.` });
  };

  const errors = report.filter((r) => r.severity === 'error').length;

  return (
    <section className="card p-5 flex flex-col gap-6" aria-labelledby="mapping-heading" data-testid="mapping-editor">
      <header className="flex flex-wrap items-baseline gap-3">
        <h2 id="mapping-heading" className="text-xl">
          Map columns: <span className="break-all">{upload.originalName}</span>
        </h2>
        <span className="text-sm text-ink-500">
          {upload.formatLabel} · <span className="num">{upload.rowCount}</span> rows · sha256 <span className="num">{upload.sha256.slice(0, 12)}…</span>
        </span>
      </header>

      <div className="flex flex-wrap gap-4 items-end text-sm">
        <label className="flex flex-col gap-1">
          <span className="field-label">Table layout</span>
          <select className="field-input" value={mapping.layout} onChange={(e) => setMapping((m) => ({ ...m, layout: e.target.value as Mapping['layout'] }))} data-testid="layout">
            <option value="wide">one row per star</option>
            <option value="long">one row per star and band</option>
          </select>
        </label>
        {presets.length > 0 && (
          <label className="flex flex-col gap-1">
            <span className="field-label">Use a saved mapping</span>
            <select className="field-input" defaultValue="" onChange={(e) => applyPreset(e.target.value)} data-testid="preset-select">
              <option value="" disabled>
                choose…
              </option>
              {presets.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.name}
                </option>
              ))}
            </select>
          </label>
        )}
        <label className="flex flex-col gap-1">
          <span className="field-label">Save this mapping as</span>
          <span className="flex gap-2">
            <input className="field-input" value={presetName} onChange={(e) => setPresetName(e.target.value)} placeholder="e.g. Ember catalogue export" maxLength={80} />
            <button type="button" className="btn btn-quiet" disabled={busy || presetName.trim() === ''} onClick={doSavePreset}>
              Save
            </button>
          </span>
        </label>
      </div>

      <div className="overflow-x-auto">
        <table className="text-sm w-full" data-testid="column-table">
          <thead className="bg-paper-deep text-ink-600 text-left">
            <tr>
              <th className="px-3 py-2 font-semibold">Column</th>
              <th className="px-3 py-2 font-semibold">Meaning</th>
              <th className="px-3 py-2 font-semibold">Band</th>
              <th className="px-3 py-2 font-semibold">First values</th>
            </tr>
          </thead>
          <tbody>
            {upload.columns.map((name, i) => {
              const a = mapping.columns[name] ?? { role: 'ignore' as ColumnRole };
              const needsBand = mapping.layout === 'wide' && BAND_ROLES.includes(a.role);
              const note = upload.detected?.notes[name];
              return (
                <tr key={name} className="border-t border-rule align-top" data-column={name}>
                  <td className="px-3 py-2">
                    <code>{name}</code>
                    {upload.units[i] && <span className="ml-1 text-xs text-ink-500">[{upload.units[i]}]</span>}
                    {note && <p className="text-xs text-ink-500 max-w-xs">{note}</p>}
                  </td>
                  <td className="px-3 py-2">
                    <select
                      className="field-input"
                      aria-label={`Meaning of ${name}`}
                      value={a.role}
                      onChange={(e) => {
                        const role = e.target.value as ColumnRole;
                        setColumn(
                          name,
                          role === 'quality' || role === 'confusion'
                            ? { role, bands: ['J', 'H', 'Ks'] }
                            : role === 'extended'
                              ? { role, bands: ['W1', 'W2', 'W3', 'W4'] }
                              : BAND_ROLES.includes(role)
                                ? { role, band: a.band ?? upload.bandKeys[0] }
                                : { role },
                        );
                      }}
                    >
                      {roles.map((r) => (
                        <option key={r} value={r}>
                          {ROLE_LABELS[r]}
                        </option>
                      ))}
                    </select>
                  </td>
                  <td className="px-3 py-2">
                    {needsBand && (
                      <select className="field-input" aria-label={`Band of ${name}`} value={a.band ?? ''} onChange={(e) => setColumn(name, { ...a, band: e.target.value })}>
                        {upload.bandKeys.map((k) => (
                          <option key={k} value={k}>
                            {k}
                          </option>
                        ))}
                      </select>
                    )}
                    {(a.role === 'quality' || a.role === 'confusion' || a.role === 'extended') && (
                      <input
                        className="field-input w-32"
                        aria-label={`Bands of the letters in ${name}`}
                        value={(a.bands ?? []).join(' ')}
                        onChange={(e) => setColumn(name, { ...a, bands: e.target.value.split(/\s+/).filter(Boolean) })}
                        title="One band per letter, in order (use - to skip a letter)"
                      />
                    )}
                  </td>
                  <td className="px-3 py-2 num text-ink-600 whitespace-nowrap">{upload.preview.slice(0, 3).map((r) => r[i] ?? '').join(' · ')}</td>
                </tr>
              );
            })}
          </tbody>
        </table>
      </div>

      {qualityColumns.length > 0 && (
        <div className="text-sm flex flex-col gap-2" data-testid="quality-rules">
          <p className="font-semibold">Quality rules</p>
          {qualityColumns.map((col) => {
            const rule = rules.quality.find((q) => q.column === col);
            return (
              <label key={col} className="flex items-center gap-2 flex-wrap">
                <span>
                  Keep a band&apos;s value only where its letter in <code>{col}</code> is one of
                </span>
                <input
                  className="field-input w-28"
                  value={rule ? rule.keep.join(' ') : ''}
                  placeholder="any letter"
                  onChange={(e) => {
                    const keep = e.target.value.toUpperCase().split(/[\s,]+/).filter(Boolean);
                    setRules((r) => ({ ...r, quality: [...r.quality.filter((q) => q.column !== col), ...(keep.length ? [{ column: col, keep }] : [])] }));
                    setCheck(null);
                  }}
                />
                <span className="text-ink-500">(empty keeps every value)</span>
              </label>
            );
          })}
        </div>
      )}

      <details className="text-sm">
        <summary className="cursor-pointer text-ink-700">First rows of the file</summary>
        <div className="overflow-x-auto mt-2">
          <table className="num text-xs" data-testid="preview-table">
            <thead>
              <tr>
                {upload.columns.map((c) => (
                  <th key={c} className="px-2 py-1 text-left font-semibold">
                    {c}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {upload.preview.map((r, i) => (
                <tr key={i} className="border-t border-rule">
                  {r.map((v, j) => (
                    <td key={j} className="px-2 py-1 whitespace-nowrap">
                      {v}
                    </td>
                  ))}
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </details>

      <div className="flex flex-wrap gap-3 items-center">
        <button type="button" className="btn btn-quiet" disabled={busy} onClick={doCheck}>
          Check every row
        </button>
        {busy && progress && (
          <span className="text-sm text-ink-600" data-testid="job-progress" aria-live="polite">
            {jobProgressText(progress)}
          </span>
        )}
        {check && (
          <span className="text-sm text-ink-700" data-testid="check-summary">
            <span className="num">{check.starCount}</span> stars with <span className="num">{check.measurementCount}</span> values ready;{' '}
            <span className="num">{check.errorCount}</span> errors, <span className="num">{check.warningCount}</span> warnings
            {check.excludedByQuality > 0 && (
              <>
                ; <span className="num">{check.excludedByQuality}</span> values left out by the quality rules
              </>
            )}
            {(check.leftOutBySurveyRules ?? 0) > 0 && (
              <>
                ; <span className="num">{check.leftOutBySurveyRules}</span> left out by the survey rules (saturation, catalogue flags)
              </>
            )}
            {(check.nativeUpperLimits ?? 0) > 0 && (
              <>
                ; <span className="num">{check.nativeUpperLimits}</span> read as upper limits
              </>
            )}
            .
          </span>
        )}
      </div>

      {message && (
        <p className={`notice ${message.kind === 'ok' ? 'notice-ok' : 'notice-error'}`} role={message.kind === 'error' ? 'alert' : 'status'} data-testid="mapping-message">
          {message.text}
        </p>
      )}

      {report.length > 0 && <Report entries={report} />}

      <div className="border-t border-rule pt-4 flex flex-col gap-3 text-sm">
        <label className="flex flex-col gap-1 max-w-md">
          <span className="field-label">Source of these values</span>
          <input className="field-input" value={source} onChange={(e) => setSource(e.target.value)} placeholder={upload.originalName} maxLength={200} />
          <span className="text-xs text-ink-500">Values of the same star, band and source replace each other on a new import; another source is kept beside them.</span>
        </label>
        <label className="flex items-center gap-2">
          <input type="checkbox" checked={importValid} onChange={(e) => setImportValid(e.target.checked)} data-testid="import-valid-rows" />
          Import the valid rows and keep the report{errors > 0 ? ` (${errors} problems stay listed)` : ''}
        </label>
        <div>
          <button type="button" className="btn btn-primary" disabled={busy} onClick={doImport} data-testid="import-button">
            Import
          </button>
        </div>
        {result && (
          <p className="notice notice-ok" role="status" data-testid="import-result">
            Imported {result.starsCreated} new and {result.starsUpdated} existing stars: {result.measurementsCreated} new values, {result.measurementsUpdated} replaced{result.valuesLeftOut ? `, ${result.valuesLeftOut} left out by the input rules (kept with their reasons)` : ''} (source “{result.source}”). The campaign now holds{' '}
            <a href={`/campaigns/${campaignId}/stars`}>{result.campaignStars} stars</a>. <a href={`/campaigns/${campaignId}/batches`}>Start a batch fit</a>
          </p>
        )}
      </div>
    </section>
  );
}

function Report({ entries }: { entries: ReportEntry[] }) {
  return (
    <div className="overflow-x-auto max-h-96 overflow-y-auto border border-rule rounded-md">
      <table className="text-sm w-full" data-testid="report-table">
        <caption className="text-left px-3 py-2 font-semibold">Validation report</caption>
        <thead className="bg-paper-deep text-ink-600 text-left sticky top-0">
          <tr>
            <th className="px-3 py-1.5 font-semibold">File</th>
            <th className="px-3 py-1.5 font-semibold text-right">Row</th>
            <th className="px-3 py-1.5 font-semibold">Column</th>
            <th className="px-3 py-1.5 font-semibold">Problem</th>
          </tr>
        </thead>
        <tbody>
          {entries.map((e, i) => (
            <tr key={i} className="border-t border-rule align-top">
              <td className="px-3 py-1.5 break-all">{e.file}</td>
              <td className="px-3 py-1.5 text-right num">{e.row === 0 ? '—' : e.row}</td>
              <td className="px-3 py-1.5">{e.column ? <code>{e.column}</code> : '—'}</td>
              <td className={`px-3 py-1.5 ${e.severity === 'error' ? 'text-alarm-700' : 'text-ink-600'}`}>
                {e.severity === 'warning' ? 'warning: ' : ''}
                {e.message}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

function ImageImport({ campaignId, upload, onChanged }: { campaignId: string; upload: UploadDetail; onChanged: () => void }) {
  const obs = upload.observation ?? {};
  const [starId, setStarId] = useState(obs.object ?? '');
  const [band, setBand] = useState(upload.suggestedBand ?? upload.bandKeys[0]);
  const [mag, setMag] = useState(obs.mag !== undefined ? String(obs.mag) : '');
  const [magErr, setMagErr] = useState(obs.magErr !== undefined ? String(obs.magErr) : '');
  const [message, setMessage] = useState<{ kind: 'ok' | 'error'; text: string } | null>(null);
  const submit = async () => {
    setMessage(null);
    // An empty field is no value (Number('') would be 0): say so instead of sending one.
    const given = (text: string) => (text.trim() === '' ? Number.NaN : Number(text));
    if (!Number.isFinite(given(mag)) || !Number.isFinite(given(magErr))) {
      setMessage({ kind: 'error', text: `Give the ${band} magnitude and its error measured on the image as numbers; nothing was stored.` });
      return;
    }
    try {
      const r = await intakeApi.import(campaignId, upload.id, { rules: { quality: [] }, importValidRows: false, image: { starId, band, mag: given(mag), magErr: given(magErr) } });
      setMessage({ kind: 'ok', text: `Stored ${band} = ${mag} for ${starId} with the image's metadata (${r.measurementsCreated ? 'new value' : 'replaced the earlier value'}).` });
      onChanged();
    } catch (e) {
      setMessage({ kind: 'error', text: (e as Error).message });
    }
  };
  const rows: [string, unknown][] = [
    ['Object', obs.object],
    ['Filter', obs.filter],
    ['Exposure (s)', obs.exptimeS],
    ['Date', obs.dateObs],
    ['Airmass', obs.airmass],
    ['RA, Dec (deg)', obs.raDeg !== undefined ? `${obs.raDeg}, ${obs.decDeg}` : undefined],
    ['Zero-point (mag)', obs.zeroPointMag !== undefined ? `${obs.zeroPointMag}${obs.zeroPointErrMag !== undefined ? ` ± ${obs.zeroPointErrMag}` : ''} (${obs.zeroPointKeyword})` : undefined],
  ];
  return (
    <section className="card p-5 flex flex-col gap-4 text-sm" data-testid="image-import">
      <h2 className="text-xl">FITS image: {upload.originalName}</h2>
      <dl className="grid grid-cols-[10rem_1fr] gap-x-4 gap-y-1">
        {rows
          .filter(([, v]) => v !== undefined && v !== '')
          .map(([k, v]) => (
            <div key={k} className="contents">
              <dt className="text-ink-500">{k}</dt>
              <dd className="num">{String(v)}</dd>
            </div>
          ))}
      </dl>
      <p className="text-ink-600">Give the magnitude measured on this image; it is stored in the band below with the image&apos;s metadata.</p>
      <div className="flex flex-wrap gap-3 items-end">
        <label className="flex flex-col gap-1">
          <span className="field-label">Star id</span>
          <input className="field-input" value={starId} onChange={(e) => setStarId(e.target.value)} />
        </label>
        <label className="flex flex-col gap-1">
          <span className="field-label">Band</span>
          <select className="field-input" value={band} onChange={(e) => setBand(e.target.value)}>
            {upload.bandKeys.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </label>
        <label className="flex flex-col gap-1">
          <span className="field-label">Magnitude</span>
          <input className="field-input w-28" inputMode="decimal" value={mag} onChange={(e) => setMag(e.target.value)} />
        </label>
        <label className="flex flex-col gap-1">
          <span className="field-label">Error (mag)</span>
          <input className="field-input w-28" inputMode="decimal" value={magErr} onChange={(e) => setMagErr(e.target.value)} />
        </label>
        <button type="button" className="btn btn-primary" onClick={submit}>
          Import
        </button>
      </div>
      {message && <p className={`notice ${message.kind === 'ok' ? 'notice-ok' : 'notice-error'}`}>{message.text}</p>}
    </section>
  );
}
