// Splitting delimited text: quoting per RFC 4180 (a quoted field holds delimiters, line breaks and
// "" for one quote), and the units and dashes lines of VizieR's tab-separated output. Star names
// are invented; the numbers are arbitrary inputs, not reference values.
import { describe, expect, it } from 'vitest';
import { decodeText } from './delimited';
import { parseDelimited } from './delimited-stream';

describe('RFC 4180 splitting', () => {
  it('handles quotes, doubled quotes, delimiters and line breaks inside quotes, CRLF, BOM and comments', () => {
    const text = '\ufeff# made by hand\n#second\nid,note,V\r\n"a,1","say ""hi""",9.5\r\nb,"two\nlines",10\r\n\r\nc, plain ,11';
    const t = parseDelimited(text);
    expect(t.comments).toEqual(['made by hand', 'second']);
    expect(t.header).toEqual(['id', 'note', 'V']);
    expect(t.headerLine).toBe(3);
    expect(t.rows).toEqual([
      ['a,1', 'say "hi"', '9.5'],
      ['b', 'two\nlines', '10'],
      ['c', ' plain ', '11'],
    ]);
    expect(t.lines).toEqual([4, 5, 8]);
  });

  it('detects tab and semicolon delimiters', () => {
    expect(parseDelimited('id\tV\nx\t1').rows).toEqual([['x', '1']]);
    expect(parseDelimited('id;V\nx;1').delimiter).toBe(';');
  });

  it('reports an unclosed quote with its line', () => {
    expect(() => parseDelimited('id,V\nx,"9.5\ny,1\n', { source: 's.csv' })).toThrow(/s\.csv:2: a quoted field opened here is never closed/);
  });

  it('refuses binary content and names what it looks like', () => {
    expect(() => decodeText(new Uint8Array([0x69, 0x64, 0x00, 0x01]), 'x.csv')).toThrow(/x\.csv: binary content \(byte 0x00 at byte offset 2\)/);
    expect(() => decodeText(new Uint8Array([0x50, 0x4b, 3, 4, 0, 0]), 'x.csv')).toThrow(/ZIP archive/);
    expect(() => decodeText(new TextEncoder().encode('SIMPLE  =                    T'), 'x.csv')).toThrow(/this is a FITS file/);
    expect(() => decodeText(new Uint8Array([0xff, 0xfe, 0x69, 0]), 'x.csv')).toThrow(/UTF-16 text .* save it as UTF-8/);
  });

  it('refuses invalid UTF-8 naming its byte offset and line (Latin-1 is not guessed)', () => {
    // 'id\n' then é in Latin-1 (0xE9), which UTF-8 reads as the start of a three-byte character.
    expect(() => decodeText(new Uint8Array([0x69, 0x64, 0x0a, 0xe9]), 'x.csv')).toThrow('x.csv: invalid UTF-8 at byte offset 3 (line 2; bytes 0xE9); Starkiln reads text files as UTF-8');
    // Overlong forms and UTF-16 surrogates are not UTF-8 either (RFC 3629, section 3).
    const enc = (s: string) => Array.from(new TextEncoder().encode(s));
    expect(() => decodeText(new Uint8Array([...enc('id,V\nember-1,'), 0xc0, 0xaf, ...enc(',9\n')]), 'x.csv')).toThrow(/byte offset 13 \(line 2; bytes 0xC0 0xAF/);
    expect(() => decodeText(new Uint8Array([...enc('id\r\nx\r\ny'), 0xed, 0xa0, 0x80]), 'x.csv')).toThrow(/byte offset 8 \(line 3; bytes 0xED 0xA0 0x80/);
    // Valid UTF-8 of every length is read.
    expect(decodeText(new TextEncoder().encode('é€𝛼'), 'x.csv')).toBe('é€𝛼');
  });
});

// VizieR's tab-separated download puts a units line and a dashes line under the column names
// (common practice of VizieR's TSV output, written here from memory).
describe('units and dashes lines under the header (VizieR TSV)', () => {
  it('skips both lines, keeps the units (blank = none) and the file lines of the data rows', () => {
    const text = ['#VizieR-style header', '', 'Name\tRAJ2000\tVmag\te_Vmag', '\tdeg\tmag\tmag', '----\t-------\t-----\t----', 'a   \t 10.5\t 9.81\t0.02', 'b   \t 11.0\t10.10\t0.03'].join('\n');
    const t = parseDelimited(text);
    expect(t.header).toEqual(['Name', 'RAJ2000', 'Vmag', 'e_Vmag']);
    expect(t.headerLine).toBe(3);
    expect(t.units).toEqual([undefined, 'deg', 'mag', 'mag']);
    expect(t.rows).toEqual([
      ['a   ', ' 10.5', ' 9.81', '0.02'],
      ['b   ', ' 11.0', '10.10', '0.03'],
    ]);
    expect(t.lines).toEqual([6, 7]);
  });

  it('skips a dashes line alone, without units', () => {
    const t = parseDelimited('id\tV\tV_err\n--\t---\t-----\nx\t9.5\t0.01');
    expect(t.units).toBeUndefined();
    expect(t.rows).toEqual([['x', '9.5', '0.01']]);
    expect(t.lines).toEqual([3]);
  });

  it('leaves ordinary first rows alone: text without dashes below, numbers above dashes, "--" missing values', () => {
    // A first data row of words is data when no dashes line follows it.
    expect(parseDelimited('id,band\nkiln-1,V\nkiln-2,B').rows).toEqual([['kiln-1', 'V'], ['kiln-2', 'B']]);
    // A line holding a number is no units line, so neither line is skipped.
    const numbers = parseDelimited('id\tV\nx\t9.5\n--\t--');
    expect(numbers.rows).toEqual([['x', '9.5'], ['--', '--']]);
    expect(numbers.units).toBeUndefined();
    // A row of missing values in a one-column file stays a row.
    expect(parseDelimited('V\n--\n9.5').rows).toEqual([['--'], ['9.5']]);
  });
});
