// FITS header cards (FITS Standard 4.0, section 4): the card parser, the header of one HDU, and
// the shapes every part of the reader shares. Section numbers refer to the standard.
import type { FitsTable } from './fits-bintable';
import type { ReadBudget } from './limits';

/** FITS logical records are 2880 bytes (section 3.1). */
export const FITS_BLOCK = 2880;
export const CARD = 80;

export class FitsError extends Error {
  readonly byteOffset?: number;
  readonly hdu?: number;
  readonly keyword?: string;
  readonly column?: string;
  constructor(message: string, where: { byteOffset?: number; hdu?: number; keyword?: string; column?: string } = {}) {
    super(message);
    this.name = 'FitsError';
    this.byteOffset = where.byteOffset;
    this.hdu = where.hdu;
    this.keyword = where.keyword;
    this.column = where.column;
  }
}

export interface FitsComplex {
  re: number;
  im: number;
}

/** null = undefined value (section 4.1.2.3: a value field of blanks). Integers beyond 2^53 are bigint. */
export type FitsValue = string | number | bigint | boolean | FitsComplex | null;

export interface FitsCard {
  /** Keyword as written (upper case); HIERARCH cards give the words after HIERARCH joined by one space. */
  keyword: string;
  /** undefined for commentary cards without a value indicator (their text is in `comment`). */
  value?: FitsValue;
  comment?: string;
  /** 1-based number of the card within its HDU header (the first of a CONTINUE run). */
  cardNumber: number;
}

export class FitsHeader {
  readonly cards: readonly FitsCard[];
  private readonly index = new Map<string, FitsCard>();

  constructor(cards: FitsCard[]) {
    this.cards = cards;
    for (const card of cards) {
      if (card.value !== undefined && !this.index.has(card.keyword)) this.index.set(card.keyword, card);
    }
  }

  has(keyword: string): boolean {
    return this.index.has(keyword.toUpperCase()) || this.index.has(keyword);
  }

  card(keyword: string): FitsCard | undefined {
    return this.index.get(keyword.toUpperCase()) ?? this.index.get(keyword);
  }

  /** Value of the first card with this keyword; undefined when absent, null when present but undefined. */
  get(keyword: string): FitsValue | undefined {
    return this.card(keyword)?.value;
  }

  getNumber(keyword: string): number | undefined {
    const v = this.get(keyword);
    if (typeof v === 'number') return v;
    if (typeof v === 'bigint') return Number(v);
    return undefined;
  }

  getString(keyword: string): string | undefined {
    const v = this.get(keyword);
    return typeof v === 'string' ? v : undefined;
  }

  /** Text of all COMMENT or HISTORY cards, in order. */
  commentary(keyword: 'COMMENT' | 'HISTORY'): string[] {
    return this.cards.filter((c) => c.keyword === keyword && c.value === undefined).map((c) => c.comment ?? '');
  }
}

export type HduKind = 'primary' | 'image' | 'bintable' | 'table' | 'random-groups' | 'other';

export interface FitsHdu {
  /** 0-based position in the file (0 = primary). */
  index: number;
  kind: HduKind;
  /** EXTNAME, or 'PRIMARY' for the primary HDU. */
  name: string;
  header: FitsHeader;
  headerOffset: number;
  dataOffset: number;
  /** Bytes of data declared by the header, before padding to a whole block. */
  dataBytes: number;
  /** Set when the file ends before this HDU's data does (only with allowTruncatedData). */
  truncated: boolean;
  /** Present for BINTABLE HDUs. */
  table?: FitsTable;
}

export interface FitsFile {
  hdus: FitsHdu[];
  /** Problems that did not stop the reading (missing final padding, trailing bytes …). */
  warnings: string[];
}

export interface ReadFitsOptions {
  /** Name used in messages (file name), default 'FITS file'. */
  source?: string;
  /** Keep going when the last HDU's data is cut short (header-only uploads); tables there are not decoded. */
  allowTruncatedData?: boolean;
  /** Time (and, in table-file.ts, rows and cells) a read may take; decoding ticks it. */
  budget?: ReadBudget;
}

// ---------------------------------------------------------------------------------------------
// Header cards (section 4)

function isHeaderText(bytes: Uint8Array, start: number, end: number): number {
  for (let i = start; i < end; i++) {
    const b = bytes[i];
    if (b < 0x20 || b > 0x7e) return i;
  }
  return -1;
}

export function ascii(bytes: Uint8Array, start: number, end: number): string {
  let s = '';
  for (let i = start; i < end; i++) s += String.fromCharCode(bytes[i]);
  return s;
}

interface RawValue {
  value: FitsValue;
  comment?: string;
  /** String value ending in '&': continued on the next CONTINUE card (long-string convention, section 4.2.1.2). */
  continues?: boolean;
}

/** Parses the value/comment field of a card (section 4.2, free format accepted as astropy does). */
function parseValueField(field: string, where: () => string, offset: number): RawValue {
  let i = 0;
  while (i < field.length && field[i] === ' ') i++;
  if (i >= field.length) return { value: null };
  const c = field[i];
  if (c === "'") {
    // Character string: '' inside is one quote; trailing blanks are not significant (section 4.2.1).
    let s = '';
    let j = i + 1;
    for (;;) {
      if (j >= field.length) throw new FitsError(`${where()}: string value has no closing quote`, { byteOffset: offset });
      if (field[j] === "'") {
        if (field[j + 1] === "'") {
          s += "'";
          j += 2;
          continue;
        }
        break;
      }
      s += field[j++];
    }
    const rest = field.slice(j + 1);
    const slash = rest.indexOf('/');
    const trimmed = s.replace(/ +$/, '');
    const continues = trimmed.endsWith('&');
    return { value: continues ? trimmed.slice(0, -1) : trimmed, comment: slash >= 0 ? rest.slice(slash + 1).trim() : undefined, continues };
  }
  const slash = field.indexOf('/', i);
  const text = (slash >= 0 ? field.slice(i, slash) : field.slice(i)).trim();
  const comment = slash >= 0 ? field.slice(slash + 1).trim() : undefined;
  if (text === '') return { value: null, comment };
  if (text === 'T' || text === 'F') return { value: text === 'T', comment };
  if (/^[+-]?\d+$/.test(text)) {
    const n = Number(text);
    return { value: Number.isSafeInteger(n) ? n : BigInt(text), comment };
  }
  const num = parseFitsFloat(text);
  if (num !== undefined) return { value: num, comment };
  const complex = /^\(\s*([^,]+?)\s*,\s*([^)]+?)\s*\)$/.exec(text);
  if (complex) {
    const re = parseFitsFloat(complex[1]);
    const im = parseFitsFloat(complex[2]);
    if (re !== undefined && im !== undefined) return { value: { re, im }, comment };
  }
  throw new FitsError(`${where()}: cannot read value "${text}" (not a string, logical, number or complex number)`, { byteOffset: offset });
}

/** Fixed or exponential floating point; FITS allows D as the exponent letter (section 4.2.4). */
function parseFitsFloat(text: string): number | undefined {
  const t = text.trim();
  if (!/^[+-]?(\d+\.?\d*|\.\d+)([EeDd][+-]?\d+)?$/.test(t)) return undefined;
  return Number(t.replace(/[Dd]/, 'E'));
}

interface HeaderScan {
  header: FitsHeader;
  /** Offset just past the header's last block. */
  end: number;
}

export function readHeader(bytes: Uint8Array, start: number, hduIndex: number, source: string): HeaderScan {
  const cards: FitsCard[] = [];
  let pending: { card: FitsCard; parts: string[] } | null = null;
  let cardNumber = 0;
  for (let off = start; ; off += CARD) {
    if (off + CARD > bytes.length) {
      throw new FitsError(
        `${source}: HDU ${hduIndex} header has no END card (read ${cardNumber} cards from byte ${start} to the end of the file at byte ${bytes.length}); the file is truncated or not FITS`,
        { byteOffset: off, hdu: hduIndex },
      );
    }
    cardNumber++;
    const bad = isHeaderText(bytes, off, off + CARD);
    const where = () => `${source}: HDU ${hduIndex} header card ${cardNumber}`;
    if (bad >= 0) {
      throw new FitsError(`${where()} (byte ${bad}): byte 0x${bytes[bad].toString(16).padStart(2, '0')} is not printable ASCII, which FITS headers require; the file is damaged or not FITS`, {
        byteOffset: bad,
        hdu: hduIndex,
      });
    }
    const line = ascii(bytes, off, off + CARD);
    const keyword = line.slice(0, 8).trimEnd();
    if (keyword === 'END' && line.slice(8).trim() === '') {
      if (pending) pending.card.value = pending.parts.join('');
      const endOfCards = off + CARD;
      const end = Math.ceil((endOfCards - start) / FITS_BLOCK) * FITS_BLOCK + start;
      return { header: new FitsHeader(cards), end };
    }
    if (keyword === 'CONTINUE' && pending && line.slice(8, 10) !== '= ') {
      const raw = parseValueField(line.slice(8), () => `${where()} (CONTINUE of ${pending!.card.keyword})`, off);
      if (typeof raw.value === 'string') {
        pending.parts.push(raw.value);
        if (raw.comment) pending.card.comment = pending.card.comment ? `${pending.card.comment} ${raw.comment}` : raw.comment;
        if (!raw.continues) {
          pending.card.value = pending.parts.join('');
          pending = null;
        }
        continue;
      }
    }
    if (pending) {
      // The '&' was literal: no CONTINUE followed.
      pending.card.value = pending.parts.join('') + '&';
      pending = null;
    }
    if (keyword === 'HIERARCH') {
      // ESO HIERARCH convention (registered convention): HIERARCH A B C = value / comment.
      const eq = line.indexOf('=', 8);
      if (eq > 0) {
        const name = line.slice(9, eq).trim().split(/\s+/).join(' ');
        const raw = parseValueField(line.slice(eq + 1), where, off);
        cards.push({ keyword: name, value: raw.value, comment: raw.comment, cardNumber });
        continue;
      }
    }
    if (line.slice(8, 10) === '= ' && keyword !== 'COMMENT' && keyword !== 'HISTORY' && keyword !== '') {
      const raw = parseValueField(line.slice(10), () => `${where()} (${keyword})`, off);
      const card: FitsCard = { keyword, value: raw.value, comment: raw.comment, cardNumber };
      cards.push(card);
      if (raw.continues) pending = { card, parts: [raw.value as string] };
    } else {
      // Commentary card (section 4.4.2.4): COMMENT, HISTORY, blank keyword, or no value indicator.
      const text = line.slice(8).replace(/ +$/, '');
      if (keyword === '' && text.trim() === '') continue;
      cards.push({ keyword, comment: text, cardNumber });
    }
  }
}

