import { describe, expect, it } from 'vitest';
import { starterBandLibrary } from './bands';
import {
  applyFloor,
  bandFlambdaCgsToFnuJy,
  flambdaCgsToMagnitude,
  magnitudeToFlambdaCgs,
  measurementToBandFlux,
  zeroMagnitudeFlambdaCgs,
  MAG_TO_LN_FLUX,
} from './magnitude';
import { pivotWavelength } from './passband';

const lib = starterBandLibrary();
const b = lib.bands;
const rel = (a: number, e: number) => Math.abs(a / e - 1);

describe('Vega-type zero-points quoted in F_λ', () => {
  it('Bessell V = 0 is 363.1e-11 erg s⁻¹ cm⁻² Å⁻¹ and V = 10 is 1e-4 of it', () => {
    // Source: Bessell, Castelli & Plez 1998, Table A2.
    expect(rel(magnitudeToFlambdaCgs(b.V, 0), 363.1e-11)).toBeLessThan(1e-12);
    expect(rel(magnitudeToFlambdaCgs(b.V, 10), 363.1e-15)).toBeLessThan(1e-12);
    expect(rel(magnitudeToFlambdaCgs(b.U, 0), 417.5e-11)).toBeLessThan(1e-12);
    expect(rel(magnitudeToFlambdaCgs(b.I, 0), 112.6e-11)).toBeLessThan(1e-12);
  });

  it('2MASS J/H/Ks = 0 are 3.129e-10, 1.133e-10, 4.283e-11 with 1σ 1.7–2.0 %', () => {
    // Source: Cohen, Wheaton & Megeath 2003, Table 1 (also quoted in the curve files' description).
    expect(rel(magnitudeToFlambdaCgs(b.J, 0), 3.129e-10)).toBeLessThan(1e-12);
    expect(rel(magnitudeToFlambdaCgs(b.H, 0), 1.133e-10)).toBeLessThan(1e-12);
    expect(rel(magnitudeToFlambdaCgs(b.Ks, 0), 4.283e-11)).toBeLessThan(1e-12);
    expect(b.Ks.zeroPoint?.relErr).toBeCloseTo(8.053e-16 / 4.283e-14, 12);
  });
});

describe('AB bands', () => {
  it('GALEX NUV = 0 is 3631 Jy as a band-mean F_ν, converted with the pivot', () => {
    // Source: Oke & Gunn 1983 (AB); Morrissey et al. 2007 (GALEX is AB).
    const f = magnitudeToFlambdaCgs(b.NUV, 0);
    expect(rel(bandFlambdaCgsToFnuJy(b.NUV, f), 3631)).toBeLessThan(1e-12);
    const lp = pivotWavelength(b.NUV);
    expect(rel(f, (3631e-23 * 2.99792458e18) / (lp * lp))).toBeLessThan(1e-12);
  });

  it('SDSS u and z carry the catalogue offsets u_AB = u − 0.04, z_AB = z + 0.02', () => {
    // Source: SDSS flux calibration notes (from memory), docs/science.md 3.
    expect(rel(bandFlambdaCgsToFnuJy(b.u, magnitudeToFlambdaCgs(b.u, 0)), 3631 * 10 ** (0.4 * 0.04))).toBeLessThan(1e-12);
    expect(rel(bandFlambdaCgsToFnuJy(b.z, magnitudeToFlambdaCgs(b.z, 0)), 3631 * 10 ** (-0.4 * 0.02))).toBeLessThan(1e-12);
    expect(rel(bandFlambdaCgsToFnuJy(b.g, magnitudeToFlambdaCgs(b.g, 0)), 3631)).toBeLessThan(1e-12);
  });

  it('Gaia DR3 Vega magnitudes convert to AB with ZP_AB − ZP_Vega (G +0.1136, BP +0.0155, RP +0.3561)', () => {
    // Source: Riello et al. 2021, A&A 649, A3: ZP_AB = 25.8010, 25.3540, 25.1040; ZP_Vega = 25.6874, 25.3385, 24.7479.
    const abOf = (key: string, m: number) => -2.5 * Math.log10(bandFlambdaCgsToFnuJy(b[key], magnitudeToFlambdaCgs(b[key], m)) / 3631);
    expect(abOf('G', 12)).toBeCloseTo(12 + 0.1136, 10);
    expect(abOf('BP', 12)).toBeCloseTo(12 + 0.0155, 10);
    expect(abOf('RP', 12)).toBeCloseTo(12 + 0.3561, 10);
  });
});

describe('WISE isophotal zero-points', () => {
  it('W1 = 0: ⟨F_ν⟩ = F_ν,0 ν_iso² ⟨ν⁻²⟩ = 309.540 Jy × (λ_p/λ_iso)², i.e. ⟨F_λ⟩ = F_ν,0 c/λ_iso²', () => {
    // Source: Jarrett et al. 2011 (F_ν,0 = 309.540 Jy at λ_iso = 3.3526 µm for F_ν ∝ ν⁻²), docs/science.md 3.
    const f = magnitudeToFlambdaCgs(b.W1, 0);
    expect(rel(f, (309.54e-23 * 2.99792458e18) / 33526 ** 2)).toBeLessThan(1e-9);
    const lp = pivotWavelength(b.W1);
    expect(rel(bandFlambdaCgsToFnuJy(b.W1, f), 309.54 * (lp / 33526) ** 2)).toBeLessThan(1e-9);
  });

  it('skipping ⟨ν⁻²⟩ would bias W1/W2 by ~0.8 % and W3 by ~9 %', () => {
    // docs/science.md 3. Bias = 1 − (λ_iso/λ_p)² of treating F_ν,0 as the band-mean F_ν.
    const bias = (key: string) => {
      const zp = b[key].zeroPoint!;
      return bandFlambdaCgsToFnuJy(b[key], magnitudeToFlambdaCgs(b[key], 0)) / zp.fnuJy! - 1;
    };
    expect(bias('W1')).toBeGreaterThan(0.006);
    expect(bias('W1')).toBeLessThan(0.011);
    expect(bias('W2')).toBeGreaterThan(0.006);
    expect(bias('W2')).toBeLessThan(0.011);
    expect(bias('W3')).toBeGreaterThan(0.08);
    expect(bias('W3')).toBeLessThan(0.1);
  });
});

describe('measurementToBandFlux', () => {
  it('σ_F/F = 0.4 ln10 σ_m (first-order propagation)', () => {
    const bf = measurementToBandFlux(b.V, { bandKey: 'V', mag: 8, magErr: 0.02 });
    expect(bf.errCgs / bf.fluxCgs).toBeCloseTo(0.4 * Math.LN10 * 0.02, 14);
    expect(MAG_TO_LN_FLUX).toBeCloseTo(0.921034, 6);
    expect(bf.upperLimit).toBe(false);
    expect(flambdaCgsToMagnitude(b.V, bf.fluxCgs)).toBeCloseTo(8, 12);
  });

  it('optionally adds the zero-point uncertainty in quadrature', () => {
    const m = { bandKey: 'Ks', mag: 5, magErr: 0.02 };
    const plain = measurementToBandFlux(b.Ks, m);
    const withZp = measurementToBandFlux(b.Ks, m, { includeZeroPointError: true });
    expect(withZp.errCgs / withZp.fluxCgs).toBeCloseTo(Math.hypot(0.4 * Math.LN10 * 0.02, b.Ks.zeroPoint!.relErr), 14);
    expect(withZp.fluxCgs).toBe(plain.fluxCgs);
  });

  it('accepts flux in Jy for every band, including those without a zero-point', () => {
    for (const key of Object.keys(b)) {
      const bf = measurementToBandFlux(b[key], { bandKey: key, fnuJy: 1.5, fnuErrJy: 0.1 });
      expect(rel(bandFlambdaCgsToFnuJy(b[key], bf.fluxCgs), 1.5)).toBeLessThan(1e-12);
      expect(bf.errCgs / bf.fluxCgs).toBeCloseTo(0.1 / 1.5, 12);
    }
  });

  it('rejects magnitudes in a band without a zero-point, naming the flux column to use', () => {
    expect(b.BT.zeroPoint).toBeNull();
    expect(() => measurementToBandFlux(b.BT, { bandKey: 'BT', mag: 9, magErr: 0.02 })).toThrow(
      'band BT has no zero-point yet; give its flux in Jy (BT_jy)',
    );
    expect(() => zeroMagnitudeFlambdaCgs(b.Hp)).toThrow(/Hp_jy/);
  });

  it('keeps upper limits as limits and allows them without an uncertainty', () => {
    const ul = measurementToBandFlux(b.W4, { bandKey: 'W4', mag: 8.5, upperLimit: true });
    expect(ul.upperLimit).toBe(true);
    expect(ul.errCgs).toBe(0);
    expect(ul.fluxCgs).toBeCloseTo(magnitudeToFlambdaCgs(b.W4, 8.5), 25);
  });

  it('rejects bad measurements with clear messages', () => {
    expect(() => measurementToBandFlux(b.V, { bandKey: 'V', mag: 8 })).toThrow('band V: magnitude 8 has no uncertainty (V_err)');
    expect(() => measurementToBandFlux(b.V, { bandKey: 'V', mag: 8, magErr: 0.1, fnuJy: 1, fnuErrJy: 0.1 })).toThrow(/not both/);
    expect(() => measurementToBandFlux(b.V, { bandKey: 'V' })).toThrow(/no magnitude and no flux/);
    expect(() => measurementToBandFlux(b.V, { bandKey: 'V', mag: Number.NaN, magErr: 0.1 })).toThrow(/not a finite number/);
    expect(() => measurementToBandFlux(b.V, { bandKey: 'V', mag: 8, magErr: -0.1 })).toThrow(/negative/);
    expect(() => measurementToBandFlux(b.V, { bandKey: 'B', mag: 8, magErr: 0.1 })).toThrow(/measurement for band B given to band V/);
    expect(() => measurementToBandFlux(b.J, { bandKey: 'J', fnuJy: 2 })).toThrow('band J: flux 2 Jy has no uncertainty (J_jy_err)');
  });
});

describe('applyFloor', () => {
  it('adds a fraction of the flux in quadrature (default 2 %), 0 leaves the error alone', () => {
    const bf = { bandKey: 'V', fluxCgs: 1e-12, errCgs: 3e-15, upperLimit: false };
    expect(applyFloor(bf).errCgs).toBeCloseTo(Math.hypot(3e-15, 2e-14), 28);
    expect(applyFloor(bf, 0.05).errCgs).toBeCloseTo(Math.hypot(3e-15, 5e-14), 28);
    expect(applyFloor(bf, 0)).toEqual(bf);
    expect(bf.errCgs).toBe(3e-15);
    expect(() => applyFloor(bf, -0.1)).toThrow(/systematic floor/);
  });
});
