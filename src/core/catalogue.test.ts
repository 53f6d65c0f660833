// Catalogue rows and their text form (docs/science.md, "Interfaces": output catalogue).
import { describe, expect, it } from 'vitest';
import { catalogueCsvLine, catalogueRow, csvField, formatCatalogueValue, neutraliseFormula, provenanceLines, CATALOGUE_COLUMNS } from './catalogue';
import { FLAG_EXPLANATIONS } from './fit';

describe('catalogue text', () => {
  it('rounds to the column digits exactly as toPrecision does (JavaScript spec), shortest form', () => {
    const col = { name: 'x', description: '', digits: 4 };
    for (const v of [5772.1234, 0.00012345, 1.23456e-11, 987654321, -3.14159, 1e21 + 12345, 0.5]) {
      expect(formatCatalogueValue(v, col)).toBe(String(Number(v.toPrecision(4))));
    }
    expect(formatCatalogueValue(null)).toBe('');
    expect(formatCatalogueValue(NaN, col)).toBe('');
    expect(formatCatalogueValue(12, { name: 'n', description: '' })).toBe('12');
  });

  it('quotes fields per RFC 4180 and guards a leading #', () => {
    expect(csvField('plain')).toBe('plain');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('#7')).toBe('"#7"');
  });

  // OWASP Cheat Sheet "CSV Injection": cells starting with = + - @ tab or carriage return are
  // prefixed with a single quote, and the usual RFC 4180 quoting still applies around the result.
  it('neutralises text cells a spreadsheet would run as a formula, keeping the quoting right', () => {
    for (const id of ['=HYPERLINK("http://evil.test","x")', '+1+1', '-2+3', '@SUM(1)', '\t=1', '\r=1', '  =1+1']) {
      expect(neutraliseFormula(id)).toBe(`'${id}`);
    }
    for (const id of ['kiln 1', 'a=b', "'quoted", '#7', '']) expect(neutraliseFormula(id)).toBe(id);
    const row = (id: string) => catalogueRow({ id, raDeg: 10, decDeg: -5, result: { ok: false, id, reason: 'few_bands', message: 'x', excluded: [] } });
    expect(catalogueCsvLine(row('=HYPERLINK("http://evil.test","x")'))).toBe(`"'=HYPERLINK(""http://evil.test"",""x"")",10,-5,,,,,,,,,,,,,,,,,,,,,0,,,few_bands,,,,`);
    expect(catalogueCsvLine(row('@SUM(1)'))).toBe(`'@SUM(1),10,-5,,,,,,,,,,,,,,,,,,,,,0,,,few_bands,,,,`);
    expect(catalogueCsvLine(row('+1,+1'))).toBe(`"'+1,+1",10,-5,,,,,,,,,,,,,,,,,,,,,0,,,few_bands,,,,`);
    // A number is a number: the negative declination is not touched.
    expect(catalogueCsvLine(row('-7')).split(',').slice(0, 3)).toEqual(["'-7", '10', '-5']);
  });

  // The row follows CATALOGUE_COLUMNS: 5 empty tbb_* cells after teff_lower_k, and lum_class,
  // lum_class_source, feh and model empty after flags.
  it('a failed fit keeps id and position and names the reason in flags', () => {
    const row = catalogueRow({ id: 'kiln 1', raDeg: 10, decDeg: -5, result: { ok: false, id: 'kiln 1', reason: 'few_bands', message: 'x', excluded: [] } });
    expect(catalogueCsvLine(row)).toBe('kiln 1,10,-5,,,,,,,,,,,,,,,,,,,,,0,,,few_bands,,,,');
    expect(Object.keys(row)).toEqual(CATALOGUE_COLUMNS.map((c) => c.name));
  });

  it('the provenance explains every flag and every column', () => {
    const lines = provenanceLines({ software: { name: 'Starkiln', version: '9.9.9' }, bandLibraryVersion: 'starter-1', law: 'od94', rv: 3.1, options: { floor_fraction: 0.02, exclude: ['W3'] }, createdAt: '2026-01-01T00:00:00.000Z' });
    for (const code of Object.keys(FLAG_EXPLANATIONS)) expect(lines.some((l) => l.startsWith(`  ${code}: `))).toBe(true);
    for (const c of CATALOGUE_COLUMNS) expect(lines.some((l) => l.startsWith(`  ${c.name}`))).toBe(true);
    expect(lines).toContain('options: floor_fraction = 0.02; exclude = W3');
  });
});
