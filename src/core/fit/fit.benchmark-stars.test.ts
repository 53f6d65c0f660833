// Blackbody mock stars and the blackbody model error: these test the pure Planck fit (planckOnly; the
// photosphere fit on real stars is tested in scripts/photosphere/photosphere.test.ts).
// The fit on real stars: Gaia FGK benchmark stars v3 (Soubiran et al. 2024; ../shared/data/benchmark,
// licence beside the file), fundamental Teff from interferometric angular diameters and bolometric flux.
// docs/science.md check table: median T_fit/Teff − 1 within ±3 % in each 1000 K bin from 4000 to 7000 K
// with Gaia DR3 G/BP/RP and quality-A 2MASS bands. The same stars measure the blackbody model error
// recorded in model-error.ts.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { readFitsTable } from '../input/fits-file';
import { starterBandLibrary, requireBand } from '../bands';
import { measurementToBandFlux } from '../photometry';
import type { BandFlux } from '../types';
import { prepareFitModel, fitStar } from './fit-star';
import { BLACKBODY_MODEL_ERROR_FRACTION } from './model-error';

const root = fileURLToPath(new URL('../../..', import.meta.url));
const file = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');
const lib = starterBandLibrary();
/** 2.5/ln 10: σ_m = 1.0857 σ_F/F (common practice). */
const MAG_PER_REL_FLUX = 2.5 / Math.LN10;

interface Star {
  id: string;
  teffRef: number;
  teffRefErr: number;
  bands: BandFlux[];
  parallaxMas: number;
  parallaxErrMas: number;
}

function loadStars(): Star[] {
  const t = readFitsTable(new Uint8Array(readFileSync(file)), { source: 'gbs_v3_dev_half.fits' });
  const col = (n: string) => t.getFloat64(n);
  const hip = t.getColumn('hip');
  const teff = col('teff');
  const eteff = col('e_teff');
  const gaia: [string, string, string][] = [
    ['G', 'phot_g_mean_mag', 'phot_g_mean_flux'],
    ['BP', 'phot_bp_mean_mag', 'phot_bp_mean_flux'],
    ['RP', 'phot_rp_mean_mag', 'phot_rp_mean_flux'],
  ];
  const tmass: [string, string, string][] = [
    ['J', 'j_m', 'j_msigcom'],
    ['H', 'h_m', 'h_msigcom'],
    ['Ks', 'ks_m', 'ks_msigcom'],
  ];
  const qual = t.getColumn('ph_qual_tmass');
  const plx = col('parallax');
  const plxErr = col('parallax_error');
  const gaiaCols = gaia.map(([k, m, f]) => [k, col(m), col(f), col(`${f}_error`)] as const);
  const tmassCols = tmass.map(([k, m, e]) => [k, col(m), col(e)] as const);
  const stars: Star[] = [];
  for (let i = 0; i < t.rowCount; i++) {
    const bands: BandFlux[] = [];
    for (const [key, mag, fl, fe] of gaiaCols) {
      if (!Number.isFinite(mag[i]) || !(fl[i] > 0) || !(fe[i] > 0)) continue;
      bands.push(measurementToBandFlux(requireBand(lib, key), { bandKey: key, mag: mag[i], magErr: (MAG_PER_REL_FLUX * fe[i]) / fl[i] }));
    }
    const q = typeof qual[i] === 'string' ? (qual[i] as string) : '';
    tmassCols.forEach(([key, mag, err], j) => {
      if (q[j] === 'A' && Number.isFinite(mag[i]) && Number.isFinite(err[i])) {
        bands.push(measurementToBandFlux(requireBand(lib, key), { bandKey: key, mag: mag[i], magErr: err[i] }));
      }
    });
    stars.push({ id: String(hip[i]), teffRef: teff[i], teffRefErr: eteff[i], bands, parallaxMas: plx[i], parallaxErrMas: plxErr[i] });
  }
  return stars;
}

function median(a: number[]): number {
  const v = a.slice().sort((x, y) => x - y);
  const m = v.length >> 1;
  return v.length % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

describe('Gaia FGK benchmark stars v3 (Soubiran et al. 2024)', () => {
  const stars = loadStars();
  const model = prepareFitModel(lib, { planckOnly: true }); // F99, R_V 3.1, A_V 0 (stars within ~100 pc), floor 0.02
  const fits = stars.map((s) => ({ star: s, r: fitStar(model, { id: s.id, bandFluxes: s.bands, parallaxMas: s.parallaxMas, parallaxErrMas: s.parallaxErrMas }) }));
  const good = fits.flatMap(({ star, r }) => (r.ok && r.teffK !== null ? [{ star, teffK: r.teffK, errK: r.teffErrK as number }] : []));

  it('fits every star that has Gaia photometry; the others fail with a reason, not a crash', () => {
    expect(stars).toHaveLength(96);
    for (const { star, r } of fits) {
      if (star.bands.length >= 2) expect(r.ok, star.id).toBe(true);
      else expect(r.ok === false && r.reason === 'few_bands').toBe(true);
    }
    expect(good.length).toBeGreaterThanOrEqual(90);
  });

  it('median T_fit/Teff − 1 is within ±3 % in each 1000 K bin from 4000 to 7000 K', () => {
    for (const lo of [4000, 5000, 6000]) {
      const inBin = good.filter((g) => g.star.teffRef >= lo && g.star.teffRef < lo + 1000);
      expect(inBin.length, `${lo}–${lo + 1000} K`).toBeGreaterThanOrEqual(10);
      const med = median(inBin.map((g) => g.teffK / g.star.teffRef - 1));
      expect(Math.abs(med), `${lo}–${lo + 1000} K: median ${med}`).toBeLessThan(0.03);
    }
  });

  it('the recorded blackbody model-error term is what these stars give (68.3 % coverage)', () => {
    const coverage = (f: number) =>
      good.filter((g) => Math.abs(g.teffK - g.star.teffRef) < Math.sqrt(g.errK ** 2 + g.star.teffRefErr ** 2 + (f * g.teffK) ** 2)).length / good.length;
    expect(coverage(0)).toBeLessThan(0.6); // without the term the intervals are too short
    let lo = 0;
    let hi = 0.2;
    for (let i = 0; i < 40; i++) {
      const mid = 0.5 * (lo + hi);
      if (coverage(mid) >= 0.683) hi = mid;
      else lo = mid;
    }
    expect(Math.abs(hi - BLACKBODY_MODEL_ERROR_FRACTION)).toBeLessThan(0.003);
    expect(coverage(BLACKBODY_MODEL_ERROR_FRACTION)).toBeGreaterThanOrEqual(0.66);
  });

  it('with modelErrorFraction switched on, reported intervals cover the fundamental Teff about 68 % of the time', () => {
    let inside = 0;
    let n = 0;
    for (const { star } of fits) {
      const r = fitStar(model, { id: star.id, bandFluxes: star.bands }, { modelErrorFraction: BLACKBODY_MODEL_ERROR_FRACTION });
      if (!r.ok || r.teffK === null) continue;
      expect(r.flags).toContain('model_error_added');
      n++;
      if (Math.abs(r.teffK - star.teffRef) < Math.hypot(r.teffErrK as number, star.teffRefErr)) inside++;
    }
    expect(inside / n).toBeGreaterThan(0.62);
    expect(inside / n).toBeLessThan(0.8);
  });
});
