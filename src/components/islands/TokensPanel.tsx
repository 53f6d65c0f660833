// Personal API tokens: make one (its secret is shown once, here), see when each was last used,
// revoke. Server-rendered with the list in place; once hydrated it talks to /api/tokens. Without
// JavaScript the forms post to the page.
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useEffect, useState, type SubmitEvent } from 'react';
import type { ApiTokenView } from '../../contracts/api';
import { ApiError, apiFetch } from '../../browser/api';
import { getQueryClient } from '../../browser/query-client';
import { formatDate } from '../ui/formatDate';

type TokenRow = ApiTokenView;

interface Props {
  initial: TokenRow[];
  /** A secret just made by the no-JavaScript form (shown once). */
  serverSecret?: string | null;
  serverError?: { field?: string; message: string } | null;
  exampleUrl: string;
  /** What the example URL downloads (null: it keeps a CAMPAIGN_ID placeholder, the person has no campaign). */
  exampleNote?: string | null;
}

export default function TokensPanel(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Tokens {...props} />
    </QueryClientProvider>
  );
}

const KEY = ['tokens'];

function Tokens({ initial, serverSecret, serverError, exampleUrl, exampleNote = null }: Props) {
  const qc = useQueryClient();
  const list = useQuery({ queryKey: KEY, queryFn: async () => (await apiFetch<{ tokens: TokenRow[] }>('/api/tokens')).tokens, initialData: initial });
  const [secret, setSecret] = useState<string | null>(serverSecret ?? null);
  const [name, setName] = useState('');
  const [days, setDays] = useState('');
  const create = useMutation({
    mutationFn: (input: { name: string; expiresInDays: number | null }) => apiFetch<{ token: TokenRow; secret: string }>('/api/tokens', { method: 'POST', body: input }),
    onSuccess: (r) => {
      setSecret(r.secret);
      setName('');
      setDays('');
      void qc.invalidateQueries({ queryKey: KEY });
    },
  });
  const revoke = useMutation({
    mutationFn: (id: string) => apiFetch<{ token: TokenRow }>(`/api/tokens/${encodeURIComponent(id)}`, { method: 'DELETE' }),
    onSuccess: () => void qc.invalidateQueries({ queryKey: KEY }),
  });
  const err = create.error instanceof ApiError ? { field: create.error.field, message: create.error.message } : create.error ? { message: create.error.message } : (serverError ?? null);

  function onCreate(e: SubmitEvent<HTMLFormElement>) {
    e.preventDefault();
    setSecret(null);
    create.mutate({ name, expiresInDays: days.trim() === '' ? null : Number(days) });
  }

  return (
    <div className="grid lg:grid-cols-[1fr_22rem] gap-8 items-start">
      <section className="card overflow-hidden" aria-labelledby="tokens-heading">
        <h2 id="tokens-heading" className="text-xl px-5 pt-5 pb-3">
          Your tokens
        </h2>
        {secret && (
          <div className="mx-5 mb-4 notice notice-ok" role="status">
            <p className="font-semibold">Copy this token now: it is not shown again.</p>
            <div className="flex items-start gap-2 mt-2">
              <code className="block flex-1 p-2 bg-white border border-rule rounded break-all select-all" data-testid="new-token-secret">
                {secret}
              </code>
              <CopyButton text={secret} label="Copy the token" testId="copy-token" />
            </div>
            <p className="mt-3 text-xs">
              Try it: this downloads {exampleNote ?? 'a campaign’s accepted catalogue (put the campaign’s id, from its address, for CAMPAIGN_ID)'} as CSV.
            </p>
            <div className="flex items-start gap-2 mt-1">
              <pre className="flex-1 text-xs whitespace-pre-wrap break-all" data-testid="token-curl">{curlExample(secret, exampleUrl)}</pre>
              <CopyButton text={curlExample(secret, exampleUrl)} label="Copy the command" testId="copy-curl" />
            </div>
          </div>
        )}
        <table className="w-full text-sm" data-testid="token-table">
          <thead className="bg-paper-deep text-ink-600 text-left">
            <tr>
              <th className="px-5 py-2 font-semibold">Name</th>
              <th className="px-3 py-2 font-semibold">Starts with</th>
              <th className="px-3 py-2 font-semibold">Made</th>
              <th className="px-3 py-2 font-semibold">Last used</th>
              <th className="px-3 py-2 font-semibold">State</th>
              <th className="px-5 py-2" />
            </tr>
          </thead>
          <tbody>
            {(list.data ?? initial).map((t) => (
              <tr key={t.id} className="border-t border-rule">
                <td className="px-5 py-2.5">{t.name}</td>
                <td className="px-3 py-2.5 font-mono text-ink-600">{t.prefix}…</td>
                <td className="px-3 py-2.5 num text-ink-500">{formatDate(t.createdAt)}</td>
                <td className="px-3 py-2.5 num text-ink-500">{t.lastUsedAt ? formatDate(t.lastUsedAt) : 'never'}</td>
                <td className="px-3 py-2.5">
                  {t.status === 'active' ? (t.expiresAt ? `active until ${formatDate(t.expiresAt)}` : 'active') : t.status}
                </td>
                <td className="px-5 py-2.5 text-right">
                  {t.status === 'active' && (
                    <form
                      method="post"
                      onSubmit={(e) => {
                        e.preventDefault();
                        revoke.mutate(t.id);
                      }}
                    >
                      <input type="hidden" name="action" value="revoke" />
                      <input type="hidden" name="tokenId" value={t.id} />
                      <button type="submit" className="btn btn-quiet py-1 px-3 text-sm" disabled={revoke.isPending}>
                        Revoke
                      </button>
                    </form>
                  )}
                </td>
              </tr>
            ))}
            {(list.data ?? initial).length === 0 && (
              <tr>
                <td colSpan={6} className="px-5 py-5 text-ink-500">
                  No tokens yet.
                </td>
              </tr>
            )}
          </tbody>
        </table>
      </section>
      <form method="post" onSubmit={onCreate} className="card p-5 flex flex-col gap-4" noValidate aria-labelledby="new-token-heading">
        <input type="hidden" name="action" value="create" />
        <h2 id="new-token-heading" className="text-xl">
          Make a token
        </h2>
        <p className="text-sm text-ink-600 -mt-2">A script with this token acts as you, with your roles in each campaign. Keep it secret; revoke it when the script is retired.</p>
        {err && !err.field && (
          <p className="notice notice-error" role="alert">
            {err.message}
          </p>
        )}
        <div>
          <label htmlFor="token-name" className="field-label">
            Name
          </label>
          <input id="token-name" name="name" className="field-input" value={name} onChange={(e) => setName(e.target.value)} aria-invalid={err?.field === 'name'} aria-describedby={err?.field === 'name' ? 'token-name-error' : undefined} />
          {err?.field === 'name' && (
            <p id="token-name-error" className="field-error">
              {err.message}
            </p>
          )}
        </div>
        <div>
          <label htmlFor="token-days" className="field-label">
            Expires after (days, empty = never)
          </label>
          <input id="token-days" name="expiresInDays" inputMode="numeric" className="field-input" value={days} onChange={(e) => setDays(e.target.value)} aria-invalid={err?.field === 'expiresInDays'} />
          {err?.field === 'expiresInDays' && <p className="field-error">{err.message}</p>}
        </div>
        <button type="submit" className="btn btn-primary self-start" disabled={create.isPending}>
          Make token
        </button>
      </form>
    </div>
  );
}

function curlExample(secret: string, url: string): string {
  return `curl -H "Authorization: Bearer ${secret}" \\\n  "${url}"`;
}

/**
 * Copies `text` to the clipboard, saying so. The Clipboard API needs a secure context (https or
 * 127.0.0.1); elsewhere the text is put in a selected field and copied the older way.
 */
function CopyButton({ text, label, testId }: { text: string; label: string; testId: string }) {
  const [state, setState] = useState<'idle' | 'copied' | 'failed'>('idle');
  // Shown once hydrated: without JavaScript the button could do nothing (the text stays selectable).
  const [hydrated, setHydrated] = useState(false);
  useEffect(() => setHydrated(true), []);
  async function copy() {
    try {
      if (navigator.clipboard && window.isSecureContext) await navigator.clipboard.writeText(text);
      else {
        const area = document.createElement('textarea');
        area.value = text;
        area.setAttribute('readonly', '');
        area.style.position = 'fixed';
        area.style.opacity = '0';
        document.body.append(area);
        area.select();
        const ok = document.execCommand('copy');
        area.remove();
        if (!ok) throw new Error('copy refused');
      }
      setState('copied');
    } catch {
      setState('failed');
    }
  }
  if (!hydrated) return null;
  return (
    <span className="flex flex-col items-end gap-1 shrink-0">
      <button type="button" className="btn btn-quiet py-1 px-3 text-sm" onClick={() => void copy()} data-testid={testId}>
        {label}
      </button>
      <span className="text-xs" role="status" aria-live="polite">
        {state === 'copied' ? 'Copied.' : state === 'failed' ? 'Could not copy: select the text and copy it.' : ''}
      </span>
    </span>
  );
}
