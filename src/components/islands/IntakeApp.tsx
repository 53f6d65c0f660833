// The intake page: drop files on the Uppy dashboard (several at once, with progress); each file is
// stored by the server, which answers with its format, columns and a first guess at the mapping.
// Pick an upload to map its columns, check it and import it. Hydrated with client:only (Uppy needs
// the browser).
import Uppy from '@uppy/core';
import Dashboard from '@uppy/react/dashboard';
import XHRUpload from '@uppy/xhr-upload';
import '@uppy/core/css/style.min.css';
import '@uppy/dashboard/css/style.min.css';
import { useCallback, useEffect, useState } from 'react';
import { intakeApi, type UploadSummary } from '../../browser/intake';
import MappingEditor from './MappingEditor';

interface Props {
  campaignId: string;
  maxBytes: number;
  initialUploads: UploadSummary[];
}

function bytes(n: number): string {
  if (n >= 1024 * 1024) return `${(n / 1024 / 1024).toFixed(1)} MB`;
  if (n >= 1024) return `${(n / 1024).toFixed(1)} kB`;
  return `${n} B`;
}

const STATUS_WORDS: Record<string, string> = { received: 'to map', checked: 'checked', imported: 'imported', rejected: 'rejected' };

export default function IntakeApp({ campaignId, maxBytes, initialUploads }: Props) {
  const [uploads, setUploads] = useState<UploadSummary[]>(initialUploads);
  const [selected, setSelected] = useState<string | null>(null);
  const [errors, setErrors] = useState<string[]>([]);
  const refresh = useCallback(async () => {
    try {
      setUploads(await intakeApi.list(campaignId));
    } catch {
      // the list stays as it was; the next action will say what is wrong
    }
  }, [campaignId]);

  const [uppy] = useState(() =>
    new Uppy({ id: 'intake', autoProceed: false, restrictions: { maxFileSize: maxBytes, maxNumberOfFiles: 20 } }).use(XHRUpload, {
      endpoint: intakeApi.uploadUrl(campaignId),
      fieldName: 'file',
      formData: true,
      limit: 2,
      withCredentials: true,
      // A refused file (413, 422) will be refused again, and a resend could store the file twice.
      shouldRetry: () => false,
    }),
  );

  useEffect(() => {
    const onSuccess = (_file: unknown, response: { body?: unknown }) => {
      const upload = (response.body as { upload?: UploadSummary } | undefined)?.upload;
      if (upload) {
        setUploads((old) => [upload, ...old.filter((u) => u.id !== upload.id)]);
        setSelected((cur) => cur ?? upload.id);
      }
    };
    const onError = (file: { name?: string } | undefined, error: Error, response?: unknown) => {
      // Uppy hands over the XMLHttpRequest; our error body says what was wrong with the file.
      let message = error.message;
      const text = (response as { responseText?: string } | undefined)?.responseText;
      try {
        const body = text ? (JSON.parse(text) as { error?: { message?: string } }) : null;
        if (body?.error?.message) message = body.error.message;
      } catch {
        // not JSON (a proxy's error page): keep Uppy's message
      }
      setErrors((old) => [...old, `${file?.name ?? 'A file'}: ${message}`]);
      void refresh();
    };
    uppy.on('upload-success', onSuccess);
    uppy.on('upload-error', onError);
    return () => {
      uppy.off('upload-success', onSuccess);
      uppy.off('upload-error', onError);
    };
  }, [uppy, refresh]);

  useEffect(() => () => uppy.destroy(), [uppy]);

  return (
    <div className="flex flex-col gap-8">
      <section aria-labelledby="drop-heading" className="grid lg:grid-cols-[1fr_20rem] gap-6 items-start">
        <div>
          <h2 id="drop-heading" className="text-xl mb-3">
            Add files
          </h2>
          <div data-testid="uppy-dashboard">
            <Dashboard
              uppy={uppy}
              width="100%"
              height={280}
              proudlyDisplayPoweredByUppy={false}
              note={`CSV, TSV, VOTable or FITS; up to ${bytes(maxBytes)} each`}
            />
          </div>
        </div>
        <aside className="card p-4 text-sm text-ink-700 flex flex-col gap-2">
          <p className="font-semibold">What Starkiln reads</p>
          <p>Wide tables (one row per star) and long tables (one row per star and band) as CSV or tab-separated text, VOTables (TABLEDATA) and FITS binary tables. A FITS image gives its header: filter, exposure, date, airmass and position.</p>
          <p>The format is read from the file&apos;s content, never from its name. Nothing enters the campaign until you import it.</p>
        </aside>
      </section>

      {errors.length > 0 && (
        <div className="notice notice-error" role="alert" data-testid="upload-errors">
          <ul className="list-disc pl-5">
            {errors.map((e, i) => (
              <li key={i}>{e}</li>
            ))}
          </ul>
          <button type="button" className="btn btn-quiet mt-2" onClick={() => setErrors([])}>
            Dismiss
          </button>
        </div>
      )}

      <section className="card overflow-hidden" aria-labelledby="uploads-heading">
        <h2 id="uploads-heading" className="text-xl px-5 pt-5 pb-3">
          Uploads <span className="num text-base text-ink-500">({uploads.length})</span>
        </h2>
        {uploads.length === 0 ? (
          <p className="px-5 pb-5 text-sm text-ink-600">No files yet. Drop a table above.</p>
        ) : (
          <table className="w-full text-sm" data-testid="upload-table">
            <thead className="bg-paper-deep text-ink-600 text-left">
              <tr>
                <th className="px-5 py-2 font-semibold">File</th>
                <th className="px-3 py-2 font-semibold">Format</th>
                <th className="px-3 py-2 font-semibold text-right">Size</th>
                <th className="px-3 py-2 font-semibold text-right">Rows</th>
                <th className="px-3 py-2 font-semibold">State</th>
                <th className="px-5 py-2" />
              </tr>
            </thead>
            <tbody>
              {uploads.map((u) => (
                <tr key={u.id} className={`border-t border-rule ${selected === u.id ? 'bg-ember-100' : ''}`} data-upload-id={u.id}>
                  <td className="px-5 py-2.5 break-all">{u.originalName}</td>
                  <td className="px-3 py-2.5 text-ink-600">{u.formatLabel ?? '—'}</td>
                  <td className="px-3 py-2.5 text-right num">{bytes(u.sizeBytes)}</td>
                  <td className="px-3 py-2.5 text-right num">{u.rowCount ?? '—'}</td>
                  <td className="px-3 py-2.5">
                    <span className={u.status === 'rejected' ? 'text-alarm-700' : u.status === 'imported' ? 'text-moss-700' : 'text-ink-700'}>{STATUS_WORDS[u.status] ?? u.status}</span>
                    {u.errorCount > 0 && <span className="ml-2 text-xs text-alarm-700">{u.errorCount} problems</span>}
                  </td>
                  <td className="px-5 py-2.5 text-right">
                    {u.status !== 'rejected' && (
                      <button type="button" className="btn btn-quiet" onClick={() => setSelected(u.id)}>
                        {u.status === 'imported' ? 'Open' : 'Map columns'}
                      </button>
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        )}
      </section>

      {selected && <MappingEditor key={selected} campaignId={campaignId} uploadId={selected} onChanged={refresh} />}
    </div>
  );
}
