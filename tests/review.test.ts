// Review through its API handlers and use cases on a real migrated SQLite, with stars fitted by the
// real path (startBatch + a worker draining the queue): the star sheet's numbers against the core,
// single and bulk decisions with their audit trail, the four-eyes rule, supersession on re-fit,
// server paging of the queue, the notice to reviewers, and who may call each endpoint.
import { afterEach, describe, expect, it } from 'vitest';
import { GET as starRoute } from '../src/pages/api/campaigns/[id]/stars/[starId]';
import { GET as queueRoute } from '../src/pages/api/campaigns/[id]/review-queue';
import { GET as auditRoute } from '../src/pages/api/campaigns/[id]/review/audit';
import { POST as bulkRoute } from '../src/pages/api/campaigns/[id]/review/bulk';
import { GET as getSettingsRoute, POST as setSettingsRoute } from '../src/pages/api/campaigns/[id]/review/settings';
import { POST as decisionRoute } from '../src/pages/api/fits/[fitId]/decision';
import { GET as historyRoute } from '../src/pages/api/fits/[fitId]/history';
import { requireBand, starterBandLibrary } from '../src/core/bands';
import { dilutionFromThetaMas } from '../src/core/fit/derived';
import { FLAG_EXPLANATIONS } from '../src/core/fit/flags';
import { planckBandMean, previewPlanckAtPivot } from '../src/core/photometry';
import { DEMO_SEASON_TWO_COUNT, seasonTwoSpecs } from '../src/seed/demo-stars';
import { DEMO_CAMPAIGN, demoUsers, seedDemo } from '../src/seed/seed';
import { finishBatchIfDone } from '../src/server/batches';
import { exportChunks } from '../src/server/exports';
import { updateZeroPoint } from '../src/server/band-library';
import { refitPreview, refitStaleStars } from '../src/server/stale';
import { createWorker } from '../workers/runner';
import type { Actor } from '../src/server/context';
import { FOUR_EYES_MESSAGE, fitHistory, notifyReviewersOfBatch } from '../src/server/review';
import { starSheet } from '../src/server/star-sheet';
import { sedFigure } from '../src/components/ui/review/sed-figure';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { LANTERNFIELD_STARS, REVIEW_BANDS, fitAndDrain, fitIdOf, insertReviewStars } from '../src/seed/review-stars';
import { createTestApp, type TestApp } from './setup/db';

const apps: TestApp[] = [];
afterEach(() => {
  for (const a of apps.splice(0)) a.cleanup();
});

/**
 * lead: analyst and reviewer, starts the batch (so the four-eyes rule applies to them);
 * reviewer: reviewer only; analyst: analyst only; collaborator; outsider; admin (not a member).
 */
async function world() {
  const t = createTestApp();
  apps.push(t);
  const lead = await makeUser(t.app, { name: 'Ada Lead' });
  const reviewer = await makeUser(t.app, { name: 'Rhea Reviewer' });
  const analyst = await makeUser(t.app, { name: 'Anil Analyst' });
  const collaborator = await makeUser(t.app, { kind: 'guest', name: 'Cole Guest' });
  const outsider = await makeUser(t.app);
  const admin = await makeUser(t.app, { kind: 'admin', name: 'Ama Admin' });
  const campaign = makeCampaign(t.app, lead, { name: 'Lanternfield review test' });
  // The creator is the campaign's analyst; give them the reviewer role too (no use case changes roles yet).
  t.sqlite.prepare("INSERT INTO campaign_member_roles (campaign_id, user_id, role) VALUES (?, ?, 'reviewer')").run(campaign.id, lead.id);
  await addToCampaign(t.app, lead, campaign.id, reviewer, ['reviewer']);
  await addToCampaign(t.app, lead, campaign.id, analyst, ['analyst']);
  await addToCampaign(t.app, lead, campaign.id, collaborator, ['collaborator']);
  // One upload row, so the sheet can name the file each measurement came from.
  t.sqlite
    .prepare("INSERT INTO uploads (id, campaign_id, original_name, stored_path, size_bytes, sha256, status) VALUES ('up1', ?, 'lanternfield-s1.csv', 'unused', 1, 'x', 'imported')")
    .run(campaign.id);
  const stars = insertReviewStars(t.db, campaign.id, LANTERNFIELD_STARS, { uploadId: 'up1' });
  // The invented stars' photometry is a blackbody integrated through each band (src/seed/review-stars.ts):
  // Planck only, so the sheet's model band means and the re-fit rule are checked against the Planck fit.
  const batchId = await fitAndDrain(t.app, lead, campaign.id, { planckOnly: true });
  return { t, lead, reviewer, analyst, collaborator, outsider, admin, campaign, stars, batchId };
}

type Route = (ctx: never) => Promise<Response> | Response;

/** Call an Astro API route the way Astro does: locals from the middleware, params, request. */
async function call(route: Route, t: TestApp, actor: Actor | null, params: Record<string, string>, init: { url?: string; body?: unknown } = {}) {
  const url = new URL(init.url ?? 'http://127.0.0.1/api/test');
  const request = new Request(url, init.body === undefined ? {} : { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(init.body) });
  const res = await route({ locals: { app: t.app, actor }, params, request, url } as never);
  return { status: res.status, body: (await res.json()) as Record<string, any> }; // eslint-disable-line @typescript-eslint/no-explicit-any
}

const one = <T>(t: TestApp, sql: string, ...args: unknown[]) => t.sqlite.prepare(sql).pluck().get(...args) as T;

describe('the star sheet', () => {
  it('draws each measured band at its pivot, with model band means the core integrates again and a curve through them', async () => {
    const w = await world();
    const library = starterBandLibrary();
    const r = await call(starRoute, w.t, w.collaborator, { id: w.campaign.id, starId: 'Cindermoor' });
    expect(r.status).toBe(200);
    const sheet = r.body;
    expect(sheet.star.starKey).toBe('Cindermoor');
    // Every band the star was measured in, in wavelength order, at the band library's pivot.
    expect(sheet.bands.map((b: { key: string }) => b.key).sort()).toEqual([...REVIEW_BANDS].sort());
    for (const b of sheet.bands) expect(b.pivotUm).toBeCloseTo(requireBand(library, b.key).pivotAngstrom / 1e4, 12);
    const pivots = sheet.bands.map((b: { pivotUm: number }) => b.pivotUm);
    expect(pivots).toEqual([...pivots].sort((a, b) => a - b));
    // W3 and W4 (beyond ~5 µm) are excess checks, not fit inputs (docs/science.md §8), and say so.
    for (const key of ['W3', 'W4']) {
      const b = sheet.bands.find((x: { key: string }) => x.key === key);
      expect(b.role).toBe('excluded');
      expect(b.note).toMatch(/beyond ~5 µm/);
    }
    // The fit recovers the invented star's temperature within its noise (0.02 mag, 10 bands).
    expect(Math.abs(sheet.fit.teffK / 5610 - 1)).toBeLessThan(0.03);
    // Model band means are s·⟨πB_λ⟩ through each real passband: integrate again directly with the
    // core (not the fit's interpolation tables) and compare (tables agree to 1e-5, src/core/fit/README.md).
    const s = dilutionFromThetaMas(sheet.fit.thetaMas);
    for (const b of sheet.bands) {
      const direct = s * planckBandMean(requireBand(library, b.key), sheet.fit.teffK, 0, { law: 'f99', rv: 3.1 });
      expect(Math.abs(b.modelFluxCgs / direct - 1)).toBeLessThan(1e-4);
      expect(b.modelLambdaFlux).toBeCloseTo(b.modelFluxCgs * b.pivotAngstrom, 20);
      // Residual in σ: (data − model)/σ with the 2 % floor (docs/science.md §5, §6).
      expect(b.residualSigma).toBeCloseTo((b.observedFluxCgs - b.modelFluxCgs) / b.sigmaCgs, 6);
    }
    // The curve is s·πB_λ(T) (A_V = 0 here): at the V pivot it equals the core's one-wavelength preview.
    const v = requireBand(library, 'V');
    const curve = sheet.curve;
    expect(curve.wavelengthUm[0]).toBeCloseTo(0.1, 10);
    expect(curve.wavelengthUm[curve.wavelengthUm.length - 1]).toBeCloseTo(30, 8);
    const i = curve.wavelengthUm.findIndex((um: number) => um >= v.pivotAngstrom / 1e4);
    const um = curve.wavelengthUm[i];
    const expected = s * previewPlanckAtPivot({ ...v, wavelengthAngstrom: [um * 1e4 - 1, um * 1e4, um * 1e4 + 1], response: [0, 1, 0] }, sheet.fit.teffK, 0, { law: 'f99', rv: 3.1 }) * um * 1e4;
    expect(Math.abs(curve.lambdaFlux[i] / expected - 1)).toBeLessThan(1e-6);
    // Measurements name the file they came from.
    expect(sheet.measurements).toHaveLength(REVIEW_BANDS.length);
    expect(sheet.measurements.every((m: { upload: { name: string } }) => m.upload?.name === 'lanternfield-s1.csv')).toBe(true);
    // By numeric id too; a star of another campaign is not found.
    expect((await call(starRoute, w.t, w.reviewer, { id: w.campaign.id, starId: String(sheet.star.id) })).body.star.starKey).toBe('Cindermoor');
    expect((await call(starRoute, w.t, w.reviewer, { id: w.campaign.id, starId: 'Nowhere' })).status).toBe(404);
  });

  it('marks the flagged and excluded bands with their reasons, and explains each flag', async () => {
    const w = await world();
    const harth = (await call(starRoute, w.t, w.reviewer, { id: w.campaign.id, starId: 'Harthglow' })).body;
    const codes = harth.fit.flags.map((f: { code: string }) => f.code);
    expect(codes).toContain('ir_excess');
    expect(harth.fit.flags.find((f: { code: string }) => f.code === 'ir_excess').explanation).toBe(FLAG_EXPLANATIONS.ir_excess);
    expect(harth.fit.irExcessSigma).toBeGreaterThan(3);
    const orro = (await call(starRoute, w.t, w.reviewer, { id: w.campaign.id, starId: 'Orrowind' })).body;
    const j = orro.bands.find((b: { key: string }) => b.key === 'J');
    expect(j.outlier).toBe(true);
    expect(Math.abs(j.residualSigma)).toBeGreaterThan(3);
    expect(j.note).toMatch(/More than 3σ/);
    expect(orro.fit.flags.map((f: { code: string }) => f.code)).toContain('outlier');
  });
});

describe('the plot figure', () => {
  it('puts each band in one data trace at its pivot and keeps off-scale residuals at the panel edge', async () => {
    const w = await world();
    const sheet = starSheet(w.t.db, w.campaign.id, 'Harthglow');
    const { data, layout } = sedFigure(sheet);
    type T = { meta: { role: string; bands?: string[] }; x: number[]; y: number[]; hovertext?: string[] };
    const traces = data as unknown as T[];
    const roleOf = (key: string) => traces.filter((t) => ['measured', 'outlier', 'excluded', 'upper_limit'].includes(t.meta.role) && t.meta.bands!.includes(key)).map((t) => t.meta.role);
    for (const b of sheet.bands) expect(roleOf(b.key)).toEqual([b.role === 'fitted' ? (b.outlier ? 'outlier' : 'measured') : b.role]);
    expect(roleOf('W3')).toEqual(['excluded']);
    // The excess bands lie 10σ and more above the curve; the panel's range follows the fitted bands.
    const residual = traces.find((t) => t.meta.role === 'residual')!;
    const range = (layout.yaxis2 as { range: [number, number] }).range;
    const w4 = residual.meta.bands!.indexOf('W4');
    expect(sheet.bands.find((b) => b.key === 'W4')!.residualSigma!).toBeGreaterThan(range[1]);
    expect(residual.y[w4]).toBeLessThan(range[1]);
    expect(residual.y[w4]).toBeGreaterThan(0.9 * range[1]);
    expect(residual.hovertext![w4]).toMatch(/off the scale/);
    // …and is labelled there, visibly, with an arrow and its true value (not only on hover).
    const labels = (layout.annotations ?? []) as { x: number; y: number; yref: string; text: string }[];
    const w4Label = labels.find((a) => a.text.includes('W4'))!;
    expect(w4Label).toMatchObject({ yref: 'y2', y: residual.y[w4], text: `↑ W4 +${sheet.bands.find((b) => b.key === 'W4')!.residualSigma!.toFixed(1)}σ` });
    expect(w4Label.x).toBeCloseTo(Math.log10(residual.x[w4]), 12);
    // Only off-scale residuals are labelled.
    const inside = residual.meta.bands!.filter((_, i) => Math.abs(sheet.bands.find((b) => b.key === residual.meta.bands![i])!.residualSigma!) <= 0.92 * range[1]);
    for (const k of inside) expect(labels.some((a) => a.text.includes(` ${k} `))).toBe(false);
    const curve = traces.find((t) => t.meta.role === 'curve')!;
    expect(curve.x.length).toBe(curve.y.length);
  });
});

describe('decisions', () => {
  it('keeps every decision with reviewer and time, supersedes the earlier one and writes the audit trail', async () => {
    const w = await world();
    const fitId = fitIdOf(w.t.db, w.batchId, 'Orrowind');
    const before = Date.now();
    const flagged = await call(decisionRoute, w.t, w.reviewer, { fitId: String(fitId) }, { body: { decision: 'flagged', reason: 'bad_photometry', comment: 'J is far too bright.' } });
    expect(flagged.status).toBe(201);
    expect(flagged.body.decision).toMatchObject({ decision: 'flagged', reason: 'bad_photometry', reasonLabel: 'One or more measurements look wrong', reviewer: { id: w.reviewer.id, name: 'Rhea Reviewer' }, supersededAt: null });
    expect(one<string>(w.t, 'SELECT review_status FROM fit_results WHERE id = ?', fitId)).toBe('flagged');

    const accepted = await call(decisionRoute, w.t, w.admin, { fitId: String(fitId) }, { body: { decision: 'accepted', comment: 'J checked against the images: fine after all.' } });
    expect(accepted.status).toBe(201);
    expect(one<string>(w.t, 'SELECT review_status FROM fit_results WHERE id = ?', fitId)).toBe('accepted');

    const history = (await call(historyRoute, w.t, w.collaborator, { fitId: String(fitId) })).body.history;
    expect(history).toHaveLength(2);
    expect(history[0]).toMatchObject({ decision: 'accepted', reviewer: { id: w.admin.id }, supersededAt: null });
    expect(history[1]).toMatchObject({ decision: 'flagged', reviewer: { id: w.reviewer.id }, supersededReason: 'changed' });
    expect(Date.parse(history[1].supersededAt)).toBeGreaterThanOrEqual(Date.parse(history[1].createdAt));

    const audit = w.t.sqlite
      .prepare("SELECT actor_id AS actorId, action, details, created_at AS createdAt FROM audit_events WHERE action IN ('review.flagged', 'review.accepted') ORDER BY id")
      .all() as { actorId: string; action: string; details: string; createdAt: number }[];
    expect(audit.map((a) => [a.action, a.actorId])).toEqual([
      ['review.flagged', w.reviewer.id],
      ['review.accepted', w.admin.id],
    ]);
    for (const a of audit) expect(a.createdAt).toBeGreaterThanOrEqual(before - 1000);
    expect(JSON.parse(audit[0].details)).toMatchObject({ fitResultId: fitId, starKey: 'Orrowind', reason: 'bad_photometry', comment: 'J is far too bright.' });
    expect(JSON.parse(audit[1].details).supersedes).toEqual([flagged.body.decision.id]);
    // The same trail through the API, newest first.
    const trail = (await call(auditRoute, w.t, w.reviewer, { id: w.campaign.id })).body.events as { action: string; actorId: string; createdAt: string }[];
    expect(trail.slice(0, 2).map((e) => [e.action, e.actorId])).toEqual([
      ['review.accepted', w.admin.id],
      ['review.flagged', w.reviewer.id],
    ]);
    expect(Date.parse(trail[0].createdAt)).toBeGreaterThanOrEqual(Date.parse(trail[1].createdAt));
  });

  it('refuses incomplete or unknown input with a 400 naming the field, and writes nothing', async () => {
    const w = await world();
    const fitId = String(fitIdOf(w.t.db, w.batchId, 'Velloran'));
    const cases: [unknown, string, RegExp][] = [
      [{ decision: 'flagged' }, 'reason', /A flag needs a reason/],
      [{ decision: 'flagged', reason: 'vibes' }, 'reason', /reason must be one of poor_fit/],
      [{ decision: 'flagged', reason: 'other' }, 'comment', /say what is wrong/],
      [{ decision: 'accepted', reason: 'poor_fit' }, 'reason', /takes no reason/],
      [{ decision: 'maybe' }, 'decision', /accepted or flagged/],
      [{ decision: 'accepted', comment: 'x'.repeat(2001) }, 'comment', /at most 2000/],
    ];
    for (const [body, field, message] of cases) {
      const r = await call(decisionRoute, w.t, w.reviewer, { fitId }, { body });
      expect(r.status, JSON.stringify(body)).toBe(400);
      expect(r.body.error.field).toBe(field);
      expect(r.body.error.message).toMatch(message);
    }
    expect(one<number>(w.t, 'SELECT count(*) FROM review_decisions')).toBe(0);
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: '999999' }, { body: { decision: 'accepted' } })).status).toBe(404);
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: 'abc' }, { body: { decision: 'accepted' } })).status).toBe(404);
  });

  it('keeps the four-eyes rule: whoever started the batch cannot accept its fits until the campaign switches the rule off', async () => {
    const w = await world();
    const fitId = String(fitIdOf(w.t.db, w.batchId, 'Velloran'));
    const refused = await call(decisionRoute, w.t, w.lead, { fitId }, { body: { decision: 'accepted' } });
    expect(refused.status).toBe(403);
    expect(refused.body.error.message).toBe(FOUR_EYES_MESSAGE);
    expect(one<number>(w.t, 'SELECT count(*) FROM review_decisions')).toBe(0);
    // Flagging is not accepting: allowed.
    expect((await call(decisionRoute, w.t, w.lead, { fitId }, { body: { decision: 'flagged', reason: 'needs_refit' } })).status).toBe(201);
    // Bulk accept leaves out the fits of the caller's own batch and says how many.
    const bulk = await call(bulkRoute, w.t, w.lead, { id: w.campaign.id }, { body: { filter: { chi2RedBelow: 100 }, decision: 'accepted' } });
    expect(bulk.status).toBe(200);
    expect(bulk.body.decided).toBe(0);
    expect(bulk.body.skippedFourEyes).toBe(one<number>(w.t, "SELECT count(*) FROM fit_results WHERE ok = 1 AND review_status = 'pending' AND chi2_red < 100"));

    // The person the rule holds back (the lead started the batch whose fits wait) cannot switch it off, with or without a reason.
    const self = await call(setSettingsRoute, w.t, w.lead, { id: w.campaign.id }, { body: { fourEyes: false, reason: 'in a hurry' } });
    expect(self.status).toBe(403);
    expect(self.body.error.message).toMatch(/You started batch .*, whose fits wait for review, so the four-eyes rule applies to you/);
    // Nor a guest, nor anyone outside the campaign's analysts and reviewers.
    expect((await call(setSettingsRoute, w.t, w.collaborator, { id: w.campaign.id }, { body: { fourEyes: false, reason: 'please' } })).status).toBe(403);
    expect((await call(setSettingsRoute, w.t, w.outsider, { id: w.campaign.id }, { body: { fourEyes: false, reason: 'please' } })).status).toBe(404); // not a member: as for a missing campaign
    // A reviewer whose account an admin later made a guest one keeps the role row, but not the switch.
    const madeGuest = await makeUser(w.t.app, { name: 'Gus Guest' });
    await addToCampaign(w.t.app, w.lead, w.campaign.id, madeGuest, ['reviewer']);
    w.t.sqlite.prepare("UPDATE user SET kind = 'guest' WHERE id = ?").run(madeGuest.id);
    const guestAnalyst = { ...madeGuest, kind: 'guest' as const };
    const guest = await call(setSettingsRoute, w.t, guestAnalyst, { id: w.campaign.id }, { body: { fourEyes: false, reason: 'please' } });
    expect(guest.status).toBe(403);
    expect(guest.body.error.message).toMatch(/Guest accounts/);
    // Another analyst or reviewer may, with a reason; a wrong type or a missing reason is a 400 naming the field.
    expect((await call(setSettingsRoute, w.t, w.analyst, { id: w.campaign.id }, { body: { fourEyes: 'no' } })).status).toBe(400);
    const noReason = await call(setSettingsRoute, w.t, w.reviewer, { id: w.campaign.id }, { body: { fourEyes: false } });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.field).toBe('reason');
    expect(one<number>(w.t, 'SELECT count(*) FROM campaign_review_settings')).toBe(0);
    const off = await call(setSettingsRoute, w.t, w.reviewer, { id: w.campaign.id }, { body: { fourEyes: false, reason: 'Only one reviewer this week' } });
    expect(off.status).toBe(200);
    expect(off.body.settings).toMatchObject({ fourEyes: false, reason: 'Only one reviewer this week', updatedBy: { id: w.reviewer.id } });
    expect((await call(getSettingsRoute, w.t, w.collaborator, { id: w.campaign.id })).body.settings).toMatchObject({ fourEyes: false });
    const audit = w.t.sqlite.prepare("SELECT actor_id AS actorId, details FROM audit_events WHERE action = 'review.four_eyes_off'").get() as { actorId: string; details: string };
    expect(audit.actorId).toBe(w.reviewer.id);
    expect(JSON.parse(audit.details)).toEqual({ reason: 'Only one reviewer this week' });
    // A decision made while the rule is off carries the mark, in the history and the audit event.
    const accepted = await call(decisionRoute, w.t, w.lead, { fitId }, { body: { decision: 'accepted' } });
    expect(accepted.status).toBe(201);
    expect(accepted.body.decision).toMatchObject({ decision: 'accepted', fourEyesOff: true });
    expect((await call(historyRoute, w.t, w.reviewer, { fitId })).body.history[0]).toMatchObject({ decision: 'accepted', fourEyesOff: true });
    expect(JSON.parse(one<string>(w.t, "SELECT details FROM audit_events WHERE action = 'review.accepted' ORDER BY id DESC LIMIT 1")).fourEyesOff).toBe(true);
    // …and in the downloads: the row's review_mark column.
    const parts: Uint8Array[] = [];
    for await (const c of exportChunks(w.t.db, w.campaign, { status: ['accepted'] }, 'json')) parts.push(c);
    const exported = JSON.parse(Buffer.concat(parts).toString('utf8')) as { rows: Record<string, unknown>[] };
    expect(exported.rows.map((r) => [r.id, r.review_status, r.review_mark, r.batch_id])).toEqual([['Velloran', 'accepted', 'four_eyes_off', w.batchId]]);
    // Switching back on needs only the role (the lead may); decisions after that carry no mark.
    expect((await call(setSettingsRoute, w.t, w.lead, { id: w.campaign.id }, { body: { fourEyes: true } })).body.settings).toMatchObject({ fourEyes: true });
    const other = String(fitIdOf(w.t.db, w.batchId, 'Cindermoor'));
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: other }, { body: { decision: 'accepted' } })).body.decision).toMatchObject({ fourEyesOff: false });
  });
});

describe('bulk decisions', () => {
  it('accepts exactly the pending fits the filter selects, in one go, each decision recording the filter', async () => {
    const w = await world();
    const filter = { chi2RedBelow: 3, noFlags: true };
    const expected = (w.t.sqlite
      .prepare("SELECT id FROM fit_results WHERE campaign_id = ? AND ok = 1 AND review_status = 'pending' AND chi2_red < 3 AND flags = '' ORDER BY id")
      .pluck()
      .all(w.campaign.id) as number[]);
    // The invented stars with an excess or a bad band carry flags, so some stay out.
    expect(expected.length).toBeGreaterThan(0);
    expect(expected.length).toBeLessThan(LANTERNFIELD_STARS.length);
    const r = await call(bulkRoute, w.t, w.reviewer, { id: w.campaign.id }, { body: { filter, decision: 'accepted', comment: 'clean fits' } });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ decided: expected.length, skippedFourEyes: 0 });
    const rows = w.t.sqlite.prepare('SELECT fit_result_id AS fitId, reviewer_id AS reviewerId, bulk_filter AS bulkFilter FROM review_decisions ORDER BY fit_result_id').all() as { fitId: number; reviewerId: string; bulkFilter: string }[];
    expect(rows.map((x) => x.fitId)).toEqual(expected);
    for (const x of rows) {
      expect(x.reviewerId).toBe(w.reviewer.id);
      expect(JSON.parse(x.bulkFilter)).toEqual(filter);
    }
    expect(one<number>(w.t, "SELECT count(*) FROM audit_events WHERE action = 'review.accepted' AND actor_id = ?", w.reviewer.id)).toBe(expected.length);
    expect(JSON.parse(one<string>(w.t, "SELECT details FROM audit_events WHERE action = 'review.bulk'"))).toMatchObject({ filter, decided: expected.length });
    // The queue now holds only the rest.
    const queue = await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id });
    expect(queue.body.total).toBe(LANTERNFIELD_STARS.length - expected.length);

    // A bulk action without any filter is refused, so nothing is decided by accident.
    const none = await call(bulkRoute, w.t, w.reviewer, { id: w.campaign.id }, { body: { filter: {}, decision: 'accepted' } });
    expect(none.status).toBe(400);
    expect(none.body.error.message).toMatch(/at least one filter/);
    const unknown = await call(bulkRoute, w.t, w.reviewer, { id: w.campaign.id }, { body: { filter: { chi2: 3 }, decision: 'accepted' } });
    expect(unknown.status).toBe(400);
    expect(unknown.body.error.message).toMatch(/unknown field "chi2"/);
  });
});

describe('re-fit after review', () => {
  it('marks the old decisions and fits superseded, never deletes them, and queues the new fits', async () => {
    const w = await world();
    const oldFit = fitIdOf(w.t.db, w.batchId, 'Ashbright');
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: String(oldFit) }, { body: { decision: 'accepted' } })).status).toBe(201);
    const flaggedFit = fitIdOf(w.t.db, w.batchId, 'Harthglow');
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: String(flaggedFit) }, { body: { decision: 'flagged', reason: 'ir_excess' } })).status).toBe(201);

    const second = await fitAndDrain(w.t.app, w.analyst, w.campaign.id, { floorFraction: 0.03 }, ['Ashbright', 'Harthglow']);
    const newFit = fitIdOf(w.t.db, second, 'Ashbright');
    const decisions = w.t.sqlite.prepare('SELECT fit_result_id AS fitId, superseded_at AS supersededAt, superseded_reason AS why FROM review_decisions ORDER BY id').all() as { fitId: number; supersededAt: number | null; why: string }[];
    expect(decisions).toHaveLength(2);
    for (const d of decisions) {
      expect(d.supersededAt).not.toBeNull();
      expect(d.why).toBe('refit');
    }
    expect(one<string>(w.t, 'SELECT review_status FROM fit_results WHERE id = ?', oldFit)).toBe('superseded');
    expect(one<string>(w.t, 'SELECT review_status FROM fit_results WHERE id = ?', newFit)).toBe('pending');
    // Each superseded decision leaves an audit event naming the fit that replaced it.
    const events = (w.t.sqlite.prepare("SELECT details FROM audit_events WHERE action = 'review.superseded' ORDER BY id").pluck().all() as string[]).map((d) => JSON.parse(d));
    expect(events).toHaveLength(2);
    expect(events.find((e) => e.fitResultId === oldFit)).toMatchObject({ byFitResultId: newFit, batchId: second, reason: 'refit' });
    // The old fit can no longer be decided on; its history is still there.
    const late = await call(decisionRoute, w.t, w.reviewer, { fitId: String(oldFit) }, { body: { decision: 'accepted' } });
    expect(late.status).toBe(409);
    expect(late.body.error.message).toMatch(/replaced by a newer fit/);
    expect((await call(historyRoute, w.t, w.reviewer, { fitId: String(oldFit) })).body.history).toHaveLength(1);
    // The star sheet shows the new fit, the old one among earlier fits, and the whole history.
    const sheet = (await call(starRoute, w.t, w.reviewer, { id: w.campaign.id, starId: 'Ashbright' })).body;
    expect(sheet.fit).toMatchObject({ id: newFit, batchId: second, reviewStatus: 'pending', floorFraction: 0.03 });
    expect(sheet.earlierFits.map((f: { id: number }) => f.id)).toEqual([oldFit]);
    expect(sheet.history).toHaveLength(1);
    expect(sheet.history[0]).toMatchObject({ fitResultId: oldFit, supersededReason: 'refit' });
    // One pending fit per star in the queue: the new fits for the re-fitted stars.
    const queue = (await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: 'http://127.0.0.1/api/x?limit=200' })).body;
    expect(queue.total).toBe(LANTERNFIELD_STARS.length);
    expect(queue.items.find((i: { starKey: string }) => i.starKey === 'Ashbright').fitResultId).toBe(newFit);
  });
});

describe('re-fit after a zero-point change', () => {
  it('carries over the decisions whose Teff and θ moved by less than 0.25σ with the same flags, returns the others with the reason, all in the audit trail', async () => {
    const w = await world();
    // The analyst fits Ashbright once more (same options): the lead, who did not start that batch, accepts it.
    const own = await fitAndDrain(w.t.app, w.analyst, w.campaign.id, { planckOnly: true }, ['Ashbright']);
    expect((await call(decisionRoute, w.t, w.lead, { fitId: String(fitIdOf(w.t.db, own, 'Ashbright')) }, { body: { decision: 'accepted', comment: 'second look' } })).status).toBe(201);
    // The reviewer decides on every other fit of the first batch: accepts most, flags one with a comment.
    const keys = LANTERNFIELD_STARS.map((s) => s.starKey).filter((k) => k !== 'Ashbright');
    for (const k of keys) {
      const body = k === 'Harthglow' ? { decision: 'flagged', reason: 'ir_excess', comment: 'W3 and W4 high' } : { decision: 'accepted' };
      expect((await call(decisionRoute, w.t, w.reviewer, { fitId: String(fitIdOf(w.t.db, w.batchId, k)) }, { body })).status).toBe(201);
    }
    const reviewed = keys.length + 1;
    const before = new Map(
      (w.t.sqlite.prepare("SELECT s.star_key AS k, r.* FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.is_current = 1").all() as Record<string, any>[]).map((r) => [r.k as string, r]), // eslint-disable-line @typescript-eslint/no-explicit-any
    );

    // A 0.6 % change of the Ks zero-point (invented recalibration).
    const ks = starterBandLibrary().bands.Ks.zeroPoint!;
    updateZeroPoint(w.t.db, w.admin, 'Ks', { ...ks, fLambdaCgs: (ks as { fLambdaCgs: number }).fLambdaCgs * 1.006, source: 'Lanternfield recalibration (invented, +0.6 %)' }, 'Ks recalibration');
    // Before the re-fit, the page's numbers: how many reviewed fits the re-fit touches.
    const preview = refitPreview(w.t.db, w.campaign.id);
    expect(preview).toMatchObject({ stars: LANTERNFIELD_STARS.length, accepted: reviewed - 1, flagged: 1, pending: 0, batches: 1 });

    // The lead starts the re-fit: one batch, although the stale fits came from two batches (same options).
    const made = refitStaleStars(w.t.app, w.lead, w.campaign.id);
    expect(made.batches).toHaveLength(1);
    expect(made.batches[0].starCount).toBe(LANTERNFIELD_STARS.length);
    await createWorker(w.t.app, { owner: 'refit', drain: true, idleMs: 5 }).run();
    const refit = made.batches[0].id;

    let carried = 0;
    let returned = 0;
    for (const s of LANTERNFIELD_STARS) {
      const old = before.get(s.starKey)!;
      const nf = w.t.sqlite.prepare('SELECT r.* FROM fit_results r JOIN stars st ON st.id = r.star_id WHERE r.batch_id = ? AND st.star_key = ?').get(refit, s.starKey) as Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any
      // The rule of decision record 0016, computed here from the two stored fits.
      const within = (a: number, b: number, ea: number, eb: number) => Math.abs(b - a) < 0.25 * Math.min(ea, eb);
      const agrees = within(old.teff_k, nf.teff_k, old.teff_err_k, nf.teff_err_k) && within(old.theta_mas, nf.theta_mas, old.theta_err_mas, nf.theta_err_mas) && old.flags === nf.flags;
      const fourEyes = s.starKey === 'Ashbright'; // accepted by the lead, who started the re-fit
      const c = w.t.sqlite.prepare('SELECT * FROM review_carryovers WHERE fit_result_id = ?').get(nf.id) as Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any
      expect(c, s.starKey).toBeDefined();
      expect(c).toMatchObject({ from_fit_result_id: old.id, old_teff_k: old.teff_k, new_teff_k: nf.teff_k, old_theta_mas: old.theta_mas, new_theta_mas: nf.theta_mas });
      if (agrees && !fourEyes) {
        carried++;
        expect(c.outcome, s.starKey).toBe('carried');
        expect(nf.review_status).toBe(old.review_status);
        const h = fitHistory(w.t.db, nf.id);
        expect(h).toHaveLength(1);
        expect(h[0]).toMatchObject({ decision: old.review_status, reviewer: { id: w.reviewer.id }, supersededAt: null, carriedOver: { outcome: 'carried', fromFitResultId: old.id } });
        expect(h[0].carriedOver!.text).toMatch(/^Carried over from the earlier fit after a re-fit: Teff \d+ → \d+ K \(0\.\d\dσ\), θ/);
        if (s.starKey === 'Harthglow') expect(h[0]).toMatchObject({ reason: 'ir_excess', comment: 'W3 and W4 high' });
      } else {
        returned++;
        expect(c.outcome, s.starKey).toBe('returned');
        expect(nf.review_status).toBe('pending');
        if (fourEyes) expect(c.reasons).toContain('four_eyes');
        if (!agrees) expect(c.reasons).toMatch(/teff|theta|flags/);
      }
      // The earlier decision is superseded, never deleted.
      expect(one<string>(w.t, 'SELECT review_status FROM fit_results WHERE id = ?', old.id)).toBe('superseded');
    }
    // A 0.6 % Ks change moves these stars by far less than 0.25σ: all but the four-eyes case carry over.
    expect(carried).toBe(reviewed - 1);
    expect(returned).toBe(1);
    // The catalogue's accepted rows survive the re-fit.
    expect(one<number>(w.t, "SELECT count(*) FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'accepted'", w.campaign.id)).toBe(keys.length - 1);
    // The queue shows the returned fit with its reason.
    const queue = (await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id })).body;
    expect(queue.total).toBe(1);
    expect(queue.items[0]).toMatchObject({ starKey: 'Ashbright', returned: { outcome: 'returned', reasons: ['four_eyes'] } });
    expect(queue.items[0].returned.text).toMatch(/four-eyes rule/);
    // The audit trail: one event per carried or returned decision, beside the supersessions.
    const audit = (action: string) => one<number>(w.t, 'SELECT count(*) FROM audit_events WHERE action = ? AND campaign_id = ?', action, w.campaign.id);
    expect(audit('review.carried_over')).toBe(carried);
    expect(audit('review.returned')).toBe(returned);
    expect(audit('review.superseded')).toBe(reviewed);
  });

  it('returns every decision to the queue when the re-fit used other options', async () => {
    const w = await world();
    const fit = fitIdOf(w.t.db, w.batchId, 'Cindermoor');
    expect((await call(decisionRoute, w.t, w.reviewer, { fitId: String(fit) }, { body: { decision: 'accepted' } })).status).toBe(201);
    const second = await fitAndDrain(w.t.app, w.analyst, w.campaign.id, { law: 'ccm89' }, ['Cindermoor']);
    const c = w.t.sqlite.prepare('SELECT outcome, reasons FROM review_carryovers WHERE fit_result_id = ?').get(fitIdOf(w.t.db, second, 'Cindermoor')) as { outcome: string; reasons: string };
    expect(c.outcome).toBe('returned');
    expect(c.reasons.split(' ')).toContain('options');
  });
});

describe('the queue', () => {
  it('pages on the server by star key and filters by χ²_ν, flags and Teff', async () => {
    const w = await world();
    const seen: string[] = [];
    let cursor: string | null = null;
    let pages = 0;
    do {
      const q: string = `http://127.0.0.1/api/x?limit=3${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ''}`;
      const r = await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: q });
      expect(r.status).toBe(200);
      expect(r.body.items.length).toBeLessThanOrEqual(3);
      // Counted with the first page only.
      expect(r.body.total).toBe(pages === 0 ? LANTERNFIELD_STARS.length : null);
      seen.push(...r.body.items.map((i: { starKey: string }) => i.starKey));
      cursor = r.body.nextCursor;
      pages++;
    } while (cursor);
    expect(pages).toBe(3);
    expect(seen).toEqual(LANTERNFIELD_STARS.map((s) => s.starKey).sort());

    const hot = await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: 'http://127.0.0.1/api/x?teffMinK=5500&teffMaxK=7000' });
    const expectedHot = w.t.sqlite.prepare("SELECT count(*) FROM fit_results WHERE ok = 1 AND teff_k BETWEEN 5500 AND 7000").pluck().get() as number;
    expect(hot.body.total).toBe(expectedHot);
    for (const i of hot.body.items) expect(i.teffK).toBeGreaterThanOrEqual(5500);
    const clean = await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: 'http://127.0.0.1/api/x?noFlags=1&chi2RedBelow=3' });
    for (const i of clean.body.items) {
      expect(i.flags).toEqual([]);
      expect(i.chi2Red).toBeLessThan(3);
    }
    const bad = await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: 'http://127.0.0.1/api/x?teffMinK=warm' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.field).toBe('teffMinK');
    expect((await call(queueRoute, w.t, w.reviewer, { id: w.campaign.id }, { url: 'http://127.0.0.1/api/x?limit=0' })).status).toBe(400);
  });
});

describe('notice to reviewers', () => {
  it('e-mails each reviewer of the campaign once when a batch finishes with fits waiting', async () => {
    const w = await world();
    const mails = w.t.sqlite.prepare("SELECT to_address AS toAddress, subject, text_body AS text FROM outbox_messages WHERE kind = 'review-notice' ORDER BY to_address").all() as { toAddress: string; subject: string; text: string }[];
    expect(mails.map((m) => m.toAddress)).toEqual([w.lead.email, w.reviewer.email].sort());
    for (const m of mails) {
      expect(m.subject).toBe(`${LANTERNFIELD_STARS.length} fits to review in "Lanternfield review test"`);
      expect(m.text).toContain(`/campaigns/${w.campaign.id}/review`);
    }
    // Finishing again (another worker) or asking again sends nothing more.
    expect(await finishBatchIfDone(w.t.app, w.batchId)).toBe(false);
    expect(await notifyReviewersOfBatch(w.t.app, w.batchId)).toBe(0);
    expect(one<number>(w.t, "SELECT count(*) FROM outbox_messages WHERE kind = 'review-notice'")).toBe(2);
    // The analyst's own "batch finished" e-mail is still the only plain notice.
    expect(one<number>(w.t, "SELECT count(*) FROM outbox_messages WHERE kind = 'notice'")).toBe(1);
  });
});

describe('who may call each endpoint', () => {
  it('answers 401 to anonymous callers, 404 to non-members (as for a missing campaign) and 403 to members without the role, for every review endpoint', async () => {
    const w = await world();
    const fitId = String(fitIdOf(w.t.db, w.batchId, 'Quillmark'));
    const id = w.campaign.id;
    const decisionBody = { decision: 'flagged', reason: 'poor_fit' };
    const bulkBody = { filter: { teffMinK: 100000 }, decision: 'flagged', reason: 'poor_fit' };
    type Who = 'anonymous' | 'outsider' | 'collaborator' | 'analyst' | 'reviewer' | 'admin';
    const actors: Record<Who, Actor | null> = { anonymous: null, outsider: w.outsider, collaborator: w.collaborator, analyst: w.analyst, reviewer: w.reviewer, admin: w.admin };
    const endpoints: { name: string; route: Route; params: Record<string, string>; body?: unknown; expect: Record<Who, number> }[] = [
      { name: 'GET star', route: starRoute, params: { id, starId: 'Quillmark' }, expect: { anonymous: 401, outsider: 404, collaborator: 200, analyst: 200, reviewer: 200, admin: 200 } },
      { name: 'GET queue', route: queueRoute, params: { id }, expect: { anonymous: 401, outsider: 404, collaborator: 403, analyst: 200, reviewer: 200, admin: 200 } },
      { name: 'POST decision', route: decisionRoute, params: { fitId }, body: decisionBody, expect: { anonymous: 401, outsider: 404, collaborator: 403, analyst: 403, reviewer: 201, admin: 201 } },
      { name: 'POST bulk', route: bulkRoute, params: { id }, body: bulkBody, expect: { anonymous: 401, outsider: 404, collaborator: 403, analyst: 403, reviewer: 200, admin: 200 } },
      { name: 'GET history', route: historyRoute, params: { fitId }, expect: { anonymous: 401, outsider: 404, collaborator: 200, analyst: 200, reviewer: 200, admin: 200 } },
      { name: 'GET settings', route: getSettingsRoute, params: { id }, expect: { anonymous: 401, outsider: 404, collaborator: 200, analyst: 200, reviewer: 200, admin: 200 } },
      { name: 'GET audit', route: auditRoute, params: { id }, expect: { anonymous: 401, outsider: 404, collaborator: 403, analyst: 200, reviewer: 200, admin: 200 } },
      { name: 'POST settings', route: setSettingsRoute, params: { id }, body: { fourEyes: true }, expect: { anonymous: 401, outsider: 404, collaborator: 403, analyst: 200, reviewer: 200, admin: 200 } },
    ];
    for (const e of endpoints) {
      for (const who of Object.keys(actors) as Who[]) {
        const r = await call(e.route, w.t, actors[who], e.params, e.body === undefined ? {} : { body: e.body });
        expect(r.status, `${e.name} as ${who}: ${JSON.stringify(r.body)}`).toBe(e.expect[who]);
        if (r.status >= 400) {
          expect(r.body.error.code).toBe(r.status === 401 ? 'unauthenticated' : r.status === 404 ? 'not_found' : 'forbidden');
          expect(r.body.error.message.length).toBeGreaterThan(10);
        }
      }
    }
    // Only the reviewer's and the admin's decisions were written, by them.
    expect(w.t.sqlite.prepare('SELECT DISTINCT reviewer_id FROM review_decisions ORDER BY reviewer_id').pluck().all()).toEqual([w.reviewer.id, w.admin.id].sort());
  });
});

describe('demo seed with fits', () => {
  it('gives the demo campaign the invented stars fitted and waiting for review, once', async () => {
    const t = createTestApp();
    apps.push(t);
    const first = await seedDemo(t.app, { fits: true });
    const again = await seedDemo(t.app, { fits: true });
    expect(again).toEqual({ campaignId: first.campaignId, created: false });
    expect(one<string>(t, 'SELECT name FROM campaigns WHERE id = ?', first.campaignId)).toBe(DEMO_CAMPAIGN.name);
    const fits = t.sqlite
      .prepare('SELECT s.star_key AS starKey, r.ok, r.review_status AS status, r.teff_k AS teffK, r.lum_lsun AS lumLsun, r.flags, r.batch_id AS batchId FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.campaign_id = ? ORDER BY s.star_key')
      .all(first.campaignId) as { starKey: string; ok: number; status: string; teffK: number; lumLsun: number | null; flags: string; batchId: string }[];
    // Season one: the eight named stars, one of them accepted; season two: the generated stars,
    // every star fitted once (seeding again added nothing).
    const seasonOne = LANTERNFIELD_STARS.map((s) => s.starKey);
    const seasonTwo = seasonTwoSpecs().map((s) => s.starKey);
    expect(seasonTwo).toHaveLength(DEMO_SEASON_TWO_COUNT);
    expect(new Set([...seasonOne, ...seasonTwo]).size).toBe(seasonOne.length + DEMO_SEASON_TWO_COUNT);
    expect(fits.map((f) => f.starKey)).toEqual([...seasonOne, ...seasonTwo].sort());
    expect(fits.every((f) => f.ok === 1)).toBe(true);
    expect(fits.filter((f) => f.status === 'accepted' && seasonOne.includes(f.starKey)).map((f) => f.starKey)).toEqual(['Cindermoor']);
    // Every screen has something: a good share accepted, some flagged, a queue still waiting,
    // Teff spread over 3500–9000 K, luminosities for the diagram, and each kind of quality flag.
    const by = (status: string) => fits.filter((f) => f.status === status).length;
    expect(by('accepted')).toBeGreaterThan(fits.length * 0.4);
    expect(by('flagged')).toBeGreaterThan(10);
    expect(by('pending')).toBeGreaterThan(20);
    const teffs = fits.map((f) => f.teffK);
    expect(Math.min(...teffs)).toBeLessThan(3800);
    expect(Math.max(...teffs)).toBeGreaterThan(8500);
    expect(fits.filter((f) => f.lumLsun !== null).length).toBeGreaterThan(fits.length * 0.9);
    for (const code of ['ir_excess', 'plx_weak']) expect(fits.filter((f) => f.flags.split(' ').includes(code)).length, code).toBeGreaterThan(5);
    // One star in ten has a band 0.4–0.9 mag off: robust rejection takes most of them out (flag
    // rejected), the smaller offsets stay in as outliers.
    expect(fits.filter((f) => f.flags.split(' ').includes('rejected')).length).toBeGreaterThan(5);
    expect(fits.filter((f) => /\b(outlier|rejected)\b/.test(f.flags)).length).toBeGreaterThan(8);
    // Every flagged season-two fit is flagged with a reason by the demo reviewer.
    expect(t.sqlite.prepare('SELECT DISTINCT u.email FROM review_decisions d JOIN user u ON u.id = d.reviewer_id').pluck().all()).toEqual([demoUsers().reviewer.email]);
    expect(one<number>(t, "SELECT count(*) FROM review_decisions WHERE decision = 'flagged' AND (reason IS NULL OR reason = '')")).toBe(0);
    expect(one<number>(t, 'SELECT count(*) FROM review_decisions WHERE superseded_at IS NULL')).toBe(by('accepted') + by('flagged'));
    // Per batch: the analyst's "batch finished" and one notice to the reviewer, besides the demo invitation.
    expect(t.sqlite.prepare('SELECT kind, to_address AS toAddress FROM outbox_messages ORDER BY id').all()).toEqual([
      { kind: 'invitation', toAddress: expect.stringMatching(/^visitor@/) },
      { kind: 'notice', toAddress: demoUsers().analyst.email },
      { kind: 'review-notice', toAddress: demoUsers().reviewer.email },
      { kind: 'notice', toAddress: demoUsers().analyst.email },
      { kind: 'review-notice', toAddress: demoUsers().reviewer.email },
    ]);
  });
});
