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

/**
 * The catalogue's summary bins: how many current results of a campaign fall in each cell of review
 * status × χ²_ν class × Teff bin (100 K) × log L bin (0.1 dex), once for all results (flag '') and
 * once more per flag they carry. Kept by triggers (drizzle/0014) in the transaction that writes,
 * reviews or supersedes a result, whoever does it; never written by code. Totals and diagrams add
 * cells instead of reading every result (src/server/catalogue/bins.ts). Sentinels: chi2_class -1
 * and teff_bin -1 for no value, lum_bin -100000 for no (or no positive) luminosity.
 */
export const catalogueBins = sqliteTable(
  'catalogue_bins',
  {
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    flag: text('flag').notNull(),
    reviewStatus: text('review_status').notNull(),
    chi2Class: integer('chi2_class').notNull(),
    teffBin: integer('teff_bin').notNull(),
    lumBin: integer('lum_bin').notNull(),
    n: integer('n').notNull(),
  },
  (t) => [primaryKey({ columns: [t.campaignId, t.flag, t.reviewStatus, t.chi2Class, t.teffBin, t.lumBin] })],
);
