// What a star id may be: at most 128 characters, and none of the characters that hide or reorder
// text. An id is a key people read, compare and paste (catalogue downloads, the star page, URLs); a
// right-to-left override or a zero-width space makes two ids look alike that are not, and a 52 MB
// id once made every key lookup of a campaign slow. OWASP ASVS 5.1 (input validation, common
// practice); the character list is Unicode's bidirectional formatting characters (UAX #9, section
// 2) and its zero-width format characters.
import { shownText } from './limits';

export const STAR_ID_MAX_CHARS = 128;

/** Names of the characters refused in an id, by code point. */
const NAMED: Record<number, string> = {
  0x0000: 'NUL',
  0x061c: 'ARABIC LETTER MARK (a BiDi control)',
  0x200b: 'ZERO WIDTH SPACE',
  0x200c: 'ZERO WIDTH NON-JOINER',
  0x200d: 'ZERO WIDTH JOINER',
  0x200e: 'LEFT-TO-RIGHT MARK (a BiDi control)',
  0x200f: 'RIGHT-TO-LEFT MARK (a BiDi control)',
  0x202a: 'LEFT-TO-RIGHT EMBEDDING (a BiDi control)',
  0x202b: 'RIGHT-TO-LEFT EMBEDDING (a BiDi control)',
  0x202c: 'POP DIRECTIONAL FORMATTING (a BiDi control)',
  0x202d: 'LEFT-TO-RIGHT OVERRIDE (a BiDi control)',
  0x202e: 'RIGHT-TO-LEFT OVERRIDE (a BiDi control)',
  0x2060: 'WORD JOINER (zero width)',
  0x2066: 'LEFT-TO-RIGHT ISOLATE (a BiDi control)',
  0x2067: 'RIGHT-TO-LEFT ISOLATE (a BiDi control)',
  0x2068: 'FIRST STRONG ISOLATE (a BiDi control)',
  0x2069: 'POP DIRECTIONAL ISOLATE (a BiDi control)',
  0xfeff: 'ZERO WIDTH NO-BREAK SPACE (byte-order mark)',
};

function refused(code: number): string | null {
  if (NAMED[code] !== undefined) return NAMED[code];
  if (code < 0x20 || code === 0x7f) return 'a control character';
  if (code >= 0x80 && code <= 0x9f) return 'a control character (C1)';
  return null;
}

const hex = (code: number) => `U+${code.toString(16).toUpperCase().padStart(4, '0')}`;

/** Why `id` cannot be a star id, or null when it can. The id is quoted safely (shownText). */
export function starIdProblem(id: string): string | null {
  // Length in characters (code points); the UTF-16 length is an upper bound, so most ids skip the count.
  if (id.length > STAR_ID_MAX_CHARS) {
    let chars = 0;
    for (let i = 0; i < id.length && chars <= STAR_ID_MAX_CHARS; i++) {
      const c = id.charCodeAt(i);
      if (c >= 0xd800 && c <= 0xdbff) i++;
      chars++;
    }
    if (chars > STAR_ID_MAX_CHARS) {
      return `star id "${shownText(id, 40)}" is longer than ${STAR_ID_MAX_CHARS} characters`;
    }
  }
  for (let i = 0, at = 1; i < id.length; i++, at++) {
    const c = id.charCodeAt(i);
    if (c >= 0xd800 && c <= 0xdbff) {
      i++;
      continue;
    }
    const what = refused(c);
    if (what) return `star id "${shownText(id, 40)}" contains ${hex(c)} ${what} at character ${at}; ids may not hold control, BiDi or zero-width characters`;
  }
  return null;
}
