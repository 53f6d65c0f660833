// A campaign with a fitted, partly reviewed catalogue, for catalogue, export, token and browser
// tests. The stars are the invented mock stars of factories-photometry (magnitudes integrated
// through the real passbands); the fits are real: a batch started through startBatch and drained
// by the same worker loop `npm run worker` runs. Review states are then set on the results
// directly (the review desk's own rules are tested by its own tests).
import type { AppServices } from '../src/server/context';
import type { Actor } from '../src/server/context';
import { startBatch, type BatchOptionsInput } from '../src/server/batches';
import { createWorker } from '../workers/runner';
import { insertMockStars, type InsertStarsOptions, type MockStar } from './factories-photometry';

export interface FittedCatalogue {
  batchId: string;
  stars: MockStar[];
  /** Fit ids by review state after the factory ran. */
  accepted: number[];
  flagged: number[];
  pending: number[];
}

export interface FitCatalogueOptions extends Partial<Omit<InsertStarsOptions, 'campaignId'>> {
  /** Every n-th successful fit is flagged (default 5); every m-th of the others stays unreviewed (default 4); the rest are accepted. */
  flagEvery?: number;
  pendingEvery?: number;
  options?: BatchOptionsInput;
  /** Star keys to fit (default: every star of the campaign). */
  starKeys?: string[];
  /** Every n-th star loses its parallax before the fit (no radius or luminosity). */
  noParallaxEvery?: number;
}

/** Inserts `count` mock stars, fits them in one batch and sets review states. */
export async function makeFittedCatalogue(app: AppServices, analyst: Actor, campaignId: string, o: FitCatalogueOptions = {}): Promise<FittedCatalogue> {
  const stars = insertMockStars(app.db, { campaignId, count: o.count ?? 60, seed: o.seed ?? 11, prefix: o.prefix, fewBandsEvery: o.fewBandsEvery, unconvertibleEvery: o.unconvertibleEvery, source: o.source });
  if (o.noParallaxEvery) {
    const clear = app.db.$client.prepare('UPDATE stars SET parallax_mas = NULL, parallax_err_mas = NULL WHERE id = ?');
    stars.forEach((s, i) => (i + 1) % o.noParallaxEvery! === 0 && clear.run(s.id));
  }
  const batch = startBatch(app, analyst, campaignId, { options: o.options ?? {}, ...(o.starKeys ? { starKeys: o.starKeys } : {}) });
  await createWorker(app, { owner: `factory-${batch.id}`, drain: true, idleMs: 5 }).run();
  return { batchId: batch.id, stars, ...setReviewStates(app, batch.id, o.flagEvery ?? 5, o.pendingEvery ?? 4) };
}

/** Re-fits the given stars in a new batch (their earlier results stop being current). */
export async function refit(app: AppServices, analyst: Actor, campaignId: string, starKeys: string[], options: BatchOptionsInput = {}): Promise<string> {
  const batch = startBatch(app, analyst, campaignId, { options, starKeys });
  await createWorker(app, { owner: `factory-refit-${batch.id}`, drain: true, idleMs: 5 }).run();
  return batch.id;
}

function setReviewStates(app: AppServices, batchId: string, flagEvery: number, pendingEvery: number) {
  const sqlite = app.db.$client;
  const ids = sqlite.prepare('SELECT id FROM fit_results WHERE batch_id = ? AND ok = 1 ORDER BY id').pluck().all(batchId) as number[];
  const accepted: number[] = [];
  const flagged: number[] = [];
  const pending: number[] = [];
  const set = sqlite.prepare('UPDATE fit_results SET review_status = ? WHERE id = ?');
  sqlite.transaction(() => {
    ids.forEach((id, i) => {
      if ((i + 1) % flagEvery === 0) {
        set.run('flagged', id);
        flagged.push(id);
      } else if ((i + 1) % pendingEvery === 0) {
        pending.push(id);
      } else {
        set.run('accepted', id);
        accepted.push(id);
      }
    });
  })();
  return { accepted, flagged, pending };
}
