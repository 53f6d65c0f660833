// Fitted stars for review tests and the demo seed: invented stars whose magnitudes are made by
// integrating a blackbody through each real passband (planckBandMean), times the Kiln photosphere's
// correction for the band when asked (the demo: its fits then look like those of real stars), and
// converting with the band's zero-point; then fitted by the real path (startBatch + a worker
// draining the queue), so the numbers on the star sheet and in the queue are the core's own.
import type { AppDatabase } from '../db/client';
import { requireBand, starterBandLibrary } from '../core/bands';
import { dilutionFromThetaMas } from '../core/fit/derived';
import { mulberry32, normalDeviate } from '../core/fit/random';
import { flambdaCgsToMagnitude, planckBandMean } from '../core/photometry';
import { defaultPhotosphere, lnCorrection, type LumClass } from '../core/photosphere';
import { startBatch, type BatchOptionsInput } from '../server/batches';
import type { Actor, AppServices } from '../server/context';
import { decide } from '../server/review';
import { createWorker } from '../../workers/runner';

export const REVIEW_BANDS = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2', 'W3', 'W4'] as const;

export interface ReviewStarSpec {
  starKey: string;
  teffK: number;
  thetaMas: number;
  parallaxMas: number;
  parallaxErrMas?: number;
  /** The class whose photosphere correction shapes the photometry (default dwarf). */
  lumClass?: LumClass;
  bands?: readonly string[];
  /** Added to a band's magnitude after it is made (negative = brighter), e.g. an infrared excess. */
  offsetsMag?: Record<string, number>;
}

/**
 * The invented Lanternfield Survey's season-one stars (names from src/seed/seed.ts). Harthglow is
 * given a mid-infrared excess (W3, W4 brighter than the photosphere) and Orrowind one bad J value,
 * so the sheet and the desk show flagged and excluded bands.
 */
export const LANTERNFIELD_STARS: ReviewStarSpec[] = [
  { starKey: 'Cindermoor', teffK: 5610, thetaMas: 0.412, parallaxMas: 42.1 },
  { starKey: 'Ashbright', teffK: 6240, thetaMas: 0.288, parallaxMas: 25.7 },
  { starKey: 'Velloran', teffK: 4870, thetaMas: 0.351, parallaxMas: 48.9 },
  { starKey: 'Tamsel Minor', teffK: 4310, thetaMas: 0.297, parallaxMas: 61.3 },
  { starKey: 'Orrowind', teffK: 5190, thetaMas: 0.263, parallaxMas: 31.8, offsetsMag: { J: -0.45 } },
  { starKey: 'Harthglow', teffK: 5880, thetaMas: 0.205, parallaxMas: 19.4, offsetsMag: { W3: -1.2, W4: -2.0 } },
  { starKey: 'Pellucid Nine', teffK: 3920, thetaMas: 0.318, parallaxMas: 88.5, parallaxErrMas: 21 },
  { starKey: 'Quillmark', teffK: 6710, thetaMas: 0.158, parallaxMas: 14.2 },
];

export interface InsertedStar {
  id: number;
  starKey: string;
  spec: ReviewStarSpec;
}

/**
 * Inserts (or reuses, by key) the stars and their magnitudes with 0.02–0.04 mag errors and matching
 * Gaussian noise from a fixed seed; one transaction. An existing value for the same band and
 * source is left as it is.
 */
export function insertReviewStars(
  db: AppDatabase,
  campaignId: string,
  specs: ReviewStarSpec[] = LANTERNFIELD_STARS,
  options: { source?: string; uploadId?: string | null; seed?: number; noise?: boolean; photometry?: 'planck' | 'photosphere' } = {},
): InsertedStar[] {
  const library = starterBandLibrary();
  const model = options.photometry === 'photosphere' ? defaultPhotosphere() : null;
  const rand = mulberry32(options.seed ?? 11);
  const sqlite = db.$client;
  const findStar = sqlite.prepare('SELECT id FROM stars WHERE campaign_id = ? AND star_key = ?').pluck();
  const insertStar = sqlite.prepare('INSERT INTO stars (campaign_id, star_key, parallax_mas, parallax_err_mas) VALUES (?, ?, ?, ?) RETURNING id').pluck();
  const insertMeasurement = sqlite.prepare(
    `INSERT INTO measurements (star_id, band_key, source, upload_id, mag, mag_err, upper_limit) VALUES (?, ?, ?, ?, ?, ?, 0)
     ON CONFLICT (star_id, band_key, source) DO NOTHING`,
  );
  const source = options.source ?? 'Lanternfield season-one photometry';
  const made: InsertedStar[] = [];
  sqlite.transaction(() => {
    for (const spec of specs) {
      const id =
        (findStar.get(campaignId, spec.starKey) as number | undefined) ??
        (insertStar.get(campaignId, spec.starKey, spec.parallaxMas, spec.parallaxErrMas ?? 0.02 * spec.parallaxMas) as number);
      const s = dilutionFromThetaMas(spec.thetaMas);
      for (const key of spec.bands ?? REVIEW_BANDS) {
        const band = requireBand(library, key);
        const correction = model ? Math.exp(lnCorrection(model, spec.lumClass ?? 'dwarf', key, Math.log(spec.teffK))) : 1;
        const flux = s * planckBandMean(band, spec.teffK, 0, { law: 'f99', rv: 3.1 }) * correction;
        // Mid-infrared values are less precise in real catalogues; give them larger errors.
        const errMag = band.pivotAngstrom > 50000 ? 0.04 : 0.02;
        const noise = options.noise === false ? 0 : errMag * normalDeviate(rand);
        const mag = flambdaCgsToMagnitude(band, flux) + (spec.offsetsMag?.[key] ?? 0) + noise;
        insertMeasurement.run(id, key, source, options.uploadId ?? null, mag, errMag);
      }
      made.push({ id, starKey: spec.starKey, spec });
    }
  }).immediate();
  return made;
}

/** Start a batch as `actor` and drain the queue in this process, as `npm run worker` would. Returns the batch id. */
export async function fitAndDrain(app: AppServices, actor: Actor, campaignId: string, options: BatchOptionsInput = {}, starKeys?: string[]): Promise<string> {
  const batch = startBatch(app, actor, campaignId, { options, ...(starKeys ? { starKeys } : {}) });
  await createWorker(app, { owner: `factory-${batch.id}`, drain: true, idleMs: 5 }).run();
  return batch.id;
}

/** The fit result id of a star in a batch. */
export function fitIdOf(db: AppDatabase, batchId: string, starKey: string): number {
  const id = db.$client
    .prepare('SELECT r.id FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? AND s.star_key = ?')
    .pluck()
    .get(batchId, starKey) as number | undefined;
  if (id === undefined) throw new Error(`no fit of ${starKey} in batch ${batchId}`);
  return id;
}

/**
 * The demo's review material: the Lanternfield stars with mock photometry (shaped by the
 * photosphere model, as the default fit expects of a real star), fitted in one batch
 * started by the analyst, and one fit already accepted by the reviewer so the history shows how a
 * decision looks. Skipped when the campaign already has fits.
 */
export async function seedReviewDemo(app: AppServices, analyst: Actor, reviewer: Actor, campaignId: string): Promise<string | null> {
  const existing = app.db.$client.prepare('SELECT 1 FROM fit_results WHERE campaign_id = ? LIMIT 1').get(campaignId);
  if (existing) return null;
  insertReviewStars(app.db, campaignId, LANTERNFIELD_STARS, { photometry: 'photosphere' });
  const batchId = await fitAndDrain(app, analyst, campaignId, {}, LANTERNFIELD_STARS.map((s) => s.starKey));
  decide(app.db, reviewer, fitIdOf(app.db, batchId, 'Cindermoor'), { decision: 'accepted', comment: 'Smooth photometry, χ²_ν near 1; the curve follows every band.' });
  return batchId;
}
