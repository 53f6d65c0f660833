// The CLI's cached conversion must give what core/magnitude.ts measurementToBandFlux gives.
import { describe, expect, it } from 'vitest';
import { starterBandLibrary } from '../core/bands';
import { measurementToBandFlux } from '../core/photometry';
import type { Measurement } from '../core/types';
import { BandConverter } from './convert';

describe('BandConverter', () => {
  const library = starterBandLibrary();
  const conv = new BandConverter();
  for (const band of Object.values(library.bands)) {
    it(`band ${band.key}: same fluxes and errors as measurementToBandFlux`, () => {
      const cases: Measurement[] = [
        { bandKey: band.key, fnuJy: 0.37, fnuErrJy: 0.01 },
        { bandKey: band.key, fnuJy: 2e-4, upperLimit: true },
      ];
      if (band.zeroPoint) cases.push({ bandKey: band.key, mag: 9.87, magErr: 0.021 }, { bandKey: band.key, mag: 15.2, upperLimit: true }, { bandKey: band.key, mag: -1.4, magErr: 0 });
      for (const m of cases) {
        const want = measurementToBandFlux(band, m);
        const got = conv.convert(band, m);
        expect(got.upperLimit).toBe(want.upperLimit);
        expect(Math.abs(got.fluxCgs / want.fluxCgs - 1)).toBeLessThan(1e-14);
        if (want.errCgs === 0) expect(got.errCgs).toBe(0);
        else expect(Math.abs(got.errCgs / want.errCgs - 1)).toBeLessThan(1e-14);
      }
    });
  }

  it('passes unusual measurements to measurementToBandFlux, keeping its messages', () => {
    const v = library.bands.V;
    expect(() => conv.convert(v, { bandKey: 'V', mag: 9 })).toThrow(/no uncertainty/);
    expect(() => conv.convert(v, { bandKey: 'V', mag: 9, magErr: -0.1 })).toThrow(/negative/);
    const noZp = Object.values(library.bands).find((b) => !b.zeroPoint);
    if (noZp) expect(() => conv.convert(noZp, { bandKey: noZp.key, mag: 9, magErr: 0.1 })).toThrow(/no zero-point/);
  });
});
