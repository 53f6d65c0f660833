// Table interpolation against direct band integrals (docs/science.md §5: interpolation error < 1e-5 relative).
// Reference: planckBandMean (src/core/photometry.ts, itself checked against synphot fixtures) called
// directly at temperatures and A_V values that are not table nodes.
import { describe, expect, it } from 'vitest';
import { starterBandLibrary, requireBand, STARTER_BAND_KEYS } from '../bands';
import { planckBandMean } from '../photometry';
import type { ExtinctionSpec } from '../types';
import { FitTables, lnPhiAt, LN_T_MIN, LN_T_MAX, LN_T_STEP, nodeLnT, GHOST, planeOf } from './grid';
import { mulberry32 } from './random';

const lib = starterBandLibrary();

function tablesFor(ext: ExtinctionSpec): FitTables {
  return new FitTables((key, t, av) => planckBandMean(requireBand(lib, key), t, av, ext));
}

describe('band-mean tables', () => {
  it('interpolate ln φ to < 1e-5 at off-node temperatures for every starter band, A_V = 0', () => {
    const ext: ExtinctionSpec = { law: 'f99', rv: 3.1 };
    const tables = tablesFor(ext);
    const rand = mulberry32(7);
    let worst = 0;
    for (const key of STARTER_BAND_KEYS) {
      const b = tables.bandIndex(key);
      // Half-way between nodes is where cubic Hermite is worst; add random points across the grid.
      const us: number[] = [];
      for (let j = GHOST; j < GHOST + 148; j += 7) us.push(nodeLnT(j) + 0.5 * LN_T_STEP);
      for (let i = 0; i < 20; i++) us.push(LN_T_MIN + rand() * (LN_T_MAX - LN_T_MIN));
      for (const u of us) {
        const direct = planckBandMean(requireBand(lib, key), Math.exp(u), 0, ext);
        const viaTable = Math.exp(lnPhiAt(tables, b, u, 0));
        worst = Math.max(worst, Math.abs(viaTable / direct - 1));
      }
    }
    expect(worst).toBeLessThan(1e-5);
  });

  it('interpolate across A_V planes to < 1e-5 (F99, CCM89, OD94; off-plane A_V up to 10 mag)', () => {
    const rand = mulberry32(11);
    for (const law of ['f99', 'ccm89', 'od94'] as const) {
      const ext: ExtinctionSpec = { law, rv: law === 'f99' ? 3.1 : 4.0 };
      const tables = tablesFor(ext);
      let worst = 0;
      for (const key of ['FUV', 'NUV', 'U', 'B', 'V', 'G', 'BP', 'RP', 'J', 'Ks', 'W1', 'u', 'z']) {
        const b = tables.bandIndex(key);
        for (let i = 0; i < 12; i++) {
          const u = LN_T_MIN + rand() * (LN_T_MAX - LN_T_MIN);
          const av = 0.05 + rand() * 9.9;
          expect(planeOf(av).exact).toBe(false);
          const direct = planckBandMean(requireBand(lib, key), Math.exp(u), av, ext);
          const viaTable = Math.exp(lnPhiAt(tables, b, u, av));
          worst = Math.max(worst, Math.abs(viaTable / direct - 1));
        }
      }
      expect(worst, law).toBeLessThan(1e-5);
    }
  });

  it('give d ln φ / d ln T consistent with a finite difference of the direct integral', () => {
    const ext: ExtinctionSpec = { law: 'f99', rv: 3.1 };
    const tables = tablesFor(ext);
    const out = new Float64Array(2);
    for (const key of ['V', 'G', 'Ks']) {
      const b = tables.bandIndex(key);
      const u = Math.log(6123.4);
      lnPhiAt(tables, b, u, 0, out);
      const band = requireBand(lib, key);
      const h = 1e-4;
      const fd = (Math.log(planckBandMean(band, Math.exp(u + h), 0, ext)) - Math.log(planckBandMean(band, Math.exp(u - h), 0, ext))) / (2 * h);
      expect(Math.abs(out[0] - fd)).toBeLessThan(1e-5 * Math.abs(fd));
    }
  });

  it('add bands lazily without disturbing existing ones', () => {
    const ext: ExtinctionSpec = { law: 'f99', rv: 3.1 };
    const tables = tablesFor(ext);
    const bV = tables.bandIndex('V');
    const before = lnPhiAt(tables, bV, Math.log(5000), 0);
    for (const key of STARTER_BAND_KEYS) tables.bandIndex(key);
    expect(tables.bandIndex('V')).toBe(bV);
    expect(lnPhiAt(tables, bV, Math.log(5000), 0)).toBe(before);
    const bW4 = tables.bandIndex('W4');
    const direct = planckBandMean(requireBand(lib, 'W4'), 5000, 0, ext);
    expect(Math.abs(Math.exp(lnPhiAt(tables, bW4, Math.log(5000), 0)) / direct - 1)).toBeLessThan(1e-5);
  });
});
