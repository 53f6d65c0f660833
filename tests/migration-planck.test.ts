// The migration that puts the Planck fit beside the photosphere model (drizzle/*_planck_fit_beside_
// photosphere_model.sql), run on a real SQLite file that holds fits stored before it: the database is
// migrated up to the migration before it, old rows are written with the columns of that time, then
// the rest of the migrations run and the rows are read back.
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openDatabase } from '../src/db/client';
import { migrateDatabase, migrationStatus } from '../src/db/migrate';
import { migrationsFolder } from '../src/db/paths';

const MIGRATION = 'planck_fit_beside_photosphere_model';

interface Journal {
  entries: { tag: string; when: number }[];
}

let dir: string | undefined;
afterEach(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
  dir = undefined;
});

/** A copy of drizzle/ whose journal stops just before this migration. */
function migrationsBefore(tmp: string): string {
  const folder = path.join(tmp, 'drizzle-before');
  cpSync(migrationsFolder(), folder, { recursive: true });
  const journalPath = path.join(folder, 'meta', '_journal.json');
  const journal = JSON.parse(readFileSync(journalPath, 'utf8')) as Journal;
  const at = journal.entries.findIndex((e) => e.tag.endsWith(MIGRATION));
  expect(at, `a migration named *_${MIGRATION} exists`).toBeGreaterThan(0);
  writeFileSync(journalPath, JSON.stringify({ ...journal, entries: journal.entries.slice(0, at) }));
  return folder;
}

describe(`migration ${MIGRATION}`, () => {
  it('keeps every stored fit as a Planck result made without the model; failures stay empty', () => {
    dir = mkdtempSync(path.join(os.tmpdir(), 'starkiln-migrate-planck-'));
    const { db, sqlite } = openDatabase(path.join(dir, 'old.db'));
    try {
      migrateDatabase(db, migrationsBefore(dir));
      const before = sqlite.prepare('SELECT name FROM pragma_table_info(?)').pluck();
      expect(before.all('fit_results')).not.toContain('tbb_k');

      // Rows as the previous software version wrote them.
      sqlite.exec(`
        INSERT INTO user (id, name, email) VALUES ('u1', 'Ada Quill', 'ada@example.test');
        INSERT INTO campaigns (id, name, name_key, created_by_id) VALUES ('c1', 'Lantern Survey', 'lantern survey', 'u1');
        INSERT INTO stars (id, campaign_id, star_key, parallax_mas) VALUES (1, 'c1', 'LNT-001', 12.5), (2, 'c1', 'LNT-002', NULL), (3, 'c1', 'LNT-003', 4.0);
        INSERT INTO batches (id, campaign_id, options, band_library_version, software_version, status, star_count)
          VALUES ('b1', 'c1', '{"law":"f99","rv":3.1}', '2026.1', '0.1.0', 'finished', 3);
      `);
      const insert = sqlite.prepare(`INSERT INTO fit_results (batch_id, campaign_id, star_id, ok, failure_reason, teff_k, teff_err_k, teff_err_formal_k,
        teff_lower_k, theta_mas, chi2_red, n_bands, bands_used, flags, detail, band_library_version, software_version)
        VALUES ('b1', 'c1', @star, @ok, @reason, @teff, @err, @formal, @lower, @theta, @chi2, @n, @bands, @flags, @detail, '2026.1', '0.1.0')`);
      const fluxes = { gaia_g: 1.25e-12, twomass_ks: 3.5e-14 };
      insert.run({ star: 1, ok: 1, reason: null, teff: 5812.5, err: 61.25, formal: 40.5, lower: null, theta: 0.412, chi2: 2.75, n: 2, bands: 'gaia_g twomass_ks', flags: 'chi2_high', detail: JSON.stringify({ modelFluxesCgs: fluxes, chi2: 5.5 }) });
      insert.run({ star: 2, ok: 1, reason: null, teff: null, err: null, formal: null, lower: 31000, theta: null, chi2: 0.5, n: 3, bands: 'gaia_g', flags: 'temp_lower_bound', detail: '{"chi2":1}' });
      insert.run({ star: 3, ok: 0, reason: 'too few bands', teff: null, err: null, formal: null, lower: null, theta: null, chi2: null, n: null, bands: null, flags: 'few_bands', detail: '{"reason":"few_bands"}' });

      migrateDatabase(db);
      const status = migrationStatus(db);
      expect(status.applied).toBe(status.expected);

      const rows = sqlite.prepare('SELECT * FROM fit_results ORDER BY star_id').all() as Record<string, unknown>[];
      // The calibrated columns keep the numbers they had (what a Planck-only fit reports there) …
      expect(rows[0]).toMatchObject({ teff_k: 5812.5, teff_err_k: 61.25, teff_err_formal_k: 40.5, chi2_red: 2.75, flags: 'chi2_high', theta_mas: 0.412 });
      // … and the same numbers are now the Planck results, with the Planck curve from the stored model fluxes.
      expect(rows[0]).toMatchObject({ tbb_k: 5812.5, tbb_err_k: 61.25, tbb_err_formal_k: 40.5, tbb_lower_k: null, tbb_chi2_red: 2.75 });
      expect(JSON.parse(rows[0].tbb_model_fluxes as string)).toEqual(fluxes);
      // Made without the model: no model name or version, no class recorded.
      for (const r of rows) expect(r).toMatchObject({ photosphere_name: null, photosphere_version: null, lum_class: null, lum_class_source: null, feh_dex: null });
      // A lower bound stays a lower bound; a star without stored model fluxes gets no Planck curve.
      expect(rows[1]).toMatchObject({ tbb_k: null, tbb_lower_k: 31000, tbb_chi2_red: 0.5, tbb_model_fluxes: null });
      // A failure has no Planck numbers either.
      expect(rows[2]).toMatchObject({ ok: 0, tbb_k: null, tbb_err_k: null, tbb_chi2_red: null, tbb_model_fluxes: null });

      // Stars gain the per-star inputs, empty for stars imported before.
      expect(sqlite.prepare('SELECT lum_class, feh_dex FROM stars ORDER BY id').all()).toEqual([
        { lum_class: null, feh_dex: null },
        { lum_class: null, feh_dex: null },
        { lum_class: null, feh_dex: null },
      ]);
      // The current-result bookkeeping is untouched.
      expect(sqlite.prepare('SELECT count(*) FROM fit_results WHERE is_current = 1').pluck().get()).toBe(3);
    } finally {
      sqlite.close();
    }
  });
});
