import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ccm89, extinctionFunction, extinctionRatio, extrapolatedBandKeys, fitzpatrick99, fractionOutsideLawRange, lawExtrapolation, odonnell94 } from './extinction';
import { starterBandLibrary } from './bands';
import type { ExtinctionLawKey } from './types';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
// fixtures/extinction/laws.json: python3-extinction 0.4.6 evaluated by scripts/references/make_references.py
const laws = JSON.parse(readFileSync(path.join(root, 'fixtures/extinction/laws.json'), 'utf8')) as {
  wavelengthAngstrom: number[];
  rv: number[];
  ratio: Record<ExtinctionLawKey, number[][]>;
};

const CHECK_UM = [0.44, 0.55, 0.7, 1.25, 1.65, 2.2];

describe('extinction laws: check values', () => {
  it('F99 A_λ/A_V at 0.44…2.20 µm (R_V 3.1) = 1.3093, 0.9778, 0.6882, 0.2568, 0.1650, 0.1091', () => {
    // Source: python3-extinction 0.4.6 (docs/science.md check table).
    const want = [1.3093, 0.9778, 0.6882, 0.2568, 0.165, 0.1091];
    CHECK_UM.forEach((um, i) => expect(fitzpatrick99(um * 1e4, 3.1)).toBeCloseTo(want[i], 4));
  });

  it('CCM89 at the same wavelengths = 1.3245, 0.9989, 0.7502, 0.2821, 0.1804, 0.1135', () => {
    // Source: python3-extinction 0.4.6 (docs/science.md check table).
    const want = [1.3245, 0.9989, 0.7502, 0.2821, 0.1804, 0.1135];
    CHECK_UM.forEach((um, i) => expect(ccm89(um * 1e4, 3.1)).toBeCloseTo(want[i], 4));
  });

  it('F99 gives A(5494.5 Å) = 0.979 A_V while CCM89 gives 1 there', () => {
    // Source: docs/science.md 4 (python3-extinction 0.4.6); CCM89 a(x)=1, b(x)=0 near 5494.5 Å by construction.
    expect(fitzpatrick99(5494.5, 3.1)).toBeCloseTo(0.979, 3);
    expect(ccm89(5494.5, 3.1)).toBeCloseTo(1, 3);
  });
});

describe('extinction laws match python3-extinction 0.4.6 on a dense grid', () => {
  for (const law of ['f99', 'ccm89', 'od94'] as const) {
    it(`${law}: 0.1–30 µm plus branch edges, R_V 2.5 / 3.1 / 4.0 / 5.5, to 1e-12 relative`, () => {
      // Source: fixtures/extinction/laws.json (python3-extinction 0.4.6, a_v = 1).
      let worst = 0;
      for (const [j, rv] of laws.rv.entries()) {
        const ref = laws.ratio[law][j];
        const f = extinctionFunction({ law, rv });
        laws.wavelengthAngstrom.forEach((w, i) => {
          const rel = Math.abs(f(w) / ref[i] - 1);
          if (rel > worst) worst = rel;
        });
      }
      expect(worst).toBeLessThan(1e-12);
    });
  }

  it('O\'Donnell differs from CCM89 only in the optical (1.1 ≤ x < 3.3 µm⁻¹)', () => {
    // O'Donnell 1994 replaces the optical polynomial only.
    expect(odonnell94(20000, 3.1)).toBe(ccm89(20000, 3.1));
    expect(odonnell94(2000, 3.1)).toBe(ccm89(2000, 3.1));
    expect(Math.abs(odonnell94(4400, 3.1) - ccm89(4400, 3.1))).toBeGreaterThan(1e-3);
  });

  it('rejects an unknown law or a bad R_V with a clear message', () => {
    expect(() => extinctionRatio(5500, { law: 'xx' as ExtinctionLawKey, rv: 3.1 })).toThrow(/unknown extinction law "xx"/);
    expect(() => extinctionRatio(5500, { law: 'f99', rv: 0 })).toThrow(/R_V must be a positive number/);
  });
});

describe('law ranges (for the provenance of a fit)', () => {
  const lib = starterBandLibrary();
  const bands = Object.values(lib.bands);

  it('F99 (defined 910 Å – 6 µm) is extrapolated in W3 and W4, and with negligible weight in BT', () => {
    // BT's published table (Bessell 2000 via sedpy) starts with a zero node at 500 Å and a linear
    // ramp to 3550 Å, so a sliver of the curve lies blueward of 910 Å.
    expect(extrapolatedBandKeys(bands, 'f99')).toEqual(['W3', 'W4', 'BT']);
    expect(fractionOutsideLawRange(lib.bands.BT, 'f99')).toBeGreaterThan(0);
    expect(fractionOutsideLawRange(lib.bands.BT, 'f99')).toBeLessThan(1e-4);
    expect(fractionOutsideLawRange(lib.bands.W3, 'f99')).toBeGreaterThan(0.99);
    expect(fractionOutsideLawRange(lib.bands.V, 'f99')).toBe(0);
  });

  it('CCM89 and O\'Donnell 94 (x = 0.3–10 µm⁻¹, 1000 Å – 3.33 µm) are extrapolated in W1–W4', () => {
    expect(extrapolatedBandKeys(bands, 'ccm89')).toEqual(['W1', 'W2', 'W3', 'W4', 'BT']);
    expect(extrapolatedBandKeys(bands, 'od94')).toEqual(['W1', 'W2', 'W3', 'W4', 'BT']);
    expect(lawExtrapolation(lib.bands.W1, 'ccm89')).toBe('red');
    expect(lawExtrapolation(lib.bands.FUV, 'ccm89')).toBe('none');
  });
});
