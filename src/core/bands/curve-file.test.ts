// Reading uploaded curve files, and the pivot wavelength of what was read against synphot
// (fixtures/bands/pivots.json, made by scripts/references/make_uploaded_curve_fixture.py with
// Debian's python3-synphot; energy-type curves divided by λ for synphot, which assumes per photon).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { CurveFileError, parseCurveFile, type WavelengthUnit } from './curve-file';
import type { ResponseConvention } from '../types';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
const fixtures = path.join(root, 'fixtures/bands');
const pivots = JSON.parse(readFileSync(path.join(fixtures, 'pivots.json'), 'utf8')) as {
  curves: { file: string; wavelengthUnit: WavelengthUnit; convention: ResponseConvention; nodes: number; pivotAngstromNodes: number; pivotAngstromFine: number }[];
};
const read = (f: string) => readFileSync(path.join(fixtures, f), 'utf8');

describe('curve files: pivot wavelength against synphot', () => {
  it('covers a per-photon and an energy-type curve', () => {
    expect(pivots.curves.map((c) => c.convention).sort()).toEqual(['energy', 'photon', 'photon']);
  });

  for (const c of pivots.curves) {
    // Measured over the three curves: within 2.3e-5 Å of synphot on the continuous curve and 0.074 Å of
    // its trapezoids on the nodes; tolerances 1e-4 Å and 0.3 Å, about 4× the measured worst.
    it(`${c.file} (${c.convention}, ${c.wavelengthUnit}): pivot within 1e-4 Å of synphot`, () => {
      const parsed = parseCurveFile(read(c.file), { fileName: c.file, wavelengthUnit: c.wavelengthUnit, convention: c.convention });
      expect(parsed.wavelengthAngstrom).toHaveLength(c.nodes);
      // synphot pivot() on the curve linear between nodes (fine grid): the same integral as ours.
      expect(Math.abs(parsed.pivotAngstrom - c.pivotAngstromFine)).toBeLessThan(1e-4);
      // synphot pivot() on the file's nodes alone (trapezoids), a slightly cruder version of the integral.
      expect(Math.abs(parsed.pivotAngstrom - c.pivotAngstromNodes)).toBeLessThan(0.3);
    });
  }

  it('the declared convention matters: the energy-type curve read as per-photon misses synphot by more than 2 Å', () => {
    const c = pivots.curves.find((x) => x.convention === 'energy')!;
    const wrong = parseCurveFile(read(c.file), { fileName: c.file, wavelengthUnit: c.wavelengthUnit, convention: 'photon' });
    expect(Math.abs(wrong.pivotAngstrom - c.pivotAngstromFine)).toBeGreaterThan(2);
  });
});

describe('curve files: formats', () => {
  it('reads ECSV column names and unit from the header', () => {
    const p = parseCurveFile(read('lanternfield-z.ecsv'), { fileName: 'z.ecsv', wavelengthUnit: 'nm', convention: 'photon' });
    expect(p.format).toBe('ecsv');
    expect(p.wavelengthColumn).toBe('wavelength');
    expect(p.responseColumn).toBe('response');
    expect(p.wavelengthAngstrom[0]).toBe(8200);
    expect(p.notes.join(' ')).toMatch(/header also says the wavelength is in nm/);
  });

  it('refuses an ECSV unit that disagrees with the chosen one, naming both', () => {
    expect(() => parseCurveFile(read('lanternfield-z.ecsv'), { fileName: 'z.ecsv', wavelengthUnit: 'angstrom', convention: 'photon' })).toThrow(
      /z\.ecsv: the header gives column "wavelength" in nm, but Å was chosen/,
    );
  });

  it('reads CSV with a header, picking the columns by name', () => {
    const p = parseCurveFile('id,transmission,wave\n1,0,5000\n2,1,5100\n3,0.5,5200\n4,0,5300\n', { fileName: 'x.csv', wavelengthUnit: 'angstrom', convention: 'photon' });
    expect(p.format).toBe('csv');
    expect(p.wavelengthColumn).toBe('wave');
    expect(p.responseColumn).toBe('transmission');
    expect(p.wavelengthAngstrom).toEqual([5000, 5100, 5200, 5300]);
    expect(p.response).toEqual([0, 1, 0.5, 0]);
  });

  it('reads two-column text with comments, and turns a descending table round with a note', () => {
    const p = parseCurveFile('# my band\n0.60 0\n0.55 1\n0.50 0.4\n0.45 0\n', { fileName: 'x.dat', wavelengthUnit: 'um', convention: 'energy' });
    expect(p.format).toBe('text');
    expect(p.wavelengthAngstrom).toEqual([4500, 5000, 5500, 6000]);
    expect(p.response).toEqual([0, 0.4, 1, 0]);
    expect(p.notes.join(' ')).toMatch(/turned round/);
  });
});

describe('curve files: bad input, each with file, line and column', () => {
  const opts = { fileName: 'bad.txt', wavelengthUnit: 'angstrom' as const, convention: 'photon' as const };
  const err = (text: string, o: Partial<typeof opts> | { wavelengthUnit: WavelengthUnit } = {}) => {
    try {
      parseCurveFile(text, { ...opts, ...o });
    } catch (e) {
      expect(e).toBeInstanceOf(CurveFileError);
      return e as CurveFileError;
    }
    throw new Error('expected an error');
  };

  it('non-monotonic wavelengths', () => {
    const e = err('# c\n5000 0\n5100 1\n5050 1\n5200 0\n');
    expect(e.message).toBe('bad.txt, line 4, column 1 (column 1): wavelength 5050 Å goes back from 5100 Å on line 3; wavelengths must ascend.');
    expect(e.line).toBe(4);
  });

  it('a repeated wavelength', () => {
    expect(err('5000 0\n5100 1\n5100 1\n5200 0\n').message).toMatch(/line 3, column 1 .*5100 Å repeats 5100 Å on line 2/);
  });

  it('negative or zero wavelengths', () => {
    expect(err('-5000 0\n5100 1\n5200 0\n').message).toMatch(/bad\.txt, line 1, column 1 \(column 1\): wavelength -5000 Å must be above 0/);
  });

  it('a negative response', () => {
    expect(err('wavelength response\n5000 0\n5100 -0.2\n5200 0\n').message).toMatch(/line 3, column 2 \(response\): response -0\.2 is negative/);
  });

  it('a response that is zero everywhere', () => {
    expect(err('5000 0\n5100 0\n5200 0\n').message).toMatch(/bad\.txt, column 2 \(column 2\): the response is zero on every row \(lines 1–3\)/);
  });

  it('text where a number should be', () => {
    expect(err('5000 0\n5100 high\n5200 0\n').message).toMatch(/line 2, column 2 \(column 2\): "high" is not a number/);
  });

  it('a unit that makes no sense for the values: nm read as µm, Å read as nm … named with the value', () => {
    // A V-like curve in Å read as µm reaches 6.6 mm.
    expect(err('4800 0\n5500 1\n6600 0\n', { wavelengthUnit: 'um' }).message).toMatch(/read in µm, the band would reach 6600 µm .*beyond 1 mm\. Is the wavelength unit right\?/);
    // The same curve in nm read as Å sits below the Lyman limit.
    expect(err('480 0\n550 1\n660 0\n', { wavelengthUnit: 'angstrom' }).message).toMatch(/read in Å, the band would end at 660 Å .*below the Lyman limit/);
    // A curve in µm read as Å: 0.5 Å.
    expect(err('0.48 0\n0.55 1\n0.66 0\n').message).toMatch(/read in Å, the band would end at 0\.66 Å/);
  });

  it('a band spanning an implausible range', () => {
    expect(err('1000 0\n1100 1\n50000 1\n60000 0\n').message).toMatch(/a factor 60 in wavelength; no single passband is that wide/);
  });

  it('too few rows or columns, or an empty file', () => {
    expect(err('5000 1\n').message).toMatch(/at least two rows/);
    expect(err('   \n').message).toMatch(/empty/);
    expect(err('5000\n5100\n').message).toMatch(/line 1, column 2 .*empty/);
  });
});
