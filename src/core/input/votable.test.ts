import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { readVoTable, VoTableError } from './votable';

// Fixtures written by Debian's python3-astropy (scripts/references/make_votable_fixtures.py); the
// *.astropy.json beside each is astropy's own reading of the same file (independent implementation).
const dir = path.resolve(__dirname, '../../../fixtures/votable');
const bytes = (name: string) => new Uint8Array(readFileSync(path.join(dir, name)));

describe('readVoTable', () => {
  it('reads a TABLEDATA table exactly as astropy does: names, units, UCDs, cells and masked values', () => {
    const ref = JSON.parse(readFileSync(path.join(dir, 'wide_tabledata.astropy.json'), 'utf8'));
    const t = readVoTable(bytes('wide_tabledata.vot'), { source: 'wide_tabledata.vot' });
    expect(t.fields.map((f) => f.name)).toEqual(ref.columns.map((c: { name: string }) => c.name));
    expect(t.fields.map((f) => f.unit ?? null)).toEqual(ref.columns.map((c: { unit: string | null }) => c.unit));
    expect(t.fields.map((f) => f.ucd ?? null)).toEqual(ref.columns.map((c: { ucd: string | null }) => c.ucd));
    expect(t.rows).toHaveLength(ref.rows.length);
    t.rows.forEach((row, r) =>
      row.forEach((cell, c) => {
        const want = ref.rows[r][c];
        if (want === null) expect(cell).toBeNull();
        else if (ref.columns[c].datatype === 'double') expect(Number(cell)).toBe(Number(want));
        else expect(cell).toBe(want);
      }),
    );
  });

  it('refuses BINARY2 with a message saying how to save TABLEDATA, and XML that is not a VOTable', () => {
    expect(() => readVoTable(bytes('wide_binary2.vot'), { source: 'b.vot' })).toThrow(/BINARY2 serialisation; Starkiln reads TABLEDATA/);
    expect(() => readVoTable(bytes('not_a_votable.xml'), { source: 'n.xml' })).toThrow("n.xml: this XML is not a VOTable (its root element is <catalogue>, a VOTable's is <VOTABLE>)");
  });

  it('names the line of malformed XML', () => {
    const err = (() => {
      try {
        readVoTable('<?xml version="1.0"?>\n<VOTABLE>\n<RESOURCE>\n<TABLE>\n</RESOURCE>\n</VOTABLE>\n', { source: 'bad.vot' });
      } catch (e) {
        return e as VoTableError;
      }
    })();
    expect(err).toBeInstanceOf(VoTableError);
    expect(err!.message).toMatch(/^bad\.vot: not well-formed XML at line \d+/);
  });
});

const hasAstropy = spawnSync('/usr/bin/python3', ['-c', 'import astropy'], { stdio: 'ignore' }).status === 0;

describe('fixtures are reproducible', () => {
  it.skipIf(!hasAstropy)('re-running scripts/references/make_votable_fixtures.py gives the committed files byte for byte', () => {
    const out = mkdtempSync(path.join(tmpdir(), 'starkiln-votable-'));
    try {
      execFileSync('/usr/bin/python3', [path.resolve(__dirname, '../../../scripts/references/make_votable_fixtures.py'), out], { stdio: 'pipe' });
      const made = readdirSync(out).sort();
      // The VOTables with astropy's readings, the XML that is not a VOTable, and intake/wide_table.fits.
      expect(made).toEqual(['not_a_votable.xml', 'wide_binary2.astropy.json', 'wide_binary2.vot', 'wide_table.fits', 'wide_tabledata.astropy.json', 'wide_tabledata.vot']);
      for (const f of made) {
        const committed = path.join(dir, '..', f === 'wide_table.fits' ? 'intake' : 'votable', f);
        expect(Buffer.compare(readFileSync(path.join(out, f)), readFileSync(committed)), f).toBe(0);
      }
    } finally {
      rmSync(out, { recursive: true, force: true });
    }
  });
});
