// Batches through their API handlers and use cases on a real migrated SQLite: who may start one,
// how bad options are refused, what every result records, and the progress numbers as a worker
// (the same loop `npm run worker` runs, here in-process) drains the queue.
import { afterEach, describe, expect, it } from 'vitest';
import { GET as listRoute, POST as startRoute } from '../src/pages/api/campaigns/[id]/batches/index';
import { POST as cancelRoute } from '../src/pages/api/batches/[batchId]/cancel';
import { GET as failuresRoute } from '../src/pages/api/batches/[batchId]/failures';
import { GET as progressRoute } from '../src/pages/api/batches/[batchId]/progress';
import { starterBandLibrary } from '../src/core/bands';
import { batchProgress, batchQueue, finishBatchIfDone, startBatch } from '../src/server/batches';
import type { Actor } from '../src/server/context';
import { appVersion } from '../src/server/health';
import { createWorker } from '../workers/runner';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { insertMockStars } from './factories-photometry';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
afterEach(() => {
  for (const a of apps.splice(0)) a.cleanup();
});

async function world(stars = 40, chunkStars?: number) {
  const t = createTestApp(chunkStars ? { FIT_CHUNK_STARS: String(chunkStars) } : {});
  apps.push(t);
  const analyst = await makeUser(t.app, { name: 'Ines Analyst' });
  const reviewer = await makeUser(t.app);
  const collaborator = await makeUser(t.app, { kind: 'guest' });
  const outsider = await makeUser(t.app);
  const campaign = makeCampaign(t.app, analyst, { name: 'Kestrel Deep Field' });
  await addToCampaign(t.app, analyst, campaign.id, reviewer, ['reviewer']);
  await addToCampaign(t.app, analyst, campaign.id, collaborator, ['collaborator']);
  const mock = insertMockStars(t.db, { campaignId: campaign.id, count: stars, fewBandsEvery: 10, unconvertibleEvery: 7 });
  return { t, analyst, reviewer, collaborator, outsider, campaign, mock };
}

/** Call an Astro API route the way Astro does: locals from the middleware, params, request. */
async function call(route: (ctx: never) => Promise<Response> | Response, t: TestApp, actor: Actor | null, params: Record<string, string>, init: { url?: string; body?: unknown } = {}) {
  const url = new URL(init.url ?? 'http://127.0.0.1/api/test');
  const request = new Request(url, init.body === undefined ? {} : { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(init.body) });
  const res = await route({ locals: { app: t.app, actor }, params, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

describe('starting a batch', () => {
  it('is for the campaign’s analysts: reviewer and collaborator 403, outsider 404, anonymous 401', async () => {
    const w = await world(5);
    const params = { id: w.campaign.id };
    const body = { options: { law: 'ccm89', rv: 3.1 } };
    expect((await call(startRoute, w.t, null, params, { body })).status).toBe(401);
    expect((await call(startRoute, w.t, w.reviewer, params, { body })).status).toBe(403);
    expect((await call(startRoute, w.t, w.collaborator, params, { body })).status).toBe(403);
    expect((await call(startRoute, w.t, w.outsider, params, { body })).status).toBe(404);
    const ok = await call(startRoute, w.t, w.analyst, params, { body });
    expect(ok.status).toBe(201);
    expect(ok.body.batch).toMatchObject({ campaignId: w.campaign.id, status: 'queued', starCount: 5, options: { law: 'ccm89', rv: 3.1, fitAv: false, floorFraction: 0.02 } });
    // Five stars make one fit job (a chunk of up to FIT_CHUNK_STARS, default 1000) carrying the batch id.
    expect(w.t.sqlite.prepare('SELECT kind, star_count, json_array_length(payload, \'$.starIds\') AS ids FROM jobs WHERE batch_id = ?').all(ok.body.batch.id)).toEqual([{ kind: 'fit-chunk', star_count: 5, ids: 5 }]);
    // Any member may read the list and the progress.
    expect((await call(listRoute, w.t, w.collaborator, params)).body.batches).toHaveLength(1);
    expect((await call(progressRoute, w.t, w.reviewer, { batchId: ok.body.batch.id })).status).toBe(200);
    expect((await call(progressRoute, w.t, w.outsider, { batchId: ok.body.batch.id })).status).toBe(404);
    expect((await call(progressRoute, w.t, w.reviewer, { batchId: 'nope' })).status).toBe(404);
  });

  it('refuses bad options with a 400 naming the field, and writes nothing', async () => {
    const w = await world(3);
    const params = { id: w.campaign.id };
    const cases: [unknown, string, RegExp][] = [
      [{ options: { rv: 'three' } }, 'options.rv', /^R_V must be a number/],
      [{ options: { rv: 9 } }, 'options.rv', /between 2 and 6/],
      [{ options: { law: 'mw' } }, 'options.law', /^The extinction law must be one of f99/],
      [{ options: { floorFraction: -0.1 } }, 'options.floorFraction', /cannot be negative/],
      [{ options: { excludeBands: ['V', 'k'] } }, 'options.excludeBands.1', /"k" is not a band key/],
      [{ options: { avMode: 'guess' } }, 'options.avMode', /fixed or fitted/],
      [{ options: { speed: 'fast' } }, 'options', /^Unknown fit option "speed"/],
      [{ starKeys: ['KST-000001', 'KST-999999'] }, 'starKeys', /^1 star id is not in this campaign: "KST-999999"\.$/],
    ];
    for (const [body, field, message] of cases) {
      const res = await call(startRoute, w.t, w.analyst, params, { body });
      expect(res.status, JSON.stringify(body)).toBe(400);
      expect(res.body.error.field).toBe(field);
      expect(res.body.error.message).toMatch(message);
    }
    expect(w.t.sqlite.prepare('SELECT count(*) FROM batches').pluck().get()).toBe(0);
    expect(w.t.sqlite.prepare('SELECT count(*) FROM jobs').pluck().get()).toBe(0);
  });

  it('refuses a campaign without stars', async () => {
    const t = createTestApp();
    apps.push(t);
    const analyst = await makeUser(t.app);
    const empty = makeCampaign(t.app, analyst);
    expect(() => startBatch(t.app, analyst, empty.id, {})).toThrow(/no stars yet/);
  });

  it('fits only the chosen stars when starKeys are given', async () => {
    const w = await world(6);
    const batch = startBatch(w.t.app, w.analyst, w.campaign.id, { starKeys: ['KST-000002', 'KST-000005'] });
    expect(batch.starCount).toBe(2);
    const worker = createWorker(w.t.app, { owner: 'test', drain: true, idleMs: 5 });
    await worker.run();
    const keys = w.t.sqlite.prepare('SELECT s.star_key FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? ORDER BY 1').pluck().all(batch.id);
    expect(keys).toEqual(['KST-000002', 'KST-000005']);
  });
});

describe('a batch from start to finish', () => {
  it('reports progress, records provenance with every result, lists failures and e-mails the analyst once', async () => {
    // Chunks of 15 stars: 15, 15 and 10.
    const w = await world(40, 15);
    const batch = startBatch(w.t.app, w.analyst, w.campaign.id, { options: { law: 'od94', rv: 3.3, floorFraction: 0.01, excludeBands: ['B'], planckOnly: true } });
    expect(w.t.sqlite.prepare('SELECT star_count FROM jobs WHERE batch_id = ? ORDER BY id').pluck().all(batch.id)).toEqual([15, 15, 10]);

    const before = batchProgress(w.t.db, batch.id);
    expect(before).toMatchObject({ status: 'queued', starCount: 40, fitted: 0, failed: 0, waiting: 40, running: 0, secondsLeft: null });

    const worker = createWorker(w.t.app, { owner: 'test', idleMs: 5 });
    expect(await worker.runOnce()).toBe(15);
    const mid = batchProgress(w.t.db, batch.id);
    expect(mid.status).toBe('running');
    expect(mid.fitted + mid.failed).toBe(15);
    expect(mid.waiting).toBe(25);
    expect(mid.ratePerSecond).toBeGreaterThan(0);
    expect(mid.secondsLeft).toBeCloseTo(25 / mid.ratePerSecond, 6);

    const progress = await call(progressRoute, w.t, w.collaborator, { batchId: batch.id });
    expect(progress.body.progress.fitted + progress.body.progress.failed).toBe(15);

    while ((await worker.runOnce()) > 0);
    const done = batchProgress(w.t.db, batch.id);
    // Stars 10, 20, 30, 40 have one band only: the fit needs at least two.
    expect(done).toMatchObject({ status: 'finished', fitted: 36, failed: 4, waiting: 0, running: 0, secondsLeft: 0 });

    const rows = w.t.sqlite.prepare('SELECT * FROM fit_results WHERE batch_id = ? ORDER BY star_id').all(batch.id) as Record<string, any>[]; // eslint-disable-line @typescript-eslint/no-explicit-any
    expect(rows).toHaveLength(40);
    for (const r of rows) {
      expect(r.band_library_version).toBe(starterBandLibrary().version);
      expect(r.software_version).toBe(appVersion());
      const detail = JSON.parse(r.detail);
      expect(detail.options).toMatchObject({ law: 'od94', rv: 3.3, floorFraction: 0.01, excludeBands: ['B'] });
      expect(detail.extinction).toMatchObject({ law: 'od94', rv: 3.3 });
    }
    const ok = rows.filter((r) => r.ok === 1);
    const star = new Map(w.mock.map((m) => [m.id, m]));
    for (const r of ok) {
      // Noise-free blackbody magnitudes made by direct integration through the passbands: the Planck
      // fit (planckOnly) recovers T and θ to 1e-4 (docs/science.md check values, self-consistency).
      expect(Math.abs(r.teff_k / star.get(r.star_id)!.teffK - 1)).toBeLessThan(1e-4);
      expect(Math.abs(r.theta_mas / star.get(r.star_id)!.thetaMas - 1)).toBeLessThan(1e-4);
      const detail = JSON.parse(r.detail);
      expect(r.bands_used.split(' ')).not.toContain('B');
      expect(detail.excluded).toContainEqual({ band: 'B', reason: 'excluded_by_option' });
      expect(Object.keys(detail.residualsSigma)).toContain('Ks');
      expect(detail.covariance.params).toEqual(['teffK', 's']);
    }
    // Every 7th star has a BT magnitude; BT has no zero-point yet, so that value is skipped with the reason.
    const seventh = JSON.parse(rows[6].detail);
    expect(seventh.skipped).toEqual([{ band: 'BT', source: 'mock-catalogue', reason: expect.stringMatching(/BT has no zero-point/) }]);

    const failures = await call(failuresRoute, w.t, w.reviewer, { batchId: batch.id }, { url: 'http://127.0.0.1/api/x?limit=2' });
    expect(failures.body.total).toBe(4);
    expect(failures.body.failures).toEqual([
      { starId: expect.any(Number), starKey: 'KST-000010', reason: expect.stringMatching(/KST-000010: 0 usable detection/), kind: 'fit' },
      { starId: expect.any(Number), starKey: 'KST-000020', reason: expect.stringMatching(/at least 2 are needed/), kind: 'fit' },
    ]);
    expect((await call(failuresRoute, w.t, w.reviewer, { batchId: batch.id }, { url: 'http://127.0.0.1/api/x?limit=-1' })).status).toBe(400);

    const mails = w.t.sqlite.prepare("SELECT to_address, subject, text_body FROM outbox_messages WHERE kind = 'notice'").all() as Record<string, string>[];
    expect(mails).toHaveLength(1);
    expect(mails[0].to_address).toBe(w.analyst.email);
    expect(mails[0].subject).toBe('Batch finished in "Kestrel Deep Field": 36 fitted, 4 not fitted');
    expect(mails[0].text_body).toContain(`/campaigns/${w.campaign.id}/batches/${batch.id}`);
    // Asking again (another worker finishing a chunk of the same batch) sends nothing more.
    expect(await finishBatchIfDone(w.t.app, batch.id)).toBe(false);
    expect(w.t.sqlite.prepare("SELECT count(*) FROM outbox_messages WHERE kind = 'notice'").pluck().get()).toBe(1);
  });

  it('fits A_V when asked and records that it did', async () => {
    const w = await world(4);
    const batch = startBatch(w.t.app, w.analyst, w.campaign.id, { options: { avMode: 'fitted', avMaxMag: 3, planckOnly: true } });
    await createWorker(w.t.app, { owner: 'test', drain: true, idleMs: 5 }).run();
    const rows = w.t.sqlite.prepare('SELECT ok, av_mag, detail FROM fit_results WHERE batch_id = ? AND ok = 1').all(batch.id) as { av_mag: number; detail: string }[];
    expect(rows.length).toBe(4);
    for (const r of rows) {
      const detail = JSON.parse(r.detail);
      expect(detail.avFitted).toBe(true);
      expect(detail.options).toMatchObject({ fitAv: true, avBoundsMag: [0, 3] });
      // Unreddened blackbody mock stars, Planck fit: the fitted A_V sits at (or next to) the lower bound 0.
      expect(r.av_mag).toBeGreaterThanOrEqual(0);
      expect(r.av_mag).toBeLessThan(0.01);
    }
  });
});

describe('cancelling a batch', () => {
  it('drops its waiting jobs, lets held ones finish, sends no e-mail, and is for analysts only', async () => {
    // Chunks of 5 stars: 8 jobs.
    const w = await world(40, 5);
    const batch = startBatch(w.t.app, w.analyst, w.campaign.id, {});
    const worker = createWorker(w.t.app, { owner: 'test', jobsAtOnce: 2, idleMs: 5 });
    expect(await worker.runOnce()).toBe(10);
    // Another worker holds a chunk of 5 stars at the moment of the cancel (its lease runs out at once, as if it died).
    const held = batchQueue(w.t.db).claim('ghost', 1, 1);
    expect(held.map((j) => j.starCount)).toEqual([5]);

    const params = { batchId: batch.id };
    expect((await call(cancelRoute, w.t, null, params, { body: {} })).status).toBe(401);
    expect((await call(cancelRoute, w.t, w.reviewer, params, { body: {} })).status).toBe(403);
    expect((await call(cancelRoute, w.t, w.collaborator, params, { body: {} })).status).toBe(403);
    expect((await call(cancelRoute, w.t, w.outsider, params, { body: {} })).status).toBe(404);
    expect(w.t.sqlite.prepare("SELECT sum(stars_left) FROM jobs WHERE batch_id = ? AND status = 'pending'").pluck().get(batch.id)).toBe(25);

    const res = await call(cancelRoute, w.t, w.analyst, params, { body: {} });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ removed: 25, inFlight: 5, batch: { status: 'cancelled', waiting: 0, secondsLeft: 0 } });
    expect(res.body.batch.finishedAt).not.toBeNull();
    expect(w.t.sqlite.prepare("SELECT count(*) FROM jobs WHERE batch_id = ? AND status = 'pending'").pluck().get(batch.id)).toBe(0);
    const audit = w.t.sqlite.prepare("SELECT actor_id, details FROM audit_events WHERE action = 'batch.cancelled'").get() as { actor_id: string; details: string };
    expect(audit.actor_id).toBe(w.analyst.id);
    expect(JSON.parse(audit.details)).toMatchObject({ batchId: batch.id, removedJobs: 5, removedStars: 25, inFlightStars: 5 });

    // The held jobs come back when their lease runs out and are fitted once each; nothing else is.
    await new Promise((r) => setTimeout(r, 5));
    await createWorker(w.t.app, { owner: 'late', drain: true, idleMs: 5 }).run();
    const perStar = w.t.sqlite.prepare('SELECT star_id, count(*) AS n FROM fit_results WHERE batch_id = ? GROUP BY star_id').all(batch.id) as { n: number }[];
    expect(perStar).toHaveLength(15);
    expect(perStar.every((r) => r.n === 1)).toBe(true);
    const after = batchProgress(w.t.db, batch.id);
    expect(after).toMatchObject({ status: 'cancelled', waiting: 0, running: 0 });
    expect(after.fitted + after.failed).toBe(15);
    expect(await finishBatchIfDone(w.t.app, batch.id)).toBe(false);
    expect(w.t.sqlite.prepare("SELECT count(*) FROM outbox_messages WHERE kind = 'notice' AND subject LIKE 'Batch finished%'").pluck().get()).toBe(0);

    const again = await call(cancelRoute, w.t, w.analyst, params, { body: {} });
    expect(again.status).toBe(409);
    expect(again.body.error.message).toMatch(/cancelled already/);
  });

  it('refuses to cancel a finished batch', async () => {
    const w = await world(3);
    const batch = startBatch(w.t.app, w.analyst, w.campaign.id, {});
    await createWorker(w.t.app, { owner: 'test', drain: true, idleMs: 5 }).run();
    const res = await call(cancelRoute, w.t, w.analyst, { batchId: batch.id }, { body: {} });
    expect(res.status).toBe(409);
    expect(res.body.error.message).toMatch(/finished already/);
    expect(batchProgress(w.t.db, batch.id).status).toBe('finished');
  });
});
