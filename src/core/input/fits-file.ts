// Starkiln's own FITS reader: headers of every HDU, binary tables (XTENSION = 'BINTABLE') decoded
// column by column, and per-observation metadata from image headers. Pure TypeScript over a
// Uint8Array so the browser, the server, the worker and the CLI share it.
//
// Reference: FITS Standard 4.0 (IAU FITS Working Group, 2018). Section numbers below refer to it.
// Tested against files written and read by astropy (fixtures/fits, scripts/references/make_fits_fixtures.py).

/** FITS logical records are 2880 bytes (section 3.1). */
export const FITS_BLOCK = 2880;
const CARD = 80;

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

function ascii(bytes: Uint8Array, start: number, end: number): string {
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

function readHeader(bytes: Uint8Array, start: number, hduIndex: number, source: string): HeaderScan {
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

// ---------------------------------------------------------------------------------------------
// HDU layout (sections 4.4, 7)

const VALID_BITPIX = new Set([8, 16, 32, 64, -32, -64]);

function requireInt(header: FitsHeader, keyword: string, hduIndex: number, source: string, offset: number): number {
  const card = header.card(keyword);
  const v = card?.value;
  if (typeof v !== 'number' || !Number.isInteger(v)) {
    const found = card === undefined ? 'missing' : `${JSON.stringify(typeof v === 'bigint' ? v.toString() : v)}`;
    throw new FitsError(`${source}: HDU ${hduIndex} header${card ? ` card ${card.cardNumber}` : ''}: ${keyword} must be an integer, found ${found}`, {
      byteOffset: offset,
      hdu: hduIndex,
      keyword,
    });
  }
  return v;
}

interface Layout {
  kind: HduKind;
  dataBytes: number;
}

function layoutOf(header: FitsHeader, hduIndex: number, source: string, offset: number): Layout {
  const first = header.cards[0];
  let kind: HduKind;
  if (hduIndex === 0) {
    if (!first || first.keyword !== 'SIMPLE') {
      throw new FitsError(`${source}: not a FITS file: the first card must be SIMPLE = T (section 4.4.1.1), found "${first?.keyword ?? ''}"`, { byteOffset: 0, hdu: 0 });
    }
    if (first.value !== true) {
      throw new FitsError(`${source}: SIMPLE = ${String(first.value)}: the file says it does not conform to the FITS standard`, { byteOffset: 0, hdu: 0, keyword: 'SIMPLE' });
    }
    kind = 'primary';
  } else {
    if (!first || first.keyword !== 'XTENSION') {
      throw new FitsError(`${source}: HDU ${hduIndex} at byte ${offset}: an extension must start with XTENSION, found "${first?.keyword ?? ''}"`, { byteOffset: offset, hdu: hduIndex });
    }
    const x = String(first.value ?? '').trim();
    kind = x === 'BINTABLE' ? 'bintable' : x === 'IMAGE' ? 'image' : x === 'TABLE' ? 'table' : 'other';
  }
  const bitpix = requireInt(header, 'BITPIX', hduIndex, source, offset);
  if (!VALID_BITPIX.has(bitpix)) {
    throw new FitsError(`${source}: HDU ${hduIndex} header card ${header.card('BITPIX')!.cardNumber}: BITPIX = ${bitpix} is not one of 8, 16, 32, 64, -32, -64`, {
      byteOffset: offset,
      hdu: hduIndex,
      keyword: 'BITPIX',
    });
  }
  const naxis = requireInt(header, 'NAXIS', hduIndex, source, offset);
  if (naxis < 0 || naxis > 999) {
    throw new FitsError(`${source}: HDU ${hduIndex}: NAXIS = ${naxis} is outside 0..999`, { byteOffset: offset, hdu: hduIndex, keyword: 'NAXIS' });
  }
  const axes: number[] = [];
  for (let i = 1; i <= naxis; i++) {
    const n = requireInt(header, `NAXIS${i}`, hduIndex, source, offset);
    if (n < 0) throw new FitsError(`${source}: HDU ${hduIndex}: NAXIS${i} = ${n} is negative`, { byteOffset: offset, hdu: hduIndex, keyword: `NAXIS${i}` });
    axes.push(n);
  }
  const pcount = header.has('PCOUNT') ? requireInt(header, 'PCOUNT', hduIndex, source, offset) : 0;
  const gcount = header.has('GCOUNT') ? requireInt(header, 'GCOUNT', hduIndex, source, offset) : 1;
  if (pcount < 0 || gcount < 0) {
    const keyword = pcount < 0 ? 'PCOUNT' : 'GCOUNT';
    throw new FitsError(`${source}: HDU ${hduIndex}: ${keyword} = ${pcount < 0 ? pcount : gcount} is negative`, { byteOffset: offset, hdu: hduIndex, keyword });
  }
  // Random groups (section 6): NAXIS1 = 0 and GROUPS = T in the primary; NAXIS1 is not part of the size.
  const groups = kind === 'primary' && naxis > 0 && axes[0] === 0 && header.get('GROUPS') === true;
  if (groups) kind = 'random-groups';
  let product = naxis === 0 ? 0 : 1;
  for (let i = groups ? 1 : 0; i < axes.length; i++) product *= axes[i];
  const dataBytes = (Math.abs(bitpix) / 8) * gcount * (pcount + product);
  if (kind === 'bintable') {
    if (bitpix !== 8 || naxis !== 2 || gcount !== 1) {
      throw new FitsError(`${source}: HDU ${hduIndex}: a BINTABLE needs BITPIX = 8, NAXIS = 2 and GCOUNT = 1 (section 7.3.1), found ${bitpix}, ${naxis}, ${gcount}`, {
        byteOffset: offset,
        hdu: hduIndex,
      });
    }
  }
  return { kind, dataBytes };
}

/** Reads every HDU's header and decodes binary tables. Throws FitsError on malformed input. */
export function readFits(bytes: Uint8Array, options: ReadFitsOptions = {}): FitsFile {
  const source = options.source ?? 'FITS file';
  const warnings: string[] = [];
  if (bytes.length === 0) throw new FitsError(`${source}: the file is empty`, { byteOffset: 0 });
  if (bytes.length < CARD || ascii(bytes, 0, 9) !== 'SIMPLE  =') {
    throw new FitsError(`${source}: not a FITS file: it must begin with the card "SIMPLE  =" (FITS Standard 4.0, section 4.4.1.1)`, { byteOffset: 0, hdu: 0 });
  }
  const hdus: FitsHdu[] = [];
  let offset = 0;
  while (offset < bytes.length) {
    const index = hdus.length;
    if (index > 0 && bytes.length - offset >= 8 && ascii(bytes, offset, offset + 8) === 'XTENSION' && bytes.length - offset < FITS_BLOCK) {
      // An extension whose header is cut off: reading on would take the file for its primary HDU alone.
      throw new FitsError(
        `${source}: truncated file: HDU ${index} (an extension starting at byte ${offset}) is cut off inside its header, ${bytes.length - offset} of at least ${FITS_BLOCK} bytes present`,
        { byteOffset: bytes.length, hdu: index },
      );
    }
    if (index > 0 && (bytes.length - offset < FITS_BLOCK || ascii(bytes, offset, offset + 8) !== 'XTENSION')) {
      // Astropy also ignores what follows the last HDU when it is not an extension; say so.
      warnings.push(`${source}: ${bytes.length - offset} bytes after the last HDU (from byte ${offset}) are not a FITS extension and were ignored`);
      break;
    }
    const { header, end } = readHeader(bytes, offset, index, source);
    const { kind, dataBytes } = layoutOf(header, index, source, offset);
    const dataOffset = end;
    const padded = Math.ceil(dataBytes / FITS_BLOCK) * FITS_BLOCK;
    let truncated = false;
    if (dataOffset + dataBytes > bytes.length) {
      if (!options.allowTruncatedData) {
        throw new FitsError(
          `${source}: truncated file: HDU ${index} declares ${dataBytes} bytes of data from byte ${dataOffset}, but the file ends at byte ${bytes.length} (${dataOffset + dataBytes - bytes.length} bytes missing)`,
          { byteOffset: bytes.length, hdu: index },
        );
      }
      truncated = true;
      warnings.push(`${source}: HDU ${index} data is cut short (file ends at byte ${bytes.length}); only its header was read`);
    } else if (dataOffset + padded > bytes.length) {
      warnings.push(`${source}: the file length ${bytes.length} is not a multiple of the FITS block size 2880 (HDU ${index} lacks its final padding); the data itself is complete`);
    }
    const name = index === 0 ? 'PRIMARY' : (header.getString('EXTNAME') ?? '').trim();
    const hdu: FitsHdu = { index, kind, name, header, headerOffset: offset, dataOffset, dataBytes, truncated };
    if (kind === 'bintable' && !truncated) hdu.table = new FitsTable(bytes, header, dataOffset, dataBytes, index, source);
    hdus.push(hdu);
    if (truncated) break;
    offset = dataOffset + padded;
  }
  return { hdus, warnings };
}

// ---------------------------------------------------------------------------------------------
// Binary tables (section 7.3)

/** TFORM data type letters and their byte widths (section 7.3.3.1, Table 18). X is in bits. */
const TYPE_BYTES: Record<string, number> = { L: 1, X: 1, B: 1, I: 2, J: 4, K: 8, A: 1, E: 4, D: 8, C: 8, M: 16, P: 8, Q: 16 };

export type FitsColumnType = 'L' | 'X' | 'B' | 'I' | 'J' | 'K' | 'A' | 'E' | 'D' | 'C' | 'M';

export interface FitsColumn {
  /** 1-based column number n of TTYPEn/TFORMn. */
  number: number;
  /** TTYPEn with trailing blanks removed (`col<n>` when absent). */
  name: string;
  /** TFORMn as written. */
  format: string;
  type: FitsColumnType;
  /** Repeat count r of rT (for P/Q: 1 descriptor per row). */
  repeat: number;
  /** Variable-length array descriptor type, when TFORM is rPt(max) / rQt(max) (section 7.3.5). */
  variableLength?: 'P' | 'Q';
  unit?: string;
  /** TNULLn (integer columns only). */
  nullValue?: number | bigint;
  scale: number;
  zero: number | bigint;
  /** Parsed TDIMn, fastest axis first, when present. */
  dims?: number[];
  /** Byte offset of the field within a row. */
  offsetInRow: number;
  /** Bytes of the field in each row. */
  width: number;
}

/** A decoded cell. Repeat > 1 and variable-length arrays give arrays; 64-bit integers give bigint. */
export type FitsCell = string | number | bigint | boolean | FitsComplex | null | FitsCell[];

/**
 * TDIMn = '(l,m,n…)' (section 7.3.2): every axis a whole number ≥ 1 and their product at most the
 * repeat count. An axis of 0 would make reshape() never advance, so it is refused here, by name.
 */
function parseTdim(tdim: string, repeat: number, variableLength: boolean, w: { source: string; hduIndex: number; n: number; name: string; card?: number }): number[] {
  const where = `${w.source}: HDU ${w.hduIndex} header card ${w.card}: column ${w.n} (${w.name}) has TDIM${w.n} = '${tdim.trim()}'`;
  const m = /^\s*\(\s*(\d+(?:\s*,\s*\d+)*)\s*\)\s*$/.exec(tdim);
  if (!m) throw new FitsError(`${where}, which is not of the form '(l,m,…)' with whole numbers`, { hdu: w.hduIndex, keyword: `TDIM${w.n}`, column: w.name });
  const dims = m[1].split(',').map((x) => Number(x.trim()));
  if (dims.some((d) => !Number.isSafeInteger(d) || d < 1)) {
    throw new FitsError(`${where}: every axis must be at least 1`, { hdu: w.hduIndex, keyword: `TDIM${w.n}`, column: w.name });
  }
  const product = dims.reduce((a, b) => a * b, 1);
  if (!variableLength && product > repeat) {
    throw new FitsError(`${where}: the axes hold ${product} elements but TFORM${w.n} gives ${repeat}`, { hdu: w.hduIndex, keyword: `TDIM${w.n}`, column: w.name });
  }
  return dims;
}

/**
 * Element reads allowed while decoding one table: a few full passes over its bytes. Only
 * variable-length descriptors pointing at the same heap bytes again and again can get there.
 */
function workLimitFor(dataBytes: number): number {
  return 32 * dataBytes + 1_000_000;
}

function parseTform(tform: string): { repeat: number; type: string; vla?: 'P' | 'Q'; vlaType?: string } | null {
  const m = /^\s*(\d*)([LXBIJKAEDCMPQ])([LXBIJKAEDCM])?(\(\s*\d*\s*\))?\s*$/.exec(tform) ?? /^\s*(\d*)([LXBIJKAEDCM])/.exec(tform);
  if (!m) return null;
  const repeat = m[1] === '' ? 1 : Number(m[1]);
  if (m[2] === 'P' || m[2] === 'Q') {
    if (!m[3]) return null;
    return { repeat, type: m[3], vla: m[2], vlaType: m[3] };
  }
  return { repeat, type: m[2] };
}

export class FitsTable {
  readonly columns: FitsColumn[];
  readonly rowCount: number;
  readonly rowBytes: number;
  private readonly view: DataView;
  private readonly bytes: Uint8Array;
  private readonly dataOffset: number;
  private readonly heapOffset: number;
  private readonly heapEnd: number;
  private readonly hduIndex: number;
  private readonly source: string;
  private readonly cache = new Map<string, FitsCell[]>();
  private readonly workLimit: number;
  private work = 0;

  constructor(bytes: Uint8Array, header: FitsHeader, dataOffset: number, dataBytes: number, hduIndex: number, source: string) {
    this.bytes = bytes;
    this.view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    this.dataOffset = dataOffset;
    this.hduIndex = hduIndex;
    this.source = source;
    const at = (kw: string) => header.card(kw)?.cardNumber;
    this.rowBytes = header.getNumber('NAXIS1') ?? 0;
    this.rowCount = header.getNumber('NAXIS2') ?? 0;
    const tfields = header.get('TFIELDS');
    if (typeof tfields !== 'number' || !Number.isInteger(tfields) || tfields < 0 || tfields > 999) {
      throw new FitsError(`${source}: HDU ${hduIndex}: TFIELDS must be an integer 0..999, found ${tfields === undefined ? 'none' : String(tfields)}`, { hdu: hduIndex, keyword: 'TFIELDS' });
    }
    // Rows are bounded by the bytes present (readFits has checked NAXIS1 × NAXIS2 against the file);
    // rows of zero bytes would not be, so a table declaring rows but no bytes per row is refused
    // rather than looped over (NAXIS2 = 3e9 with NAXIS1 = 0 ran to out-of-memory).
    if (this.rowCount > 0 && this.rowBytes === 0) {
      throw new FitsError(
        `${source}: HDU ${hduIndex} header card ${at('NAXIS2')}: NAXIS2 = ${this.rowCount} rows of NAXIS1 = 0 bytes: rows that hold no bytes cannot be read (the file holds ${dataBytes} bytes of table data)`,
        { hdu: hduIndex, keyword: 'NAXIS2' },
      );
    }
    const mainBytes = this.rowBytes * this.rowCount;
    const theap = header.getNumber('THEAP') ?? mainBytes;
    // THEAP ≥ NAXIS1 × NAXIS2 and the heap inside the data (section 7.3.5).
    if (!Number.isInteger(theap) || theap < mainBytes || theap > dataBytes) {
      throw new FitsError(`${source}: HDU ${hduIndex} header card ${at('THEAP')}: THEAP = ${theap} must lie between NAXIS1 × NAXIS2 = ${mainBytes} and the data size ${dataBytes}`, {
        hdu: hduIndex,
        keyword: 'THEAP',
      });
    }
    this.heapOffset = dataOffset + theap;
    this.heapEnd = dataOffset + dataBytes;
    this.workLimit = workLimitFor(dataBytes);
    const columns: FitsColumn[] = [];
    let offsetInRow = 0;
    for (let n = 1; n <= tfields; n++) {
      const tform = header.getString(`TFORM${n}`);
      const name = (header.getString(`TTYPE${n}`) ?? '').trim() || `col${n}`;
      if (tform === undefined) {
        throw new FitsError(`${source}: HDU ${hduIndex}: column ${n} (${name}) has no TFORM${n} card`, { hdu: hduIndex, keyword: `TFORM${n}`, column: name });
      }
      const parsed = parseTform(tform);
      if (!parsed || !(parsed.type in TYPE_BYTES)) {
        throw new FitsError(
          `${source}: HDU ${hduIndex} header card ${at(`TFORM${n}`)}: column ${n} (${name}) has unknown TFORM${n} = '${tform}' (expected rT with T one of L X B I J K A E D C M, or rPt/rQt)`,
          { hdu: hduIndex, keyword: `TFORM${n}`, column: name },
        );
      }
      const { repeat, type, vla } = parsed;
      let width: number;
      if (vla) width = vla === 'P' ? 8 : 16;
      else if (type === 'X') width = Math.ceil(repeat / 8);
      else width = repeat * TYPE_BYTES[type];
      const tnull = header.get(`TNULL${n}`);
      const tscal = header.get(`TSCAL${n}`);
      const tzero = header.get(`TZERO${n}`);
      const unit = header.getString(`TUNIT${n}`)?.trim();
      const tdim = header.getString(`TDIM${n}`);
      let dims: number[] | undefined;
      if (tdim) dims = parseTdim(tdim, repeat, vla !== undefined, { source, hduIndex, n, name, card: at(`TDIM${n}`) });
      columns.push({
        number: n,
        name,
        format: tform.trim(),
        type: type as FitsColumnType,
        repeat,
        variableLength: vla,
        unit: unit || undefined,
        nullValue: typeof tnull === 'number' || typeof tnull === 'bigint' ? tnull : undefined,
        scale: typeof tscal === 'number' ? tscal : 1,
        zero: typeof tzero === 'number' || typeof tzero === 'bigint' ? tzero : 0,
        dims,
        offsetInRow,
        width,
      });
      offsetInRow += width;
    }
    if (offsetInRow !== this.rowBytes) {
      throw new FitsError(`${source}: HDU ${hduIndex}: the columns' TFORMs add up to ${offsetInRow} bytes per row but NAXIS1 = ${this.rowBytes}`, { hdu: hduIndex, keyword: 'NAXIS1' });
    }
    this.columns = columns;
  }

  column(name: string): FitsColumn | undefined {
    return this.columns.find((c) => c.name === name) ?? this.columns.find((c) => c.name.toLowerCase() === name.toLowerCase());
  }

  private requireColumn(name: string): FitsColumn {
    const col = this.column(name);
    if (!col) {
      throw new FitsError(`${this.source}: HDU ${this.hduIndex} has no column "${name}" (columns: ${this.columns.map((c) => c.name).join(', ')})`, { hdu: this.hduIndex, column: name });
    }
    return col;
  }

  /** Every cell of a column, decoded with scaling and nulls applied (cached). */
  getColumn(name: string): FitsCell[] {
    const col = this.requireColumn(name);
    const cached = this.cache.get(col.name);
    if (cached) return cached;
    const out: FitsCell[] = new Array(this.rowCount);
    for (let r = 0; r < this.rowCount; r++) out[r] = this.cell(col, r);
    this.cache.set(col.name, out);
    return out;
  }

  /**
   * A numeric scalar column as Float64Array, NaN for nulls: the fast path for photometry.
   * 64-bit integers are converted to the nearest double. Strings are parsed as numbers (blank → NaN).
   */
  getFloat64(name: string): Float64Array {
    const col = this.requireColumn(name);
    const out = new Float64Array(this.rowCount);
    if (col.variableLength || (col.repeat !== 1 && col.type !== 'A') || col.type === 'C' || col.type === 'M' || col.type === 'X') {
      throw new FitsError(`${this.source}: HDU ${this.hduIndex}: column "${col.name}" (TFORM ${col.format}) is not a numeric scalar column`, { hdu: this.hduIndex, column: col.name });
    }
    const v = this.view;
    const scale = col.scale;
    const zero = Number(col.zero);
    const nul = col.nullValue === undefined ? undefined : Number(col.nullValue);
    let pos = this.dataOffset + col.offsetInRow;
    for (let r = 0; r < this.rowCount; r++, pos += this.rowBytes) {
      let x: number;
      switch (col.type) {
        case 'E':
          x = v.getFloat32(pos);
          break;
        case 'D':
          x = v.getFloat64(pos);
          break;
        case 'B':
          x = v.getUint8(pos);
          break;
        case 'I':
          x = v.getInt16(pos);
          break;
        case 'J':
          x = v.getInt32(pos);
          break;
        case 'K': {
          const big = v.getBigInt64(pos);
          if (col.nullValue !== undefined && big === BigInt(col.nullValue)) {
            out[r] = NaN;
            continue;
          }
          x = Number(big);
          break;
        }
        case 'L': {
          const b = v.getUint8(pos);
          out[r] = b === 0x54 ? 1 : b === 0x46 ? 0 : NaN;
          continue;
        }
        case 'A': {
          const s = this.readString(pos, col.width).trim();
          out[r] = s === '' ? NaN : Number(s);
          continue;
        }
        default:
          x = NaN;
      }
      if (col.type !== 'K' && nul !== undefined && x === nul && col.type !== 'E' && col.type !== 'D') {
        out[r] = NaN;
        continue;
      }
      out[r] = scale === 1 && zero === 0 ? x : zero + scale * x;
    }
    return out;
  }

  /** Rows as plain objects keyed by column name (convenient, slower than getColumn). */
  rows(): Record<string, FitsCell>[] {
    const cols = this.columns.map((c) => this.getColumn(c.name));
    const out: Record<string, FitsCell>[] = [];
    for (let r = 0; r < this.rowCount; r++) {
      const row: Record<string, FitsCell> = {};
      this.columns.forEach((c, i) => (row[c.name] = cols[i][r]));
      out.push(row);
    }
    return out;
  }

  private readString(pos: number, width: number): string {
    // Strings end at the first NUL (section 7.3.3.1); trailing blanks are not significant.
    let end = pos;
    const stop = pos + width;
    while (end < stop && this.bytes[end] !== 0) end++;
    return ascii(this.bytes, pos, end).replace(/ +$/, '');
  }

  private cell(col: FitsColumn, row: number): FitsCell {
    const pos = this.dataOffset + row * this.rowBytes + col.offsetInRow;
    if (col.variableLength) {
      const count = col.variableLength === 'P' ? this.view.getInt32(pos) : Number(this.view.getBigInt64(pos));
      const offset = col.variableLength === 'P' ? this.view.getInt32(pos + 4) : Number(this.view.getBigInt64(pos + 8));
      const start = this.heapOffset + offset;
      const size = col.type === 'X' ? Math.ceil(count / 8) : count * TYPE_BYTES[col.type];
      if (count < 0 || offset < 0 || start + size > this.heapEnd) {
        throw new FitsError(
          `${this.source}: HDU ${this.hduIndex} column "${col.name}" row ${row + 1}: variable-length array descriptor (${count} elements at heap offset ${offset}) points outside the heap (byte ${start})`,
          { hdu: this.hduIndex, column: col.name, byteOffset: pos },
        );
      }
      return this.decode(col, start, count, size, true);
    }
    return this.decode(col, pos, col.repeat, col.width, false);
  }

  private decode(col: FitsColumn, pos: number, count: number, width: number, forceArray: boolean): FitsCell {
    const t = col.type;
    this.work += Math.max(1, t === 'A' ? width : count);
    if (this.work > this.workLimit) {
      throw new FitsError(
        `${this.source}: HDU ${this.hduIndex} column "${col.name}": decoding needs more than ${this.workLimit} element reads (32 per byte of table data); its variable-length arrays point at the same heap bytes again and again`,
        { hdu: this.hduIndex, column: col.name, byteOffset: pos },
      );
    }
    if (t === 'A') {
      const len = col.dims && col.dims.length > 1 && !forceArray ? col.dims[0] : 0;
      if (len > 0) {
        const parts: FitsCell[] = [];
        for (let p = pos; p + len <= pos + width; p += len) parts.push(this.readString(p, len));
        return parts;
      }
      return this.readString(pos, width);
    }
    if (t === 'X') {
      const bits: boolean[] = [];
      for (let i = 0; i < count; i++) bits.push(((this.bytes[pos + (i >> 3)] >> (7 - (i & 7))) & 1) === 1);
      return bits;
    }
    const size = TYPE_BYTES[t];
    const values: FitsCell[] = [];
    for (let i = 0; i < count; i++) values.push(this.scalar(col, pos + i * size));
    if (count === 1 && !forceArray) return values[0];
    if (col.dims && col.dims.length > 1 && !forceArray) return reshape(values, col.dims);
    return values;
  }

  private scalar(col: FitsColumn, pos: number): FitsCell {
    const v = this.view;
    switch (col.type) {
      case 'L': {
        const b = v.getUint8(pos);
        return b === 0x54 ? true : b === 0x46 ? false : null;
      }
      case 'B':
      case 'I':
      case 'J': {
        const x = col.type === 'B' ? v.getUint8(pos) : col.type === 'I' ? v.getInt16(pos) : v.getInt32(pos);
        if (col.nullValue !== undefined && x === Number(col.nullValue)) return null;
        return scaleNumber(x, col.scale, col.zero);
      }
      case 'K': {
        const x = v.getBigInt64(pos);
        if (col.nullValue !== undefined && x === BigInt(col.nullValue)) return null;
        if (col.scale === 1 && (typeof col.zero === 'bigint' || Number.isInteger(col.zero))) {
          const z = BigInt(col.zero);
          const y = x + z;
          return y >= -9007199254740991n && y <= 9007199254740991n ? Number(y) : y;
        }
        return Number(col.zero) + col.scale * Number(x);
      }
      case 'E':
      case 'D': {
        const x = col.type === 'E' ? v.getFloat32(pos) : v.getFloat64(pos);
        if (Number.isNaN(x)) return null;
        return scaleNumber(x, col.scale, col.zero);
      }
      case 'C':
      case 'M': {
        const re = col.type === 'C' ? v.getFloat32(pos) : v.getFloat64(pos);
        const im = col.type === 'C' ? v.getFloat32(pos + 4) : v.getFloat64(pos + 8);
        if (Number.isNaN(re) || Number.isNaN(im)) return null;
        return { re: scaleNumber(re, col.scale, col.zero), im: scaleNumber(im, col.scale, 0) };
      }
      default:
        return null;
    }
  }
}

/** physical = TZERO + TSCAL × stored (section 7.3.2). */
function scaleNumber(x: number, scale: number, zero: number | bigint): number {
  // Unscaled columns keep their stored value exactly (0 + -0 would lose the sign of zero).
  if (scale === 1 && (zero === 0 || zero === 0n)) return x;
  return Number(zero) + scale * x;
}

/** Nests a flat, Fortran-ordered (first axis fastest) array into arrays following TDIM. */
function reshape(values: FitsCell[], dims: number[]): FitsCell[] {
  if (dims.length <= 1) return values;
  // parseTdim guarantees axes ≥ 1; a zero here would loop forever.
  const inner = Math.max(1, dims[0]);
  const grouped: FitsCell[] = [];
  for (let i = 0; i < values.length; i += inner) grouped.push(values.slice(i, i + inner));
  return reshape(grouped, dims.slice(1));
}

// ---------------------------------------------------------------------------------------------
// Convenience entry points

export interface ReadFitsTableOptions extends ReadFitsOptions {
  /** HDU index or EXTNAME; default: the first BINTABLE HDU. */
  hdu?: number | string;
}

/** The first (or the chosen) binary table of a FITS file. */
export function readFitsTable(bytes: Uint8Array, options: ReadFitsTableOptions = {}): FitsTable & { hdu: FitsHdu } {
  const file = readFits(bytes, options);
  const source = options.source ?? 'FITS file';
  let hdu: FitsHdu | undefined;
  if (options.hdu === undefined) hdu = file.hdus.find((h) => h.kind === 'bintable');
  else if (typeof options.hdu === 'number') hdu = file.hdus[options.hdu];
  else hdu = file.hdus.find((h) => h.name.toUpperCase() === String(options.hdu).toUpperCase());
  const listing = file.hdus.map((h) => `${h.index}${h.name ? ` ${h.name}` : ''} (${h.kind})`).join(', ');
  if (!hdu) throw new FitsError(`${source}: no ${options.hdu === undefined ? 'binary table' : `HDU ${options.hdu}`} found; the file holds ${listing}`);
  if (!hdu.table) throw new FitsError(`${source}: HDU ${hdu.index} is ${hdu.kind === 'table' ? 'an ASCII table' : `a ${hdu.kind} HDU`}, not a binary table; the file holds ${listing}`, { hdu: hdu.index });
  return Object.assign(hdu.table, { hdu });
}

/** Per-observation metadata from an image header (docs/science.md, "Interfaces"). */
export interface FitsObservationMeta {
  hdu: number;
  object?: string;
  filter?: string;
  exptimeS?: number;
  dateObs?: string;
  airmass?: number;
  raDeg?: number;
  decDeg?: number;
  /** Which keywords gave RA/Dec (e.g. 'RA/DEC', 'OBJRA/OBJDEC', 'CRVAL1/CRVAL2'). */
  positionFrom?: string;
  zeroPointMag?: number;
  zeroPointErrMag?: number;
  /** The keyword the zero-point came from. */
  zeroPointKeyword?: string;
  /** The full headers read (the chosen HDU's cards; the primary's apply where it lacks a keyword). */
  header: FitsHeader;
  primaryHeader: FitsHeader;
  warnings: string[];
}

/** Zero-point keywords in the order we trust them; all are in common use by imaging pipelines. */
export const ZERO_POINT_KEYWORDS = ['MAGZP', 'MAGZPT', 'MAGZERO', 'PHOTZP', 'ZEROPT', 'ZPMAG', 'ZP', 'MAGZPT_AB'];
const ZERO_POINT_ERR_KEYWORDS: Record<string, string[]> = {
  MAGZP: ['MAGZPERR', 'MAGZPUNC', 'MAGZPER'],
  MAGZPT: ['MAGZPTER', 'MAGZPTERR', 'MAGZPERR'],
  MAGZERO: ['MAGZEROE', 'MAGZERR'],
  PHOTZP: ['PHOTZPER', 'PHOTZPERR', 'PHOTZPE'],
  ZEROPT: ['ZEROPTER', 'ZEROPTE'],
  ZPMAG: ['ZPMAGERR', 'ZPERR'],
  ZP: ['ZPERR', 'ZP_ERR', 'EZP'],
  MAGZPT_AB: ['MAGZPTER'],
};

/** Sexagesimal 'hh:mm:ss.s' / 'dd mm ss' or decimal; hours → degrees when asHours. */
export function parseAngle(value: FitsValue | undefined, asHours: boolean): number | undefined {
  if (typeof value === 'number') return value;
  if (typeof value !== 'string') return undefined;
  const t = value.trim();
  if (t === '') return undefined;
  if (/^[+-]?\d+(\.\d*)?([eE][+-]?\d+)?$/.test(t)) return Number(t);
  const m = /^([+-]?)(\d+)[:\sdh]+(\d+)[:\sm']+(\d+(?:\.\d*)?)\s*[s"]?$/.exec(t);
  if (!m) return undefined;
  const sign = m[1] === '-' ? -1 : 1;
  const v = sign * (Number(m[2]) + Number(m[3]) / 60 + Number(m[4]) / 3600);
  return asHours ? v * 15 : v;
}

/**
 * Observation metadata of an image: FILTER, EXPTIME, DATE-OBS, AIRMASS, OBJECT, position and the
 * photometric zero-point. Reads headers only, so a header-only or truncated upload still works.
 */
export function readFitsImageHeader(bytes: Uint8Array, options: ReadFitsOptions & { hdu?: number } = {}): FitsObservationMeta {
  const file = readFits(bytes, { ...options, allowTruncatedData: true });
  const primary = file.hdus[0];
  const chosen =
    options.hdu !== undefined
      ? file.hdus[options.hdu]
      : (file.hdus.find((h) => (h.kind === 'primary' || h.kind === 'image') && h.dataBytes > 0) ?? primary);
  if (!chosen) throw new FitsError(`${options.source ?? 'FITS file'}: no HDU ${options.hdu}`);
  // The chosen HDU's own keywords win; an extension inherits what it lacks from the primary
  // (INHERIT convention, registered with the IAU FITS Working Group).
  const headers = chosen === primary ? [chosen.header] : [chosen.header, primary.header];
  const str = (...keys: string[]) => {
    for (const h of headers) {
      for (const k of keys) {
        const v = h.get(k);
        if (typeof v === 'string' && v.trim() !== '') return v.trim();
      }
    }
    return undefined;
  };
  const numIn = (h: FitsHeader, keys: string[]) => {
    for (const k of keys) {
      const v = h.get(k);
      if (typeof v === 'number' && Number.isFinite(v)) return v;
      if (typeof v === 'string' && v.trim() !== '' && Number.isFinite(Number(v))) return Number(v);
    }
    return undefined;
  };
  const num = (...keys: string[]) => {
    for (const h of headers) {
      const v = numIn(h, keys);
      if (v !== undefined) return v;
    }
    return undefined;
  };
  const meta: FitsObservationMeta = { hdu: chosen.index, header: chosen.header, primaryHeader: primary.header, warnings: file.warnings };
  meta.object = str('OBJECT', 'OBJNAME', 'TARGNAME');
  meta.filter = str('FILTER', 'FILTNAME', 'FILTER1', 'BAND');
  meta.exptimeS = num('EXPTIME', 'EXPOSURE', 'ITIME');
  meta.airmass = num('AIRMASS', 'SECZ');
  const date = str('DATE-OBS');
  const time = str('TIME-OBS', 'UT', 'UTSTART');
  meta.dateObs = date && !date.includes('T') && time ? `${date}T${time}` : date;
  const pairs: [string, string][] = [
    ['RA', 'DEC'],
    ['OBJRA', 'OBJDEC'],
    ['OBJCTRA', 'OBJCTDEC'],
    ['RA_OBJ', 'DEC_OBJ'],
  ];
  position: for (const h of headers) {
    for (const [rk, dk] of pairs) {
      const ra = h.get(rk);
      const dec = h.get(dk);
      if (ra === undefined || dec === undefined) continue;
      // Numbers are degrees (common practice); sexagesimal RA is in hours.
      const raDeg = parseAngle(ra, typeof ra === 'string' && /[:\sh]/.test(ra.trim()));
      const decDeg = parseAngle(dec, false);
      if (raDeg !== undefined && decDeg !== undefined) {
        meta.raDeg = raDeg;
        meta.decDeg = decDeg;
        meta.positionFrom = `${rk}/${dk}`;
        break position;
      }
      meta.warnings.push(`cannot read the position from ${rk} = ${String(ra)}, ${dk} = ${String(dec)}`);
    }
    const c1 = String(h.get('CTYPE1') ?? '');
    const c2 = String(h.get('CTYPE2') ?? '');
    const v1 = h.get('CRVAL1');
    const v2 = h.get('CRVAL2');
    if (c1.startsWith('RA') && c2.startsWith('DEC') && typeof v1 === 'number' && typeof v2 === 'number') {
      meta.raDeg = v1;
      meta.decDeg = v2;
      meta.positionFrom = 'CRVAL1/CRVAL2';
      break;
    }
  }
  zeroPoint: for (const h of headers) {
    for (const k of ZERO_POINT_KEYWORDS) {
      const v = numIn(h, [k]);
      if (v === undefined) continue;
      meta.zeroPointMag = v;
      meta.zeroPointKeyword = k;
      meta.zeroPointErrMag = numIn(h, ZERO_POINT_ERR_KEYWORDS[k] ?? []);
      break zeroPoint;
    }
  }
  return meta;
}
