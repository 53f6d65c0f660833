// Season two of the invented Lanternfield Survey: a few hundred invented stars, so the demo's
// catalogue diagrams, review desk and downloads have something to show. Names are put together from
// invented syllables (no real star is named); the photometry is made by the core itself (a blackbody
// through each real passband times the photosphere model's correction, src/seed/review-stars.ts)
// with noise, and the fits run through the
// real batch path (startBatch + a worker draining the queue). Everything is deterministic (fixed seed).
import { mulberry32 } from '../core/fit/random';
import type { Actor, AppServices } from '../server/context';
import { bulkDecide, decide } from '../server/review';
import { fitAndDrain, insertReviewStars, REVIEW_BANDS, type ReviewStarSpec } from './review-stars';

export const DEMO_SEASON_TWO_COUNT = 300;
export const DEMO_SEASON_TWO_SOURCE = 'Lanternfield season-two photometry';

// Plain English-sounding pieces that name no catalogued star; joined they read like place names.
const HEADS = ['brin', 'cask', 'dorr', 'fenn', 'gild', 'holl', 'kest', 'lorn', 'mull', 'nett', 'pell', 'quorr', 'rook', 'skell', 'thren', 'vell', 'wick', 'yarr', 'brack', 'corm', 'drum', 'ferr', 'glim', 'harr'];
const LINKS = ['a', 'e', 'o', 'i', 'en', 'ow', 'am', 'er'];
const TAILS = ['mere', 'stead', 'low', 'fall', 'holt', 'ridge', 'vane', 'crest', 'wick', 'moor', 'bourne', 'gate', 'thorpe', 'ley'];

/** Distinct invented names, the same list for the same seed. */
export function inventedStarNames(count: number, seed = 2026): string[] {
  const rand = mulberry32(seed);
  const pick = <T>(xs: readonly T[]) => xs[Math.floor(rand() * xs.length)];
  const names = new Set<string>();
  while (names.size < count) {
    const word = pick(HEADS) + pick(LINKS) + pick(TAILS);
    const name = word[0].toUpperCase() + word.slice(1);
    // A few get a number, as a survey would for a faint companion or a second field.
    names.add(rand() < 0.2 ? `${name} ${2 + Math.floor(rand() * 8)}` : name);
  }
  return [...names];
}

/**
 * The season-two stars: Teff spread 3500–9000 K (log-uniform), radii near the main sequence with a
 * few giants, distances 15–250 pc. About one in eight has an infrared excess (W3, W4 brighter), one
 * in ten a bad band (a measurement off by 0.4–0.9 mag), one in eight a weak parallax (ϖ/σ 1.5–4).
 */
export function seasonTwoSpecs(count = DEMO_SEASON_TWO_COUNT, seed = 2026): ReviewStarSpec[] {
  const rand = mulberry32(seed + 1);
  const names = inventedStarNames(count, seed);
  const optical = ['B', 'V', 'G', 'BP', 'RP', 'J', 'H', 'Ks'];
  return names.map((starKey) => {
    const teffK = Math.round(3500 * Math.exp(rand() * Math.log(9000 / 3500)));
    const giant = teffK < 5600 && rand() < 0.12;
    // R/R☉ roughly (T/5772)^1.1 on the main sequence (common practice as a rough scaling), ±15 %.
    const radiusRsun = (giant ? 6 + rand() * 14 : (teffK / 5772) ** 1.1) * (0.85 + 0.3 * rand());
    const distancePc = 15 + rand() * 235;
    const parallaxMas = 1000 / distancePc;
    // θ[mas] = R/R☉ · ϖ[mas] / 107.516 (docs/science.md, derived values).
    const thetaMas = (radiusRsun * parallaxMas) / 107.516;
    const spec: ReviewStarSpec = { starKey, teffK, lumClass: giant ? 'giant' : 'dwarf', thetaMas: Number(thetaMas.toPrecision(5)), parallaxMas: Number(parallaxMas.toFixed(3)) };
    const u = rand();
    if (u < 0.125) spec.parallaxErrMas = Number((parallaxMas / (1.5 + rand() * 2.5)).toFixed(3));
    const offsets: Record<string, number> = {};
    if (rand() < 0.125) {
      offsets.W3 = -(0.5 + rand() * 1.0);
      offsets.W4 = offsets.W3 - (0.4 + rand() * 1.2);
    }
    if (rand() < 0.1) offsets[optical[Math.floor(rand() * optical.length)]] = (rand() < 0.5 ? -1 : 1) * (0.4 + rand() * 0.5);
    if (Object.keys(offsets).length) spec.offsetsMag = offsets;
    // Not every star was observed in every band (mid-infrared missing for a fifth of them).
    if (rand() < 0.2 && !offsets.W3) spec.bands = REVIEW_BANDS.filter((b) => b !== 'W3' && b !== 'W4');
    return spec;
  });
}

interface FitRow {
  id: number;
  starKey: string;
  chi2Red: number | null;
  flags: string;
}

/**
 * Adds season two to the demo campaign (skipped when its stars are already there): photometry, one
 * batch started by the analyst, then the reviewer's work so far — clean fits of stars above 4200 K
 * accepted in one bulk action, fits with an infrared excess or a bad band flagged one by one with a
 * reason, the rest (mostly cool stars and weak parallaxes) left waiting on the review desk.
 */
export async function seedDemoSeasonTwo(app: AppServices, analyst: Actor, reviewer: Actor, campaignId: string): Promise<string | null> {
  const specs = seasonTwoSpecs();
  const sqlite = app.db.$client;
  if (sqlite.prepare('SELECT 1 FROM stars WHERE campaign_id = ? AND star_key = ?').get(campaignId, specs[0].starKey)) return null;
  insertReviewStars(app.db, campaignId, specs, { source: DEMO_SEASON_TWO_SOURCE, seed: 2027, photometry: 'photosphere' });
  const batchId = await fitAndDrain(
    app,
    analyst,
    campaignId,
    {},
    specs.map((s) => s.starKey),
  );
  const fits = sqlite
    .prepare("SELECT f.id, s.star_key AS starKey, f.chi2_red AS chi2Red, f.flags FROM fit_results f JOIN stars s ON s.id = f.star_id WHERE f.batch_id = ? AND f.ok = 1 AND f.review_status = 'pending' ORDER BY s.star_key")
    .all(batchId) as FitRow[];
  const has = (f: FitRow, code: string) => f.flags.split(' ').includes(code);
  let flaggedExcess = 0;
  let flaggedBand = 0;
  for (const f of fits) {
    // The reviewer has reached about two thirds of the flagged ones; the rest wait on the desk.
    if (has(f, 'ir_excess') && flaggedExcess++ % 3 !== 2) {
      decide(app.db, reviewer, f.id, { decision: 'flagged', reason: 'ir_excess', comment: 'W3 and W4 sit well above the photosphere; check for a disc before using L.' });
    } else if ((has(f, 'outlier') || has(f, 'rejected') || has(f, 'clipped')) && flaggedBand++ % 3 !== 2) {
      decide(app.db, reviewer, f.id, { decision: 'flagged', reason: 'bad_photometry', comment: has(f, 'rejected') ? 'One band disagreed with the others and was rejected; ask the photometry team for the raw frame.' : 'One band is far off the curve; ask the photometry team for the raw frame.' });
    }
  }
  bulkDecide(app.db, reviewer, campaignId, {
    filter: { batchId, chi2RedBelow: 3, noFlags: true, teffMinK: 4200 },
    decision: 'accepted',
    comment: 'Season two: clean fits, reduced χ² below 3, no quality flag.',
  });
  return batchId;
}
