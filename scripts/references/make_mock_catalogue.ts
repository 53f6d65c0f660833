// Writes a wide CSV of invented, noise-free mock stars whose band magnitudes come from direct
// integration of a reddened blackbody through each band (planckBandMean, checked against synphot),
// not from the fit's interpolation tables. Used to time the CLI and in its end-to-end test.
// Usage: npx tsx scripts/references/make_mock_catalogue.ts <count> <out.csv> [seed]
import { writeFileSync } from 'node:fs';
import { getBand, starterBandLibrary } from '../../src/core/bands';
import { flambdaCgsToMagnitude, planckBandMean } from '../../src/core/photometry';
import { MAS_PER_RAD } from '../../src/core/constants';

export const MOCK_BANDS = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2', 'W3'] as const;

export interface MockStar {
  id: string;
  teffK: number;
  thetaMas: number;
  parallaxMas: number;
  avMag: number;
}

/** Deterministic pseudo-random numbers (mulberry32) so the file is the same on every run. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function mockStars(count: number, seed = 7): MockStar[] {
  const r = rng(seed);
  const stars: MockStar[] = [];
  for (let i = 0; i < count; i++) {
    stars.push({
      id: `cinder-${String(i + 1).padStart(6, '0')}`,
      teffK: 3500 + 6500 * r(),
      thetaMas: 0.02 + 0.5 * r(),
      parallaxMas: 2 + 20 * r(),
      avMag: 0.3 * r(),
    });
  }
  return stars;
}

export function mockCsv(stars: MockStar[], law: 'f99' | 'ccm89' | 'od94' = 'f99', rv = 3.1): string {
  const library = starterBandLibrary();
  const lines = [['id', 'ra', 'dec', 'parallax_mas', 'parallax_err_mas', 'av', ...MOCK_BANDS.flatMap((b) => [b, `${b}_err`])].join(',')];
  for (const [i, s] of stars.entries()) {
    // s = (θ/2)² with θ in radians (docs/science.md §1).
    const dilution = (s.thetaMas / MAS_PER_RAD / 2) ** 2;
    const cells = [s.id, ((i * 7.31) % 360).toFixed(6), (((i * 3.7) % 170) - 85).toFixed(6), String(s.parallaxMas), String(s.parallaxMas / 50), String(s.avMag)];
    for (const key of MOCK_BANDS) {
      const band = getBand(library, key)!;
      const flux = dilution * planckBandMean(band, s.teffK, s.avMag, { law, rv });
      cells.push(String(flambdaCgsToMagnitude(band, flux)), '0.02');
    }
    lines.push(cells.join(','));
  }
  return lines.join('\n') + '\n';
}

if (process.argv[1] && process.argv[1].endsWith('make_mock_catalogue.ts')) {
  const count = Number(process.argv[2] ?? 1000);
  const out = process.argv[3] ?? 'mock.csv';
  writeFileSync(out, mockCsv(mockStars(count, Number(process.argv[4] ?? 7))));
}
