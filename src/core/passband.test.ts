import { describe, expect, it } from 'vitest';
import { starterBandLibrary } from './bands';
import { bandMeanFlambda, bandQuadrature, meanInverseFrequencySquared, pivotWavelength } from './passband';
import { planckBandMean, previewPlanckAtPivot } from './photometry';
import { planckLambdaCgsAngstrom } from './planck';
import { SPEED_OF_LIGHT_ANGSTROM_S } from './constants';
import type { Band } from './types';

const lib = starterBandLibrary();
const F99 = { law: 'f99' as const, rv: 3.1 };

describe('pivot wavelength and the response convention', () => {
  it('Bessell V (energy-type as printed) has its pivot at 5477.7 Å; the per-photon formula would give 5500.5 Å', () => {
    // Source: docs/science.md 2 (synphot pivot() on S/λ at the published nodes = 5477.70 Å; the continuous
    // integral of the linear curve gives 5477.23 Å, fixtures/synphot). Both readings within 0.5 Å.
    const v = lib.bands.V;
    expect(v.convention).toBe('energy');
    expect(Math.abs(pivotWavelength(v) - 5477.7)).toBeLessThan(0.5);
    const wrong: Band = { ...v, convention: 'photon' };
    expect(Math.abs(pivotWavelength(wrong) - 5500.5)).toBeLessThan(0.5);
  });

  it('the convention changes broad-band fluxes by per cents (Gaia G, WISE W3)', () => {
    // docs/science.md 2: wrong convention moves Gaia G by up to 13 % and WISE W3 by up to 19 %.
    const g = lib.bands.G;
    const gWrong: Band = { ...g, convention: 'energy' };
    const w3 = lib.bands.W3;
    const w3Wrong: Band = { ...w3, convention: 'energy' };
    const diff = (a: Band, b: Band, t: number) => Math.abs(planckBandMean(a, t, 0, F99) / planckBandMean(b, t, 0, F99) - 1);
    // Measured here: G −10 % at 3000 K, +21 % at 25 000 K; W3 +19 % at 3000 K and 25 000 K.
    expect(Math.max(diff(g, gWrong, 3000), diff(g, gWrong, 25000))).toBeGreaterThan(0.1);
    expect(Math.min(diff(w3, w3Wrong, 3000), diff(w3, w3Wrong, 25000))).toBeGreaterThan(0.15);
  });

  it('an energy curve S behaves exactly like the per-photon curve R = S/λ', () => {
    // Identity of the two formulas (docs/science.md 2); R = S/λ sampled finely so linear interpolation holds.
    const v = lib.bands.V;
    const w: number[] = [];
    const r: number[] = [];
    for (let l = v.wavelengthAngstrom[0]; l <= v.wavelengthAngstrom.at(-1)!; l += 0.5) {
      w.push(l);
      let s = 0;
      for (let i = 0; i + 1 < v.wavelengthAngstrom.length; i++) {
        const a = v.wavelengthAngstrom[i];
        const b = v.wavelengthAngstrom[i + 1];
        if (l >= a && l <= b) s = v.response[i] + ((v.response[i + 1] - v.response[i]) * (l - a)) / (b - a);
      }
      r.push(s / l);
    }
    const photon = { key: 'Vphoton', convention: 'photon' as const, wavelengthAngstrom: w, response: r };
    expect(pivotWavelength(photon) / pivotWavelength(v) - 1).toBeCloseTo(0, 6);
    expect(planckBandMean(photon, 4000, 1, F99) / planckBandMean(v, 4000, 1, F99) - 1).toBeCloseTo(0, 6);
  });

  it('⟨ν⁻²⟩ through the curve equals λ_p²/c² (dν/ν = dλ/λ)', () => {
    for (const key of ['W1', 'W3', 'V']) {
      const b = lib.bands[key];
      const lp = pivotWavelength(b);
      expect(meanInverseFrequencySquared(b) / ((lp * lp) / SPEED_OF_LIGHT_ANGSTROM_S ** 2) - 1).toBeCloseTo(0, 10);
    }
  });
});

describe('band integration accuracy', () => {
  it('a flat spectrum has band mean equal to itself, a power law matches the analytic integral', () => {
    const b = lib.bands.Ks;
    expect(bandMeanFlambda(b, () => 2.5)).toBeCloseTo(2.5, 12);
    // ∫ λ⁻² R λ dλ / ∫ R λ dλ = ∫R/λ / ∫Rλ = 1/λ_p² by the pivot's definition.
    expect(bandMeanFlambda(b, (l) => 1 / (l * l)) * pivotWavelength(b) ** 2).toBeCloseTo(1, 12);
  });

  it('Planck × curve agrees with a brute-force 0.01 Å trapezoid to < 1e-6 (Wien side, 3000 K in U)', () => {
    // Independent check of the quadrature on the steepest case among optical bands.
    const b = lib.bands.U;
    const w = b.wavelengthAngstrom;
    const r = b.response;
    let num = 0;
    let den = 0;
    const h = 0.01;
    for (let i = 0; i + 1 < w.length; i++) {
      const n = Math.round((w[i + 1] - w[i]) / h);
      for (let j = 0; j <= n; j++) {
        const l = w[i] + (j * (w[i + 1] - w[i])) / n;
        const s = r[i] + ((r[i + 1] - r[i]) * j) / n;
        const c = j === 0 || j === n ? 0.5 : 1;
        num += c * s * Math.PI * planckLambdaCgsAngstrom(l, 3000);
        den += c * s;
      }
    }
    expect(Math.abs(planckBandMean(b, 3000, 0, F99) / (num / den) - 1)).toBeLessThan(1e-6);
  });

  it('rejects a curve that does not ascend, with the band named', () => {
    const bad = { key: 'X', convention: 'photon' as const, wavelengthAngstrom: [5000, 4000, 6000], response: [0, 1, 0] };
    expect(() => bandQuadrature(bad)).toThrow(/band X: wavelengths must ascend strictly \(node 2/);
  });
});

describe('the one-wavelength shortcut is only a preview', () => {
  it('differs from the band integral by far more than the 5e-4 tolerance for broad bands', () => {
    // docs/science.md 2: evaluating Planck at one wavelength instead of integrating is biased.
    for (const key of ['G', 'W3', 'u', 'NUV']) {
      const b = lib.bands[key];
      const worst = Math.max(
        ...[3000, 5772, 25000].map((t) => Math.abs(previewPlanckAtPivot(b, t, 0, F99) / planckBandMean(b, t, 0, F99) - 1)),
      );
      expect(worst, key).toBeGreaterThan(5e-3);
    }
  });
});

describe('planckBandMean', () => {
  it('extinction dims the band mean by ≈ 10^(−0.4 A_V k(λ_p)) for a narrow-ish band', () => {
    const b = lib.bands.J;
    const ratio = planckBandMean(b, 5772, 1, F99) / planckBandMean(b, 5772, 0, F99);
    // F99 A_J/A_V ≈ 0.26 (python3-extinction 0.4.6 at 1.25 µm: 0.2568).
    expect(-2.5 * Math.log10(ratio)).toBeCloseTo(0.26, 1);
  });

  it('rejects a non-positive temperature and a non-finite A_V', () => {
    expect(() => planckBandMean(lib.bands.V, 0, 0, F99)).toThrow(/temperature must be a positive number/);
    expect(() => planckBandMean(lib.bands.V, 5000, Number.NaN, F99)).toThrow(/A_V must be a finite number/);
  });
});
