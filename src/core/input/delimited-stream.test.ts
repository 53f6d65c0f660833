// The streaming reader must give exactly what the whole-text parser gives (delimited.ts, RFC 4180
// quoting), whatever the chunk boundaries: every fixture and a set of awkward texts, cut into
// pieces of 1, 2, 3, 7 and 64 characters and at random places.
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { DelimitedError, parseDelimited } from './delimited';
import { DelimitedStream } from './delimited-stream';

function streamed(text: string, cuts: number[], source = 't') {
  const rows: string[][] = [];
  const lines: number[] = [];
  let header: ReturnType<DelimitedStream['end']> | undefined;
  const s = new DelimitedStream(
    {
      header: (h) => {
        header = h;
      },
      row: (f, l) => {
        rows.push(f);
        lines.push(l);
      },
    },
    { source },
  );
  let at = 0;
  for (const c of cuts) {
    s.push(text.slice(at, c));
    at = c;
  }
  s.push(text.slice(at));
  const info = s.end();
  const h = header ?? info;
  return { delimiter: h.delimiter, header: h.header, headerLine: h.headerLine, rows, lines, comments: h.comments, ...(h.units ? { units: h.units } : {}) };
}

function everyN(n: number, len: number): number[] {
  const out: number[] = [];
  for (let i = n; i < len; i += n) out.push(i);
  return out;
}

function randomCuts(len: number, seed: number): number[] {
  let x = seed;
  const out: number[] = [];
  let at = 0;
  while (at < len) {
    x = (x * 1103515245 + 12345) % 2147483648;
    at += 1 + (x % 40);
    if (at < len) out.push(at);
  }
  return out;
}

const root = path.resolve(__dirname, '../../..');
const texts: [string, string][] = [
  ...readdirSync(path.join(root, 'fixtures/intake'))
    .filter((f) => /\.(csv|tsv)$/.test(f))
    .map((f) => [f, readFileSync(path.join(root, 'fixtures/intake', f), 'utf8')] as [string, string]),
  ['quoted line breaks', 'id,note,V\n"a,1","two\nlines",1.5\r\n"b""q""",x,2\n\n"c",,3'],
  ['comments and blank lines', '\ufeff# made by hand\n#second\n\n  \nid;V;B\n1;2;3\n'],
  ['units and rule lines (VizieR TSV)', 'RAJ2000\tVmag\te_Vmag\ndeg\tmag\tmag\n-------\t----\t------\n10.5\t7.1\t0.02\n'],
  ['rule line only', 'id,V\n--,--\nx,1\n'],
  ['CR line ends', 'id,V\rx,1\ry,2\r'],
  ['CRLF and a quote after text', 'id,V\r\nab"c,1\r\n"d" tail,2\r\n'],
  ['header only', 'id,V\n'],
  ['no final newline', 'id,V\nx,1'],
];

describe('DelimitedStream gives what parseDelimited gives', () => {
  for (const [name, text] of texts) {
    it(name, () => {
      const whole = parseDelimited(text, { source: 't' });
      for (const n of [1, 2, 3, 7, 64]) expect(streamed(text, everyN(n, text.length)), `pieces of ${n}`).toEqual(whole);
      for (const seed of [1, 2, 3]) expect(streamed(text, randomCuts(text.length, seed)), `random cuts ${seed}`).toEqual(whole);
    });
  }

  it('an unclosed quote is reported with its line, as the whole-text parser does', () => {
    const text = 'id,V\nx,1\n"y,2\nz,3\n';
    expect(() => parseDelimited(text, { source: 'f.csv' })).toThrow(/f\.csv:3: a quoted field opened here is never closed/);
    expect(() => streamed(text, everyN(3, text.length), 'f.csv')).toThrow(/f\.csv:3: a quoted field opened here is never closed/);
  });

  it('a record longer than the limit is refused instead of held in memory', () => {
    const s = new DelimitedStream({ header: () => undefined, row: () => undefined }, { source: 'f.csv', maxRecordChars: 100 });
    s.push('id,V\nx,1\n"');
    expect(() => s.push('a'.repeat(200))).toThrow(DelimitedError);
  });
});
