// Stars and measurements for queue, worker and batch tests (until the intake's import lands, and
// afterwards for speed): invented stars named KST-…, magnitudes made by integrating a blackbody
// through each real passband (planckBandMean) and converting with the band's zero-point — the
// same physics the fit inverts, computed directly rather than from the fit's tables.
import type { AppDatabase } from '../src/db/client';
import { requireBand, starterBandLibrary } from '../src/core/bands';
import { dilutionFromThetaMas } from '../src/core/fit/derived';
import { mulberry32 } from '../src/core/fit/random';
import { flambdaCgsToMagnitude, planckBandMean } from '../src/core/photometry';

export const MOCK_BANDS = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks'] as const;

export interface MockStar {
  id: number;
  starKey: string;
  teffK: number;
  thetaMas: number;
}

export interface InsertStarsOptions {
  campaignId: string;
  count: number;
  seed?: number;
  /** Key prefix (default KST). */
  prefix?: string;
  /** Every n-th star gets a single band, so its fit fails for lack of bands (a data failure). */
  fewBandsEvery?: number;
  /** Every n-th star also gets a BT magnitude: that band has no zero-point, so the value is skipped with a reason. */
  unconvertibleEvery?: number;
  source?: string;
}

/** Inserts mock stars with noise-free magnitudes (error 0.02 mag) in MOCK_BANDS; one transaction. */
export function insertMockStars(db: AppDatabase, o: InsertStarsOptions): MockStar[] {
  const library = starterBandLibrary();
  const bands = MOCK_BANDS.map((k) => requireBand(library, k));
  const rand = mulberry32(o.seed ?? 7);
  const sqlite = db.$client;
  const insertStar = sqlite.prepare(
    'INSERT INTO stars (campaign_id, star_key, parallax_mas, parallax_err_mas) VALUES (?, ?, ?, ?) RETURNING id',
  );
  const insertMeasurement = sqlite.prepare(
    'INSERT INTO measurements (star_id, band_key, source, mag, mag_err, upper_limit) VALUES (?, ?, ?, ?, ?, 0)',
  );
  const source = o.source ?? 'mock-catalogue';
  const made: MockStar[] = [];
  sqlite.transaction(() => {
    for (let n = 0; n < o.count; n++) {
      const teffK = 4000 + 4000 * rand();
      const thetaMas = 0.1 + 0.9 * rand();
      const s = dilutionFromThetaMas(thetaMas);
      const starKey = `${o.prefix ?? 'KST'}-${String(n + 1).padStart(6, '0')}`;
      const plx = 2 + 20 * rand();
      const id = (insertStar.get(o.campaignId, starKey, plx, 0.02 * plx) as { id: number }).id;
      const few = o.fewBandsEvery && (n + 1) % o.fewBandsEvery === 0;
      for (const band of few ? bands.slice(0, 1) : bands) {
        const flux = s * planckBandMean(band, teffK, 0, { law: 'f99', rv: 3.1 });
        insertMeasurement.run(id, band.key, source, flambdaCgsToMagnitude(band, flux), 0.02);
      }
      if (o.unconvertibleEvery && (n + 1) % o.unconvertibleEvery === 0) insertMeasurement.run(id, 'BT', source, 9.5, 0.03);
      made.push({ id, starKey, teffK, thetaMas });
    }
  })();
  return made;
}
