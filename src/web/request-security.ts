// Per-request security glue used by src/middleware.ts: the client's address, the same-origin rule
// for browser writes, and the response headers (Content-Security-Policy and the usual others).
import { createHash } from 'node:crypto';
import { CLIENT_ADDRESS_HEADER } from '../adapters/auth';
import { resolveClientAddress, type TrustedProxies } from '../adapters/client-address';

/** Set by scripts/server.mjs, the listener in front of the built app: x-starkiln-peer is its. */
const PEER_HEADER_MARK = Symbol.for('starkiln.peer-header');
export const PEER_HEADER = 'x-starkiln-peer';

let warnedNoPeer = false;

/**
 * The client's address for this request, also written into CLIENT_ADDRESS_HEADER (replacing any
 * value the client sent) so better-auth's limiter keys on the same address. The TCP peer comes
 * from scripts/server.mjs; without it (astro dev) Astro's own clientAddress stands in.
 */
export function clientAddressOf(request: Request, astroClientAddress: () => string | undefined, trusted: TrustedProxies): string {
  const viaListener = (globalThis as Record<symbol, unknown>)[PEER_HEADER_MARK] === true;
  let peer: string | undefined;
  if (viaListener) {
    peer = request.headers.get(PEER_HEADER) ?? undefined;
  } else {
    if (!warnedNoPeer && process.env.NODE_ENV === 'production') {
      console.warn('Starkiln: started without scripts/server.mjs, so the connection address is unknown; rate limits trust Astro\'s client address. Start with `npm start`.');
      warnedNoPeer = true;
    }
    try {
      peer = astroClientAddress();
    } catch {
      peer = undefined;
    }
  }
  const address = resolveClientAddress(peer, viaListener ? request.headers.get('x-forwarded-for') : null, trusted);
  try {
    request.headers.set(CLIENT_ADDRESS_HEADER, address);
  } catch {
    // Immutable headers (a request built by a test): better-auth then sees no address header.
  }
  return address;
}

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * A write (POST, PUT, PATCH, DELETE…) must name one of our own origins in Origin, or, when a
 * browser left Origin out, in Referer. Null when the request may go on, else the reason to refuse.
 */
export function refuseCrossOriginWrite(request: Request, trustedOrigins: readonly string[]): string | null {
  if (SAFE_METHODS.has(request.method)) return null;
  const origin = request.headers.get('origin');
  let source: string | null = null;
  if (origin !== null) {
    source = origin;
  } else {
    const referer = request.headers.get('referer');
    if (referer) {
      try {
        source = new URL(referer).origin;
      } catch {
        source = null;
      }
    }
  }
  if (source !== null && trustedOrigins.includes(source)) return null;
  if (origin === null && source === null) {
    return 'This request changes data but says neither where it comes from (Origin) nor which page sent it (Referer). Send it from a Starkiln page, or from a script with an API token (Authorization: Bearer).';
  }
  return `Requests that change data are accepted only from Starkiln's own pages, not from ${source}. Scripts use an API token (Authorization: Bearer).`;
}

/**
 * The policy: everything from our own origin only. Scripts: our bundles plus the exact inline
 * scripts Astro writes into each page (its island loader), by hash, added by withScriptHashes.
 * Styles allow inline because React islands and Plotly set style attributes and inject style rules;
 * no script can run from them. Images and fonts may be data:/blob: URLs (Plotly's exports).
 */
const CSP_BASE = [
  "default-src 'self'",
  "style-src 'self' 'unsafe-inline'",
  "img-src 'self' data: blob:",
  "font-src 'self' data:",
  "connect-src 'self'",
  "worker-src 'self' blob:",
  "object-src 'none'",
  "base-uri 'self'",
  "form-action 'self'",
  "frame-ancestors 'none'",
];

export function contentSecurityPolicy(scriptHashes: readonly string[] = []): string {
  const script = ["script-src 'self'", ...scriptHashes.map((h) => `'sha256-${h}'`)].join(' ');
  return [CSP_BASE[0], script, ...CSP_BASE.slice(1)].join('; ');
}

export function securityHeaders(options: { https: boolean }): Record<string, string> {
  const headers: Record<string, string> = {
    'content-security-policy': contentSecurityPolicy(),
    'x-content-type-options': 'nosniff',
    'referrer-policy': 'same-origin',
    'x-frame-options': 'DENY',
    'permissions-policy': 'camera=(), microphone=(), geolocation=(), payment=(), usb=(), serial=(), bluetooth=()',
    'cross-origin-opener-policy': 'same-origin',
  };
  if (options.https) headers['strict-transport-security'] = 'max-age=31536000';
  return headers;
}

const INLINE_SCRIPT = /<script\b([^>]*)>([\s\S]*?)<\/script>/gi;
const NON_JS_TYPE = /\btype\s*=\s*["']?(?!module\b|text\/javascript\b|application\/javascript\b)[^"'\s>]+/i;

/** SHA-256 (base64) of each inline script in an HTML page that a browser would run. */
export function inlineScriptHashes(html: string): string[] {
  const hashes = new Set<string>();
  for (const m of html.matchAll(INLINE_SCRIPT)) {
    const attrs = m[1];
    if (/\bsrc\s*=/i.test(attrs) || NON_JS_TYPE.test(attrs)) continue;
    hashes.add(createHash('sha256').update(m[2], 'utf8').digest('base64'));
  }
  return [...hashes];
}

/** For an HTML page: the policy with the hashes of the inline scripts it carries. */
export async function withScriptHashes(response: Response): Promise<Response> {
  const type = response.headers.get('content-type') ?? '';
  if (!type.toLowerCase().startsWith('text/html') || !response.body) return response;
  const html = await response.text();
  const headers = new Headers(response.headers);
  headers.set('content-security-policy', contentSecurityPolicy(inlineScriptHashes(html)));
  return new Response(html, { status: response.status, statusText: response.statusText, headers });
}
