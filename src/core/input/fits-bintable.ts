// FITS binary tables (FITS Standard 4.0, section 7.3): column descriptions and the decoder, column
// by column. Section numbers refer to the standard.
import { ascii, FitsError, FitsHeader, type FitsComplex } from './fits-header';
import type { ReadBudget } from './limits';

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
  private readonly budget?: ReadBudget;

  constructor(bytes: Uint8Array, header: FitsHeader, dataOffset: number, dataBytes: number, hduIndex: number, source: string, budget?: ReadBudget) {
    this.budget = budget;
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
    const budget = this.budget;
    for (let r = 0; r < this.rowCount; r++) {
      out[r] = this.cell(col, r);
      budget?.tick(() => `HDU ${this.hduIndex} column "${col.name}" row ${r + 1}`);
    }
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

  /** Whether a column's cells are arrays (a repeat count above 1, bits, or variable-length arrays). */
  isArrayColumn(name: string): boolean {
    const col = this.requireColumn(name);
    return col.variableLength !== undefined || (col.type !== 'A' && col.repeat !== 1);
  }

  /** How many elements a cell of an array column holds, read from TFORM or the descriptor (nothing decoded). */
  elementCount(name: string, row: number): number {
    const col = this.requireColumn(name);
    if (!col.variableLength) return col.repeat;
    const pos = this.dataOffset + row * this.rowBytes + col.offsetInRow;
    return col.variableLength === 'P' ? this.view.getInt32(pos) : Number(this.view.getBigInt64(pos));
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
