// The starter band library against the published files it was derived from (../shared/data/passbands).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { getBand, requireBand, starterBandLibrary, STARTER_BAND_KEYS } from './index';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
const shared = path.resolve(root, '../shared/data/passbands');
const lib = starterBandLibrary();

/** Plain two-column reader, independent of the derivation script: returns λ in the file's unit. */
function readTable(file: string): { w: number[]; r: number[]; micron: boolean } {
  const text = readFileSync(path.join(shared, file), 'utf8');
  const rows = text
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l && !l.startsWith('#') && !l.startsWith('wavelength'))
    .map((l) => l.split(/\s+/).map(Number));
  return { w: rows.map((x) => x[0]), r: rows.map((x) => x[1]), micron: /unit: micron/.test(text) };
}

describe('starter band library', () => {
  it('has a version and exactly the documented keys', () => {
    expect(lib.version).toBe('starter-1');
    expect(Object.keys(lib.bands)).toEqual([...STARTER_BAND_KEYS]);
  });

  it('keeps every curve node of the published files (WISE µm → Å)', () => {
    for (const band of Object.values(lib.bands)) {
      const t = readTable(band.derivedFrom!.file);
      expect(band.response, band.key).toEqual(t.r);
      const scale = t.micron ? 1e4 : 1;
      band.wavelengthAngstrom.forEach((w, i) => expect(Math.abs(w - t.w[i] * scale), `${band.key} node ${i}`).toBeLessThan(1e-9 * w));
    }
  });

  it('records the convention: Bessell UBVRI energy-type (as printed), all others per photon', () => {
    for (const band of Object.values(lib.bands)) {
      expect(band.convention, band.key).toBe(['U', 'B', 'V', 'R', 'I'].includes(band.key) ? 'energy' : 'photon');
    }
    // The speclite description of the Bessell files quotes Bessell 1990 tables (energy response).
    expect(readFileSync(path.join(shared, 'bessell-V.ecsv'), 'utf8')).toMatch(/Bessell, M\. S\., "UBVRI passbands," PASP, vol\. 102/);
    // The sedpy files say they hold the per-photon R after division of λ·R by λ.
    expect(readFileSync(path.join(shared, 'hipparcos_B.par'), 'utf8')).toMatch(/converted here to simply R_lambda/);
  });

  it('uses SDSS curves through airmass 1.3', () => {
    expect(lib.bands.u.derivedFrom?.file).toBe('sdss2010-u.ecsv');
    expect(readFileSync(path.join(shared, 'sdss2010-u.ecsv'), 'utf8')).toMatch(/airmass: 1\.3/);
  });

  it('cites the original publication and carries a licence notice for every band', () => {
    const cites: Record<string, RegExp> = {
      V: /Bessell, M\. S\. 1990, PASP, 102, 1181/,
      Ks: /Cohen, M\., Wheaton, W\. A\., & Megeath, S\. T\. 2003.*Skrutskie/,
      G: /Riello, M\. et al\. 2021, A&A, 649, A3/,
      u: /Doi, M\. et al\. 2010, AJ, 139, 1628/,
      W3: /Wright, E\. L\. et al\. 2010.*Jarrett/,
      BT: /Bessell, M\. S\. 2000, PASP, 112, 961/,
      FUV: /Morrissey, P\. et al\. 2007/,
    };
    for (const [key, re] of Object.entries(cites)) expect(lib.bands[key].citation).toMatch(re);
    for (const band of Object.values(lib.bands)) {
      expect(band.licence, band.key).toMatch(band.derivedFrom!.file.endsWith('.par') ? /sedpy.*MIT/ : /speclite.*BSD 3-Clause/);
      expect(band.derivedFrom?.sha256).toMatch(/^[0-9a-f]{64}$/);
    }
    expect(lib.sourceLicences?.speclite).toMatch(/Redistributions of source code must retain the above copyright notice/);
    expect(lib.sourceLicences?.sedpy).toMatch(/Permission is hereby granted, free of charge/);
  });

  it('holds the zero-points of docs/science.md 3 with their sources', () => {
    const zp = (k: string) => lib.bands[k].zeroPoint!;
    expect(zp('B').fLambdaCgs).toBeCloseTo(632.0e-11, 20);
    expect(zp('B').source).toMatch(/Bessell, Castelli & Plez 1998/);
    expect(zp('H').fLambdaCgs).toBeCloseTo(1.133e-10, 20);
    expect(zp('G').catalogueOffsetMag).toBe(0.1136);
    expect(zp('RP').catalogueOffsetMag).toBe(0.3561);
    expect(zp('u').catalogueOffsetMag).toBe(-0.04);
    expect(zp('z').catalogueOffsetMag).toBe(0.02);
    expect(zp('W3').fnuJy).toBe(31.674);
    expect(zp('W3').isophotalWavelengthAngstrom).toBe(115608);
    expect(zp('W4').source).toMatch(/Jarrett et al\. 2011/);
    expect(zp('FUV').fnuJy).toBe(3631);
    for (const k of ['BT', 'VT', 'Hp']) expect(lib.bands[k].zeroPoint).toBeNull();
    for (const k of ['G', 'BP', 'RP', 'u', 'g', 'r', 'i', 'z', 'FUV', 'NUV']) expect(lib.bands[k].magnitudeSystem).toBe('ab');
  });

  it('getBand returns null for an unknown key, requireBand names the known ones; keys are case-sensitive', () => {
    expect(getBand(lib, 'K')).toBeNull();
    expect(getBand(lib, 'toString')).toBeNull();
    expect(getBand(lib, 'u')?.system).toMatch(/SDSS/);
    expect(getBand(lib, 'U')?.system).toMatch(/Bessell/);
    expect(() => requireBand(lib, 'K')).toThrow(/unknown band "K" in band library starter-1; known bands: U B V/);
  });

  it('is frozen so a caller cannot change a shared curve by accident', () => {
    expect(Object.isFrozen(lib.bands.V)).toBe(true);
    expect(Object.isFrozen(lib.bands.V.response)).toBe(true);
  });
});
