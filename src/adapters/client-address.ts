// Who is on the other end of a request. The TCP peer's address is the client, unless the peer is one
// of the reverse proxies named in TRUSTED_PROXIES: then the client is the last address in
// X-Forwarded-For that is not itself a trusted proxy (each proxy appends the address it saw, so
// everything left of the first untrusted hop may be invented by the client). An X-Forwarded-For
// from any other peer is ignored: a client can write whatever it likes there
// (docs/decisions/0019-rate-limits-and-client-address.md).
import net from 'node:net';

export interface TrustedProxies {
  /** The settings as written, for messages. */
  entries: string[];
  has(address: string): boolean;
}

/** "::ffff:192.0.2.1" → "192.0.2.1"; brackets and zone ids removed; null for anything not an IP. */
export function normalizeAddress(raw: string | null | undefined): string | null {
  if (!raw) return null;
  let a = raw.trim();
  if (a.startsWith('[') && a.includes(']')) a = a.slice(1, a.indexOf(']'));
  const zone = a.indexOf('%');
  if (zone > 0) a = a.slice(0, zone);
  const mapped = /^::ffff:(\d+\.\d+\.\d+\.\d+)$/i.exec(a);
  if (mapped) a = mapped[1];
  const kind = net.isIP(a);
  if (kind === 0) return null;
  return kind === 6 ? a.toLowerCase() : a;
}

/**
 * TRUSTED_PROXIES: comma-separated addresses or CIDR ranges (203.0.113.7, 10.0.0.0/8, fd00::/8).
 * Throws naming the first entry that is neither.
 */
export function parseTrustedProxies(setting: string | undefined): TrustedProxies {
  const entries = (setting ?? '').split(',').map((s) => s.trim()).filter(Boolean);
  const list = new net.BlockList();
  for (const entry of entries) {
    const [addr, prefixText, extra] = entry.split('/');
    const address = normalizeAddress(addr);
    const type = address && net.isIP(address) === 6 ? 'ipv6' : 'ipv4';
    const max = type === 'ipv6' ? 128 : 32;
    const prefix = prefixText === undefined ? max : /^\d+$/.test(prefixText) ? Number(prefixText) : NaN;
    if (!address || extra !== undefined || !(prefix >= 0 && prefix <= max)) {
      throw new Error(`"${entry}" is not an IP address or CIDR range (such as 10.0.0.5 or 10.0.0.0/8)`);
    }
    list.addSubnet(address, prefix, type);
  }
  return {
    entries,
    has(address) {
      const a = normalizeAddress(address);
      if (!a || entries.length === 0) return false;
      return list.check(a, net.isIP(a) === 6 ? 'ipv6' : 'ipv4');
    },
  };
}

/**
 * The client's address for rate limits and logs. `peer` is the TCP peer (the socket's remote
 * address); `forwardedFor` the X-Forwarded-For header, if any.
 */
export function resolveClientAddress(peer: string | null | undefined, forwardedFor: string | null | undefined, trusted: TrustedProxies): string {
  const direct = normalizeAddress(peer) ?? 'unknown';
  if (!forwardedFor || !trusted.has(direct)) return direct;
  const hops = forwardedFor.split(',').map((s) => s.trim()).filter(Boolean);
  let client = direct;
  for (let i = hops.length - 1; i >= 0; i--) {
    const hop = normalizeAddress(hops[i]);
    // A hop that is not an address at all: stop at the last one we could read.
    if (!hop) break;
    client = hop;
    if (!trusted.has(hop)) break;
  }
  return client;
}
