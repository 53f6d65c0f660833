// The photosphere model the admin sees, on a real migrated SQLite: the version in effect follows
// the band library (a zero-point change makes a new version of both, decision 0026), each
// calibrated band says how it stands, and a fit made after the change records the new version.
// The +0.6 % Ks zero-point is an invented recalibration; the magnitudes of the star are rough
// values of a K dwarf (from memory) — only the bookkeeping is checked here.
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { defaultPhotosphere } from '../src/core/photosphere';
import { starterBandLibrary } from '../src/core/bands';
import type { Actor } from '../src/server/context';
import { updateZeroPoint } from '../src/server/band-library';
import { photosphereModelView } from '../src/server/photosphere-model';
import { fitAndDrain } from '../src/seed/review-stars';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let admin: Actor;
beforeEach(async () => {
  t = createTestApp();
  admin = await makeUser(t.app, { kind: 'admin' });
});
afterEach(() => t.cleanup());

describe('the photosphere model view', () => {
  it('starts as built: every calibrated band as calibrated, the version the model has', () => {
    const v = photosphereModelView(t.db);
    const data = defaultPhotosphere();
    expect(v).toMatchObject({ name: data.name, versionInEffect: data.version, builtVersion: data.version, builtWithLibrary: 'starter-1', currentLibrary: 'starter-1' });
    expect(v.bands.map((b) => b.key)).toEqual(Object.keys(data.bandVersions));
    expect(v.bands.every((b) => b.state === 'as-calibrated')).toBe(true);
    // Every band the model covers has a calibrated dwarf span and a scatter per bin.
    for (const b of v.bands) {
      expect(b.spansK.dwarf.length, b.key).toBeGreaterThan(0);
      expect(b.scatter.length, b.key).toBeGreaterThan(0);
    }
    expect(v.sources.some((s) => s.includes('Pecaut & Mamajek 2013'))).toBe(true);
  });

  it('after a zero-point change names a new model version, shows the shift, and fits record that version', async () => {
    const ks = starterBandLibrary().bands.Ks.zeroPoint!;
    updateZeroPoint(t.db, admin, 'Ks', { ...ks, fLambdaCgs: ks.fLambdaCgs! * 1.006, source: 'Recalibrated (invented, +0.6 %)' }, 'New Ks calibration');
    const v = photosphereModelView(t.db);
    expect(v.versionInEffect).toBe(`${defaultPhotosphere().version}+v2`);
    expect(v.currentLibrary).toBe('v2');
    const k = v.bands.find((b) => b.key === 'Ks')!;
    expect(k.state).toBe('zero-point-changed');
    expect(k.zeroPointShiftPercent).toBeCloseTo(0.6, 9);
    expect(v.bands.filter((b) => b.state !== 'as-calibrated').map((b) => b.key)).toEqual(['Ks']);

    const analyst = await makeUser(t.app);
    const campaign = makeCampaign(t.app, analyst);
    const star = Number(t.sqlite.prepare('INSERT INTO stars (campaign_id, star_key, parallax_mas, parallax_err_mas) VALUES (?, ?, 40, 0.05)').run(campaign.id, 'Hollowmere').lastInsertRowid);
    const put = t.sqlite.prepare("INSERT INTO measurements (star_id, band_key, source, mag, mag_err, upper_limit) VALUES (?, ?, 'invented', ?, 0.02, 0)");
    for (const [band, mag] of Object.entries({ V: 8.2, G: 7.9, BP: 8.4, RP: 7.3, J: 6.5, H: 6.0, Ks: 5.9 })) put.run(star, band, mag);
    const batchId = await fitAndDrain(t.app, analyst, campaign.id);
    expect(t.sqlite.prepare('SELECT photosphere_name AS n, photosphere_version AS v, band_library_version AS lib FROM fit_results WHERE batch_id = ?').get(batchId)).toEqual({
      n: defaultPhotosphere().name,
      v: `${defaultPhotosphere().version}+v2`,
      lib: 'v2',
    });
  });
});
