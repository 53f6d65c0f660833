import { describe, expect, it } from 'vitest';
import { normalizeAddress, parseTrustedProxies, resolveClientAddress } from './client-address';

describe('resolveClientAddress', () => {
  const none = parseTrustedProxies('');
  const proxies = parseTrustedProxies('127.0.0.1, 10.0.0.0/8, fd00::/8');

  it('is the connection peer when no proxy is trusted, whatever X-Forwarded-For says', () => {
    expect(resolveClientAddress('203.0.113.9', '198.51.100.1', none)).toBe('203.0.113.9');
    expect(resolveClientAddress('::ffff:127.0.0.1', '198.51.100.1', none)).toBe('127.0.0.1');
  });

  it('ignores X-Forwarded-For from a peer that is not a trusted proxy', () => {
    expect(resolveClientAddress('203.0.113.9', '198.51.100.1', proxies)).toBe('203.0.113.9');
  });

  it('takes the last untrusted hop from a trusted proxy (entries left of it may be invented)', () => {
    expect(resolveClientAddress('127.0.0.1', '198.51.100.1', proxies)).toBe('198.51.100.1');
    expect(resolveClientAddress('::ffff:127.0.0.1', 'spoofed, 198.51.100.1, 10.1.2.3', proxies)).toBe('198.51.100.1');
    expect(resolveClientAddress('127.0.0.1', '192.0.2.66, 198.51.100.1', proxies)).toBe('198.51.100.1');
    expect(resolveClientAddress('fd00::5', '2001:db8::7', proxies)).toBe('2001:db8::7');
  });

  it('stays with the proxy when the header has no readable address', () => {
    expect(resolveClientAddress('127.0.0.1', 'not-an-address', proxies)).toBe('127.0.0.1');
    expect(resolveClientAddress('127.0.0.1', null, proxies)).toBe('127.0.0.1');
  });

  it('refuses a setting that is not an address or CIDR range, naming it', () => {
    expect(() => parseTrustedProxies('10.0.0.0/33')).toThrow(/"10\.0\.0\.0\/33"/);
    expect(() => parseTrustedProxies('proxy.example.org')).toThrow(/"proxy\.example\.org" is not an IP address/);
    expect(parseTrustedProxies('10.0.0.0/8').has('10.200.1.1')).toBe(true);
    expect(parseTrustedProxies('10.0.0.0/8').has('11.0.0.1')).toBe(false);
  });

  it('normalises IPv4-mapped and bracketed forms', () => {
    expect(normalizeAddress('[::1]')).toBe('::1');
    expect(normalizeAddress('::FFFF:192.0.2.1')).toBe('192.0.2.1');
    expect(normalizeAddress('garbage')).toBeNull();
  });
});
