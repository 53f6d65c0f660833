// Per-campaign review rules. A campaign without a row keeps the defaults (four-eyes rule on).
import { sql } from 'drizzle-orm';
import { integer, sqliteTable, text } from 'drizzle-orm/sqlite-core';
import { user } from './auth';
import { campaigns } from './campaigns';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const campaignReviewSettings = sqliteTable('campaign_review_settings', {
  campaignId: text('campaign_id')
    .primaryKey()
    .references(() => campaigns.id, { onDelete: 'cascade' }),
  // Four-eyes rule (docs/science.md): whoever started a batch may not accept its fits.
  fourEyes: integer('four_eyes', { mode: 'boolean' }).notNull().default(true),
  // Why the rule was last switched (required to switch it off).
  reason: text('reason').notNull().default(''),
  updatedById: text('updated_by_id').references(() => user.id, { onDelete: 'set null' }),
  updatedAt: integer('updated_at', { mode: 'timestamp_ms' }).notNull().default(now),
});
