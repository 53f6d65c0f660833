// Child process of tests/fuzz-readers.test.ts: seeded mutations of the fixture FITS, VOTable and
// CSV/TSV files, each fed through every reader (readUpload with the default limits and with small
// ones, then the column mapping; readFits, readFitsTable with every column decoded and
// readFitsImageHeader; readVoTable; decodeText and parseDelimited). One JSON line per mutated file
// on stdout: which readers answered how, and how long the file took. Run in a child so that a
// reader that never returns is stopped by the parent's timeout instead of hanging the test run.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { STARTER_BAND_KEYS } from '../../src/core/bands';
import { applyMapping, detectMapping } from '../../src/core/input/mapping';
import { decodeText, DelimitedError } from '../../src/core/input/delimited';
import { parseDelimited } from '../../src/core/input/delimited-stream';
import { FitsError, readFits, readFitsImageHeader, readFitsTable } from '../../src/core/input/fits-file';
import { readUpload, UnreadableFile } from '../../src/core/input/table-file';
import { readVoTable, VoTableError } from '../../src/core/input/votable';

const root = path.resolve(import.meta.dirname, '../..');
const SEED = Number(process.argv[2] ?? 20261202);
const COUNT = Number(process.argv[3] ?? 360);

/** mulberry32: a small seeded generator, so every run mutates the same way. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const FIXTURES: { name: string; kind: 'fits' | 'xml' | 'text' }[] = [
  { name: 'fits/all_types.fits', kind: 'fits' },
  { name: 'fits/multi_hdu.fits', kind: 'fits' },
  { name: 'fits/scaled.fits', kind: 'fits' },
  { name: 'fits/image_header.fits', kind: 'fits' },
  { name: 'intake/wide_table.fits', kind: 'fits' },
  { name: 'crossmatch/crossmatch.fits', kind: 'fits' },
  { name: 'votable/wide_tabledata.vot', kind: 'xml' },
  { name: 'votable/wide_binary2.vot', kind: 'xml' },
  { name: 'crossmatch/crossmatch.vot', kind: 'xml' },
  { name: 'votable/not_a_votable.xml', kind: 'xml' },
  { name: 'intake/catalogue_wide.csv', kind: 'text' },
  { name: 'intake/canonical_long.csv', kind: 'text' },
  { name: 'intake/canonical_wide.tsv', kind: 'text' },
  { name: 'tables/wide_small.csv', kind: 'text' },
  { name: 'tables/long_small.csv', kind: 'text' },
  { name: 'tables/vizier_small.tsv', kind: 'text' },
  { name: 'crossmatch/vizier_style.tsv', kind: 'text' },
];

const enc = (s: string) => new TextEncoder().encode(s);
const TOKENS: Record<'fits' | 'xml' | 'text', string[]> = {
  fits: ['\u0000', 'END', "'", '=', ' 3000000000', ' -1', ' 0', ' 1e400'],
  xml: ['<', '>', '&', '&lol;', '<!DOCTYPE x [<!ENTITY a "b">]>', ']]>', '<![CDATA[', '\u0000', '"', "'", '<TR>', '</TD>', '<TD>1e400</TD>', '\uFEFF', '\u202E'],
  text: ['"', '""', ',', ';', '\t', '\n', '\r', '\u0000', '1e400', '-1e308', '\u202E', '\u200B', 'sep=;\n', '9,5', '#', '\uFFFD'],
};
const FITS_KEYWORDS = ['NAXIS', 'NAXIS1', 'NAXIS2', 'BITPIX', 'TFIELDS', 'PCOUNT', 'GCOUNT', 'THEAP', 'TFORM1', 'TFORM2', 'TFORM3', 'TDIM2', 'TSCAL2', 'TZERO2', 'TNULL1', 'XTENSION', 'EXTEND', 'SIMPLE'];
const FITS_VALUES = ['0', '1', '-1', '2', '999', '1000', '2147483647', '3000000000', '1e20', "'5E'", "'1PB(20000)'", "'(0,5)'", "'(5,1)'", "'BINTABLE'", "'IMAGE'", 'T', 'F', "'", ''];

function pick<T>(r: () => number, xs: readonly T[]): T {
  return xs[Math.floor(r() * xs.length)];
}

/** One mutation of `bytes`, and words for it. */
function mutate(bytes: Uint8Array, kind: 'fits' | 'xml' | 'text', r: () => number): { bytes: Uint8Array; how: string } {
  const n = bytes.length;
  const at = () => Math.floor(r() * n);
  const splice = (start: number, del: number, insert: Uint8Array) => {
    const out = new Uint8Array(n - del + insert.length);
    out.set(bytes.subarray(0, start), 0);
    out.set(insert, start);
    out.set(bytes.subarray(start + del), start + insert.length);
    return out;
  };
  const kinds = kind === 'fits' ? 7 : 6;
  const k = Math.floor(r() * kinds);
  switch (k) {
    case 0: {
      const out = bytes.slice();
      const flips = 1 + Math.floor(r() * 8);
      for (let i = 0; i < flips; i++) out[at()] = Math.floor(r() * 256);
      return { bytes: out, how: `${flips} random bytes` };
    }
    case 1: {
      const cut = at();
      return { bytes: bytes.slice(0, cut), how: `cut at byte ${cut}` };
    }
    case 2: {
      const start = at();
      const del = Math.min(n - start, 1 + Math.floor(r() * 200));
      return { bytes: splice(start, del, new Uint8Array()), how: `${del} bytes removed at ${start}` };
    }
    case 3: {
      const start = at();
      const len = Math.min(n - start, 1 + Math.floor(r() * 3000));
      const times = 1 + Math.floor(r() * 20);
      const piece = bytes.slice(start, start + len);
      const insert = new Uint8Array(len * times);
      for (let i = 0; i < times; i++) insert.set(piece, i * len);
      return { bytes: splice(start, 0, insert), how: `${len} bytes at ${start} repeated ${times} times` };
    }
    case 4: {
      const token = pick(r, TOKENS[kind]);
      const start = at();
      return { bytes: splice(start, 0, enc(token)), how: `${JSON.stringify(token)} inserted at ${start}` };
    }
    case 5: {
      if (kind === 'xml') {
        const depth = pick(r, [30, 70, 500]);
        const text = new TextDecoder().decode(bytes);
        const i = text.indexOf('<TABLE');
        const where = i >= 0 ? i : text.indexOf('<', 1);
        const nested = `${'<GROUP>'.repeat(depth)}${'</GROUP>'.repeat(r() < 0.5 ? depth : 0)}`;
        return { bytes: enc(text.slice(0, Math.max(0, where)) + nested + text.slice(Math.max(0, where))), how: `${depth} nested GROUPs` };
      }
      // A long cell or a very long line of columns.
      const text = new TextDecoder().decode(bytes);
      const nl = text.indexOf('\n');
      const long = r() < 0.5 ? 'x'.repeat(1 + Math.floor(r() * 200_000)) : Array.from({ length: 1 + Math.floor(r() * 3000) }, (_, i) => `c${i}`).join(',');
      return { bytes: enc(text.slice(0, nl + 1) + long + text.slice(nl + 1)), how: `a ${long.length}-character line after the header` };
    }
    default: {
      // FITS: a header card's value replaced by a hostile one.
      const keyword = pick(r, FITS_KEYWORDS);
      const value = pick(r, FITS_VALUES);
      const out = bytes.slice();
      const text = new TextDecoder('latin1').decode(bytes);
      const hits: number[] = [];
      for (let i = text.indexOf(keyword.padEnd(8, ' ') + '='); i >= 0; i = text.indexOf(keyword.padEnd(8, ' ') + '=', i + 1)) if (i % 80 === 0) hits.push(i);
      if (hits.length === 0) return { bytes: out, how: `no ${keyword} card to change` };
      const card = pick(r, hits);
      const field = `${keyword.padEnd(8, ' ')}= ${value.padStart(20, ' ')}`.padEnd(80, ' ');
      for (let i = 0; i < 80; i++) out[card + i] = field.charCodeAt(i) & 0xff;
      return { bytes: out, how: `${keyword} = ${value} at byte ${card}` };
    }
  }
}

const OWN = [UnreadableFile, FitsError, VoTableError, DelimitedError];

/** How a reader answered: 'ok', 'own:<ErrorName>' or 'foreign:<name>: <message>'. */
function answer(run: () => unknown): string {
  try {
    run();
    return 'ok';
  } catch (err) {
    if (OWN.some((E) => err instanceof E)) return `own:${(err as Error).name}`;
    return `foreign:${(err as Error)?.name}: ${String((err as Error)?.message ?? err).slice(0, 300)}`;
  }
}

function readers(bytes: Uint8Array, name: string, kind: 'fits' | 'xml' | 'text'): Record<string, string> {
  const out: Record<string, string> = {};
  const upload = (limits?: Parameters<typeof readUpload>[3]) => () => {
    const r = readUpload(bytes, name, undefined, limits);
    if (r.format === 'fits-image') return;
    const m = detectMapping(r.table.columns, r.table.rows.slice(0, 50), STARTER_BAND_KEYS);
    applyMapping(r.table, m, m.rules, { bandKeys: STARTER_BAND_KEYS });
  };
  out.readUpload = answer(upload());
  out.readUploadSmallLimits = answer(upload({ limits: { maxRows: 20, maxColumns: 30, maxCells: 200, maxBytes: 60_000 } }));
  if (kind === 'fits') {
    out.readFits = answer(() => readFits(bytes, { source: name }));
    out.readFitsTable = answer(() => {
      const t = readFitsTable(bytes, { source: name });
      for (const c of t.columns) t.getColumn(c.name);
    });
    out.readFitsImageHeader = answer(() => readFitsImageHeader(bytes, { source: name }));
  } else if (kind === 'xml') {
    out.readVoTable = answer(() => readVoTable(bytes, { source: name }));
  } else {
    out.parseDelimited = answer(() => parseDelimited(decodeText(bytes, name), { source: name }));
  }
  return out;
}

const r = rng(SEED);
const files = FIXTURES.map((f) => ({ ...f, bytes: new Uint8Array(readFileSync(path.join(root, 'fixtures', f.name))) }));
for (let i = 0; i < COUNT; i++) {
  const f = files[i % files.length];
  const m = mutate(f.bytes, f.kind, r);
  process.stderr.write(`fuzz ${i}: ${f.name}: ${m.how}\n`);
  const started = performance.now();
  const answers = readers(m.bytes, path.basename(f.name), f.kind);
  const ms = performance.now() - started;
  process.stdout.write(JSON.stringify({ i, file: f.name, how: m.how, bytes: m.bytes.length, ms: Math.round(ms), answers }) + '\n');
}
