import { createHash, randomBytes } from 'node:crypto';

// Crockford-style alphabet without look-alike letters: ids appear in URLs and get read aloud.
const ALPHABET = '0123456789abcdefghjkmnpqrstvwxyz';

export function newId(length = 12): string {
  const bytes = randomBytes(length);
  let out = '';
  for (let i = 0; i < length; i++) out += ALPHABET[bytes[i] & 31];
  return out;
}

export function newToken(): string {
  return randomBytes(32).toString('base64url');
}

export function hashToken(token: string): string {
  return createHash('sha256').update(token).digest('hex');
}
