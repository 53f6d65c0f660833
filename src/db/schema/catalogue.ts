// The catalogue's flag index: one row per flag of each current result, carrying the values the
// catalogue sorts by, so "results with flag X, sorted by Y" reads one index range in order instead
// of walking every result. Kept by triggers (drizzle/0006) whoever writes results; never written by code.
import { index, integer, primaryKey, real, sqliteTable, text } from 'drizzle-orm/sqlite-core';
import { campaigns } from './campaigns';
import { fitResults } from './batches';

export const fitResultFlags = sqliteTable(
  'fit_result_flags',
  {
    fitResultId: integer('fit_result_id')
      .notNull()
      .references(() => fitResults.id, { onDelete: 'cascade' }),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    code: text('code').notNull(),
    starKey: text('star_key').notNull(),
    teffK: real('teff_k'),
    lumLsun: real('lum_lsun'),
    radiusRsun: real('radius_rsun'),
    chi2Red: real('chi2_red'),
  },
  (t) => [
    primaryKey({ columns: [t.fitResultId, t.code] }),
    index('fit_result_flags_teff_idx').on(t.campaignId, t.code, t.teffK, t.fitResultId),
    index('fit_result_flags_lum_idx').on(t.campaignId, t.code, t.lumLsun, t.fitResultId),
    index('fit_result_flags_radius_idx').on(t.campaignId, t.code, t.radiusRsun, t.fitResultId),
    index('fit_result_flags_chi2_idx').on(t.campaignId, t.code, t.chi2Red, t.fitResultId),
    index('fit_result_flags_star_idx').on(t.campaignId, t.code, t.starKey, t.fitResultId),
  ],
);

/**
 * A number per campaign that grows whenever any of its results is written, changes review status or
 * stops being current (triggers in drizzle/0008, whoever writes). Cached totals and diagrams
 * (src/server/catalogue.ts) are valid while the stamp they were computed under is unchanged, across
 * processes (the worker writes results, the web server reads them).
 */
export const catalogueVersions = sqliteTable('catalogue_versions', {
  campaignId: text('campaign_id')
    .primaryKey()
    .references(() => campaigns.id, { onDelete: 'cascade' }),
  version: integer('version').notNull().default(0),
});
