// Frozen releases (decision record 0021) on a real migrated SQLite with fits made by the worker
// path: a release keeps its rows and every download format byte for byte with its SHA-256; a re-fit
// and new decisions afterwards change the live catalogue but not the release; the database refuses
// to edit a frozen release; a later release compared with it lists the stars added, removed and
// changed; the release's file route serves the stored bytes with the checksum in its headers.
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { GET as fileRoute } from '../src/pages/api/campaigns/[id]/releases/[releaseId]/files/[format]';
import { GET as compareRoute } from '../src/pages/api/campaigns/[id]/releases/[releaseId]/compare/[otherId]';
import type { Actor } from '../src/server/context';
import { EXPORT_FORMAT_NAMES, exportBytes } from '../src/server/exports';
import { compareReleases, createRelease, getRelease, releaseFile } from '../src/server/releases';
import { addToCampaign, makeCampaign, makeUser } from '../src/seed/factories';
import { makeFittedCatalogue, refit } from './factories-catalogue';
import { createTestApp, type TestApp } from './setup/db';

let t: TestApp;
let analyst: Actor;
let collaborator: Actor;
let campaign: { id: string; name: string };
let fitted: Awaited<ReturnType<typeof makeFittedCatalogue>>;

beforeAll(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app, { name: 'Ana Lyst' });
  collaborator = await makeUser(t.app, { kind: 'guest', name: 'Col Guest' });
  campaign = makeCampaign(t.app, analyst, { name: 'Brackenfell release test' });
  await addToCampaign(t.app, analyst, campaign.id, collaborator, ['collaborator']);
  fitted = await makeFittedCatalogue(t.app, analyst, campaign.id, { count: 24 });
});
afterAll(() => t.cleanup());

async function call(route: (ctx: never) => Promise<Response> | Response, actor: Actor, params: Record<string, string>) {
  const url = new URL('http://127.0.0.1/api/test');
  return route({ locals: { app: t.app, actor }, params, request: new Request(url), url } as never);
}

const accepted = () => t.sqlite.prepare("SELECT count(*) FROM fit_results WHERE campaign_id = ? AND is_current = 1 AND review_status = 'accepted'").pluck().get(campaign.id) as number;

describe('a frozen release', () => {
  it('keeps its rows and files byte for byte through a re-fit and new decisions, and a later release lists what changed', async () => {
    const first = await createRelease(t.app, analyst, campaign, { title: 'Brackenfell DR1', note: 'first look' });
    expect(first.frozen).toBe(true);
    expect(first.rowCount).toBe(accepted());
    expect(first.address).toBe(`/campaigns/${campaign.id}/releases/${first.id}`);
    expect(first.files.map((f) => f.format).sort()).toEqual([...EXPORT_FORMAT_NAMES].sort());
    const stored = new Map(EXPORT_FORMAT_NAMES.map((f) => [f, releaseFile(t.db, campaign.id, first.id, f).content]));
    for (const f of first.files) expect(createHash('sha256').update(stored.get(f.format as never)!).digest('hex')).toBe(f.sha256);
    // The files say which release they are.
    expect(stored.get('csv')!.toString('utf8')).toContain(`# release: Brackenfell DR1 (${first.id}), `);
    // Rows: one per accepted star, each with the batch that made the fit.
    const rows = t.sqlite.prepare('SELECT star_key, batch_id FROM release_rows WHERE release_id = ? ORDER BY star_key').all(first.id) as { star_key: string; batch_id: string }[];
    expect(rows).toHaveLength(first.rowCount);
    expect(new Set(rows.map((r) => r.batch_id))).toEqual(new Set([fitted.batchId]));
    // The provenance kept with the release names the batch, its options and versions.
    const provenance = getRelease(t.db, campaign.id, first.id).provenance as { batches: { id: string; options: Record<string, unknown> }[] };
    expect(provenance.batches.map((b) => b.id)).toEqual([fitted.batchId]);
    expect(provenance.batches[0].options).toHaveProperty('clip');

    // After the release: four accepted stars are re-fitted with other options (back to review), one flagged star gets accepted.
    const acceptedKeys = t.sqlite
      .prepare("SELECT s.star_key FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.batch_id = ? AND r.review_status = 'accepted' ORDER BY s.star_key LIMIT 4")
      .pluck()
      .all(fitted.batchId) as string[];
    const refitBatch = await refit(t.app, analyst, campaign.id, acceptedKeys, { floorFraction: 0.05 });
    const flaggedKey = t.sqlite.prepare('SELECT s.star_key FROM fit_results r JOIN stars s ON s.id = r.star_id WHERE r.id = ?').pluck().get(fitted.flagged[0]) as string;
    t.sqlite.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE id = ?").run(fitted.flagged[0]);
    // The live catalogue moved…
    const live = await exportBytes(t.db, campaign, { status: ['accepted'] }, 'csv');
    expect(live.equals(stored.get('csv')!)).toBe(false);
    // …the release did not: same bytes, same checksums, same rows.
    for (const f of EXPORT_FORMAT_NAMES) expect(releaseFile(t.db, campaign.id, first.id, f).content.equals(stored.get(f)!)).toBe(true);
    expect(getRelease(t.db, campaign.id, first.id).files).toEqual(first.files);
    expect(t.sqlite.prepare('SELECT count(*) FROM release_rows WHERE release_id = ?').pluck().get(first.id)).toBe(rows.length);
    // The database itself refuses to edit a frozen release.
    expect(() => t.sqlite.prepare("UPDATE release_files SET content = x'00' WHERE release_id = ?").run(first.id)).toThrow(/immutable/);
    expect(() => t.sqlite.prepare("UPDATE release_rows SET batch_id = 'x' WHERE release_id = ?").run(first.id)).toThrow(/immutable/);
    expect(() => t.sqlite.prepare('UPDATE catalogue_releases SET row_count = 0 WHERE id = ?').run(first.id)).toThrow(/immutable/);

    // A later release, compared with the first.
    const second = await createRelease(t.app, analyst, campaign, { title: 'Brackenfell DR2' });
    const diff = compareReleases(t.db, campaign.id, first.id, second.id);
    expect(diff.removed).toEqual(acceptedKeys);
    expect(diff.added).toEqual([flaggedKey]);
    expect(diff.changed).toEqual([]);
    expect(diff.unchanged).toBe(first.rowCount - acceptedKeys.length);
    expect(second.rowCount).toBe(first.rowCount - acceptedKeys.length + 1);
    // Once the re-fitted stars are accepted again, a third release shows them changed (new batch, new error floor).
    t.sqlite.prepare("UPDATE fit_results SET review_status = 'accepted' WHERE batch_id = ?").run(refitBatch);
    const third = await createRelease(t.app, analyst, campaign, { title: 'Brackenfell DR3' });
    const diff3 = compareReleases(t.db, campaign.id, first.id, third.id);
    expect(diff3.changed.map((c) => c.starKey)).toEqual(acceptedKeys);
    for (const c of diff3.changed) {
      expect(c).toMatchObject({ batchFrom: fitted.batchId, batchTo: refitBatch });
      expect(c.columns.map((x) => x.name)).toContain('batch_id');
      expect(c.columns.map((x) => x.name)).toContain('teff_err_k');
    }
    // Over HTTP, as a collaborator: the stored bytes with their checksum, and the comparison.
    const res = await call(fileRoute, collaborator, { id: campaign.id, releaseId: first.id, format: 'fits' });
    expect(res.status).toBe(200);
    const body = Buffer.from(await res.arrayBuffer());
    expect(body.equals(stored.get('fits')!)).toBe(true);
    expect(res.headers.get('etag')).toBe(`"${first.files.find((f) => f.format === 'fits')!.sha256}"`);
    expect(res.headers.get('content-disposition')).toContain(`release-${first.id}`);
    const cmp = await call(compareRoute, collaborator, { id: campaign.id, releaseId: first.id, otherId: second.id });
    expect(((await cmp.json()) as { comparison: { removed: string[] } }).comparison.removed).toEqual(acceptedKeys);
    expect((await call(fileRoute, collaborator, { id: campaign.id, releaseId: first.id, format: 'xls' })).status).toBe(404);
  });
});
