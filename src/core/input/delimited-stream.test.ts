// The streaming reader gives the same table whatever the chunk boundaries: every fixture and a set
// of awkward texts, cut into pieces of 1, 2, 3, 7 and 64 characters and at random places, against
// the text given in one piece (parseDelimited); and the records of the fixtures against Python's
// csv module (a general-purpose RFC 4180 reader, Debian's /usr/bin/python3).
import { spawnSync } from 'node:child_process';
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { DelimitedError } from './delimited';
import { DelimitedStream, parseDelimited } from './delimited-stream';

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

describe('DelimitedStream gives the same table whatever the chunk boundaries', () => {
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

// An outside reference for the scanner itself: Python's csv module (RFC 4180 quoting, "" for one
// quote, line breaks inside quotes) on the same texts. Our reader also drops leading '#' comment
// lines, blank lines and a VizieR units/dashes pair, and trims the header names: the reference is
// given those rules, not our code.
const PYTHON_RECORDS = `
import csv, io, json, re, sys
texts = json.load(sys.stdin)
out = []
for t in texts:
    text, delim = t['text'], t['delimiter']
    if text.startswith('\\ufeff'): text = text[1:]
    lines = text.splitlines(True)
    while lines and (lines[0].startswith('#') or lines[0].strip() == ''): lines.pop(0)
    recs = [r for r in csv.reader(io.StringIO(''.join(lines), newline=''), delimiter=delim) if not (len(r) <= 1 and ''.join(r).strip() == '')]
    if recs: recs[0] = [h.strip() for h in recs[0]]
    rule = lambda r: r is not None and len(r) == len(recs[0]) and all(re.fullmatch(r'\\s*-+\\s*', f) for f in r)
    number = lambda f: f.strip() != '' and re.fullmatch(r'\\s*[-+]?(\\d+\\.?\\d*|\\.\\d+)([eE][-+]?\\d+)?\\s*', f) is not None
    at = lambda i: recs[i] if i < len(recs) else None
    if recs and len(recs[0]) >= 2:
        if rule(at(1)): del recs[1:2]
        elif at(1) is not None and len(recs[1]) == len(recs[0]) and rule(at(2)) and not any(number(f) for f in recs[1]): del recs[1:3]
    out.append(recs)
print(json.dumps(out))
`;

describe('records agree with Python csv (Debian /usr/bin/python3)', () => {
  it('on every fixture and awkward text', () => {
    const cases = texts.map(([name, text]) => {
      const t = parseDelimited(text, { source: name });
      return { name, text, delimiter: t.delimiter, ours: [t.header, ...t.rows] };
    });
    const r = spawnSync('/usr/bin/python3', ['-c', PYTHON_RECORDS], { input: JSON.stringify(cases.map(({ text, delimiter }) => ({ text, delimiter }))), encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
    expect(r.status, r.stderr).toBe(0);
    const reference = JSON.parse(r.stdout) as string[][][];
    cases.forEach((c, i) => expect(c.ours, c.name).toEqual(reference[i]));
  });
});
