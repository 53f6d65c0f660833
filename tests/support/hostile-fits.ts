// Builds small FITS files card by card (FITS Standard 4.0: 80-byte cards, 2880-byte blocks) for the
// hostile-input tests: declared sizes the bytes cannot hold, axes of zero, headers cut short.

const BLOCK = 2880;

/** One 80-character header card; strings are quoted as section 4.2.1 says. */
export function card(keyword: string, value?: string | number | boolean): string {
  if (value === undefined) return keyword.padEnd(80, ' ');
  const text = typeof value === 'string' ? `'${value.replace(/'/g, "''").padEnd(8, ' ')}'` : typeof value === 'boolean' ? (value ? 'T' : 'F') : String(value);
  const field = typeof value === 'string' ? text.padEnd(20, ' ') : text.padStart(20, ' ');
  return `${keyword.padEnd(8, ' ')}= ${field}`.padEnd(80, ' ');
}

/** A header of the given cards plus END, padded with blanks to whole blocks. */
export function header(cards: string[]): Buffer {
  const text = [...cards, card('END')].join('');
  return Buffer.from(text.padEnd(Math.ceil(text.length / BLOCK) * BLOCK, ' '), 'latin1');
}

/** Data padded with zeros to whole blocks. */
export function data(bytes: Buffer): Buffer {
  return Buffer.concat([bytes, Buffer.alloc((BLOCK - (bytes.length % BLOCK)) % BLOCK)]);
}

export const primary = () => header([card('SIMPLE', true), card('BITPIX', 8), card('NAXIS', 0), card('EXTEND', true)]);

export function bintableHeader(naxis1: number, naxis2: number, columns: string[][], extra: string[] = []): Buffer {
  return header([
    card('XTENSION', 'BINTABLE'),
    card('BITPIX', 8),
    card('NAXIS', 2),
    card('NAXIS1', naxis1),
    card('NAXIS2', naxis2),
    card('PCOUNT', 0),
    card('GCOUNT', 1),
    card('TFIELDS', columns.length),
    ...columns.flat(),
    ...extra,
  ]);
}

/** 5 760 bytes: a table declaring `rows` rows of zero bytes and no columns. */
export function zeroWidthRows(rows: number): Buffer {
  return Buffer.concat([primary(), bintableHeader(0, rows, [])]);
}

/** One row: an 8-character id and a 5E column whose TDIM has an axis of 0. */
export function zeroAxisTdim(tdim = '(0,5)'): Buffer {
  const row = Buffer.alloc(28);
  row.write('ember-01', 0, 'latin1');
  for (let i = 0; i < 5; i++) row.writeFloatBE(9 + i / 10, 8 + i * 4);
  return Buffer.concat([
    primary(),
    bintableHeader(28, 1, [
      [card('TTYPE1', 'id'), card('TFORM1', '8A')],
      [card('TTYPE2', 'V'), card('TFORM2', '5E'), card('TDIM2', tdim)],
    ]),
    data(row),
  ]);
}

/** A valid two-column table of `rows` invented stars (id, V), as a base for cuts and mutations. */
export function smallTable(rows = 3): Buffer {
  const body = Buffer.alloc(rows * 16);
  for (let r = 0; r < rows; r++) {
    body.write(`ember-${String(r + 1).padStart(2, '0')}`.padEnd(8, ' '), r * 16, 'latin1');
    body.writeDoubleBE(9 + r / 10, r * 16 + 8);
  }
  return Buffer.concat([primary(), bintableHeader(16, rows, [[card('TTYPE1', 'id'), card('TFORM1', '8A')], [card('TTYPE2', 'V'), card('TFORM2', 'D')]]), data(body)]);
}
