// The band library as immutable versions (docs/decisions/0012-versioned-band-library.md). A version
// is a full list of (band key → definition); a definition row is written once and never changed,
// and a new version shares every definition it did not change (copy-on-write). So any old version
// can be loaded exactly, and "did band K change between versions A and B" is a comparison of two
// definition ids. The newest version is the current one.
import { sql } from 'drizzle-orm';
import { index, integer, primaryKey, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core';
import type { Band } from '../../core/types';
import { user } from './auth';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const bandLibraryVersions = sqliteTable(
  'band_library_versions',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    /** What fits and batches store: 'starter-1' for the first version, then 'v2', 'v3' … */
    label: text('label').notNull(),
    parentId: integer('parent_id'),
    createdById: text('created_by_id').references(() => user.id, { onDelete: 'set null' }),
    /** Why the library changed (required for every change after the first version). */
    reason: text('reason').notNull(),
    /** What changed: { action, bandKey, … } for the history lists. */
    change: text('change', { mode: 'json' }).$type<Record<string, unknown>>().notNull().default({}),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [uniqueIndex('band_library_versions_label_unique').on(t.label), uniqueIndex('band_library_versions_parent_unique').on(t.parentId)],
);

export const bandDefinitions = sqliteTable(
  'band_definitions',
  {
    id: integer('id').primaryKey({ autoIncrement: true }),
    key: text('key').notNull(),
    /** Band.version: 1 for a new band, +1 for each change of its curve, zero-point or system. */
    bandVersion: integer('band_version').notNull(),
    /** SHA-256 of the definition's canonical JSON. */
    contentHash: text('content_hash').notNull(),
    /** The whole Band, curve included. */
    definition: text('definition', { mode: 'json' }).$type<Band>().notNull(),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [uniqueIndex('band_definitions_key_version_unique').on(t.key, t.bandVersion)],
);

export const bandLibraryEntries = sqliteTable(
  'band_library_entries',
  {
    versionId: integer('version_id')
      .notNull()
      .references(() => bandLibraryVersions.id, { onDelete: 'restrict' }),
    key: text('key').notNull(),
    definitionId: integer('definition_id')
      .notNull()
      .references(() => bandDefinitions.id, { onDelete: 'restrict' }),
    /** Order of the bands in lists (the starter order, new bands after). */
    position: integer('position').notNull(),
  },
  (t) => [primaryKey({ columns: [t.versionId, t.key] }), index('band_library_entries_definition_idx').on(t.definitionId)],
);
