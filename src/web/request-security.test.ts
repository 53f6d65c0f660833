import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { contentSecurityPolicy, inlineScriptHashes, refuseCrossOriginWrite } from './request-security';

const origins = ['http://127.0.0.1:4321', 'http://localhost:4321'];
const req = (method: string, headers: Record<string, string>) => new Request('http://127.0.0.1:4321/api/x', { method, headers });

describe('refuseCrossOriginWrite', () => {
  it('lets reads through and writes from our own origin (or, without Origin, our own Referer)', () => {
    expect(refuseCrossOriginWrite(req('GET', {}), origins)).toBeNull();
    expect(refuseCrossOriginWrite(req('POST', { origin: 'http://localhost:4321' }), origins)).toBeNull();
    expect(refuseCrossOriginWrite(req('DELETE', { referer: 'http://127.0.0.1:4321/account/tokens' }), origins)).toBeNull();
  });

  it('refuses a foreign, null or missing Origin, and a foreign Referer', () => {
    expect(refuseCrossOriginWrite(req('POST', { origin: 'https://evil.example' }), origins)).toMatch(/not from https:\/\/evil\.example/);
    expect(refuseCrossOriginWrite(req('POST', { origin: 'null' }), origins)).toMatch(/not from null/);
    expect(refuseCrossOriginWrite(req('POST', {}), origins)).toMatch(/neither .*Origin.*Referer/);
    expect(refuseCrossOriginWrite(req('POST', { referer: 'https://evil.example/page' }), origins)).toMatch(/evil/);
    // A foreign Origin is not rescued by our own Referer.
    expect(refuseCrossOriginWrite(req('PATCH', { origin: 'https://evil.example', referer: 'http://127.0.0.1:4321/' }), origins)).not.toBeNull();
  });
});

describe('inlineScriptHashes', () => {
  it('hashes inline scripts a browser runs (as CSP level 2 defines: SHA-256 of the text, base64), not src or data scripts', () => {
    const body = '(()=>{console.log(1)})();';
    const html = `<script>${body}</script><script type="module" src="/a.js"></script><script type="application/json">{"a":1}</script><script type="module">import "/b.js"</script>`;
    const expected = createHash('sha256').update(body).digest('base64');
    const hashes = inlineScriptHashes(html);
    expect(hashes).toHaveLength(2);
    expect(hashes[0]).toBe(expected);
    expect(contentSecurityPolicy(hashes)).toContain(`script-src 'self' 'sha256-${expected}'`);
    expect(contentSecurityPolicy()).toContain("frame-ancestors 'none'");
  });
});
