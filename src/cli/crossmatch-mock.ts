// Invented mock stars for the CLI's cross-match fixtures (fixtures/crossmatch/): their photometry
// is made by direct integration of a blackbody through each band with the core (planckBandMean,
// itself checked against synphot), not from the fit's interpolation tables, so a fit of them must
// give back T and θ. Run by scripts/references/make_crossmatch_fixture.py, which writes the FITS
// and VOTable tables with astropy from the JSON this prints; the TSV is written here.
// Usage: node --import tsx src/cli/crossmatch-mock.ts <fixtures/crossmatch>
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { getBand, starterBandLibrary } from '../core/bands';
import { MAS_PER_RAD } from '../core/constants';
import { GAIA_VEGA_ZERO_POINT_MAG } from '../core/input/mapping';
import { flambdaCgsToMagnitude, planckBandMean } from '../core/photometry';

export interface CrossmatchStar {
  /** Invented, Gaia-like 64-bit number (above 2^53 on purpose), kept as text. */
  sourceId: string;
  teffK: number;
  thetaMas: number;
  parallaxMas: number;
  raDeg: number;
  decDeg: number;
  /** 2MASS ph_qual letters for J, H, Ks. */
  phQual: string;
}

/** Letters a cross-match really shows: mostly A, some B, and C/U bands that must be left out. */
const QUALITIES = ['AAA', 'AAA', 'ABA', 'CAA', 'AUA', 'AAA', 'AAC', 'BAA', 'UUU', 'AAA', 'ACA', 'AAB'];

/** A C or U band's value is made this much fainter, so a fit that used it would miss T. */
export const BAD_LETTER_OFFSET_MAG = 0.4;

export const GAIA_FLUX_REL_ERR = 0.001;
export const TMASS_MAG_ERR = 0.02;

export function crossmatchStars(): CrossmatchStar[] {
  return QUALITIES.map((q, i) => ({
    sourceId: (5853498713190525696n + BigInt(i) * 7919n).toString(),
    teffK: 3900 + 450 * i,
    thetaMas: 0.03 + 0.021 * i,
    parallaxMas: 3 + 1.7 * i,
    raDeg: 10 + 25.5 * i,
    decDeg: -60 + 9.25 * i,
    phQual: q,
  }));
}

/** Catalogue magnitude of a noise-free star in a band: s π B through the curve, s = (θ/2)² (docs/science.md §1–3). */
export function mockMag(bandKey: string, star: { teffK: number; thetaMas: number }): number {
  const band = getBand(starterBandLibrary(), bandKey)!;
  const dilution = (star.thetaMas / MAS_PER_RAD / 2) ** 2;
  return flambdaCgsToMagnitude(band, dilution * planckBandMean(band, star.teffK, 0, { law: 'f99', rv: 3.1 }));
}

/** Gaia mean flux in e⁻/s for a catalogue (Vega) magnitude: the inverse of G = −2.5 log10(flux) + ZP (Riello et al. 2021). */
export function gaiaFlux(bandKey: 'G' | 'BP' | 'RP', mag: number): number {
  return 10 ** (-0.4 * (mag - GAIA_VEGA_ZERO_POINT_MAG[bandKey]));
}

export interface CrossmatchRow {
  source_id: string;
  ra: number;
  dec: number;
  parallax: number;
  parallax_error: number;
  [column: string]: string | number;
}

/** One row per star with the archives' own column names (Gaia DR3 gaia_source, 2MASS PSC). */
export function crossmatchRows(stars = crossmatchStars()): CrossmatchRow[] {
  return stars.map((s) => {
    const row: CrossmatchRow = { source_id: s.sourceId, ra: s.raDeg, dec: s.decDeg, parallax: s.parallaxMas, parallax_error: s.parallaxMas / 50 };
    for (const key of ['G', 'BP', 'RP'] as const) {
      const flux = gaiaFlux(key, mockMag(key, s));
      row[`phot_${key.toLowerCase()}_mean_flux`] = flux;
      row[`phot_${key.toLowerCase()}_mean_flux_error`] = flux * GAIA_FLUX_REL_ERR;
    }
    (['J', 'H', 'Ks'] as const).forEach((key, i) => {
      const col = key === 'Ks' ? 'k' : key.toLowerCase();
      const bad = s.phQual[i] === 'C' || s.phQual[i] === 'U';
      row[`${col}_m`] = mockMag(key, s) + (bad ? BAD_LETTER_OFFSET_MAG : 0);
      row[`${col}_msigcom`] = TMASS_MAG_ERR;
    });
    row.ph_qual = s.phQual;
    return row;
  });
}

/** VizieR-style names (Vmag, e_Vmag, Plx, RA_ICRS …), tab-separated, B V J H K magnitudes. */
export function vizierTsv(stars = crossmatchStars()): string {
  const bands: [string, string][] = [['B', 'Bmag'], ['V', 'Vmag'], ['J', 'Jmag'], ['H', 'Hmag'], ['Ks', 'Kmag']];
  const header = ['Name', 'RA_ICRS', 'DE_ICRS', 'Plx', 'e_Plx', ...bands.flatMap(([, c]) => [c, `e_${c}`])];
  const lines = [header.join('\t')];
  stars.forEach((s, i) => {
    const cells = [`Tarn ${i + 1}`, s.raDeg.toFixed(6), s.decDeg.toFixed(6), String(s.parallaxMas), String(s.parallaxMas / 50)];
    for (const [key] of bands) cells.push(mockMag(key, s).toFixed(6), '0.02');
    lines.push(cells.join('\t'));
  });
  return lines.join('\n') + '\n';
}

if (process.argv[1] && process.argv[1].endsWith('crossmatch-mock.ts')) {
  const out = process.argv[2] ?? 'fixtures/crossmatch';
  const stars = crossmatchStars();
  writeFileSync(path.join(out, 'vizier_style.tsv'), vizierTsv(stars));
  process.stdout.write(JSON.stringify({ stars, rows: crossmatchRows(stars) }));
}
