// Campaigns, their members and the roles each member holds, and open invitations for people who
// have no account yet.
import { sql } from 'drizzle-orm';
import {
  check,
  foreignKey,
  index,
  integer,
  primaryKey,
  sqliteTable,
  text,
  uniqueIndex,
} from 'drizzle-orm/sqlite-core';
import { CAMPAIGN_ROLES, type CampaignRole } from '../../contracts/vocabulary';
import { user } from './auth';

const now = sql`(cast(unixepoch('subsecond') * 1000 as integer))`;

export const campaigns = sqliteTable('campaigns', {
  id: text('id').primaryKey(),
  name: text('name').notNull(),
  // Lower-cased, whitespace-collapsed name: two campaigns may not differ only in case or spacing.
  nameKey: text('name_key').notNull().unique(),
  description: text('description').notNull().default(''),
  // Archived campaigns keep everything, are listed apart and take no new imports or batches.
  archivedAt: integer('archived_at', { mode: 'timestamp_ms' }),
  createdById: text('created_by_id')
    .notNull()
    .references(() => user.id, { onDelete: 'restrict' }),
  createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
});

export const campaignMembers = sqliteTable(
  'campaign_members',
  {
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    userId: text('user_id')
      .notNull()
      .references(() => user.id, { onDelete: 'cascade' }),
    addedById: text('added_by_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
  },
  (t) => [
    primaryKey({ columns: [t.campaignId, t.userId] }),
    index('campaign_members_user_idx').on(t.userId),
  ],
);

export const campaignMemberRoles = sqliteTable(
  'campaign_member_roles',
  {
    campaignId: text('campaign_id').notNull(),
    userId: text('user_id').notNull(),
    role: text('role', { enum: CAMPAIGN_ROLES }).$type<CampaignRole>().notNull(),
  },
  (t) => [
    primaryKey({ columns: [t.campaignId, t.userId, t.role] }),
    foreignKey({
      columns: [t.campaignId, t.userId],
      foreignColumns: [campaignMembers.campaignId, campaignMembers.userId],
      name: 'campaign_member_roles_member_fk',
    }).onDelete('cascade'),
    check('campaign_member_roles_known', sql`${t.role} in ('analyst', 'reviewer', 'collaborator')`),
  ],
);

export const invitations = sqliteTable(
  'invitations',
  {
    id: text('id').primaryKey(),
    email: text('email').notNull(),
    campaignId: text('campaign_id')
      .notNull()
      .references(() => campaigns.id, { onDelete: 'cascade' }),
    roles: text('roles', { mode: 'json' }).$type<CampaignRole[]>().notNull(),
    // Only a SHA-256 of the token is kept: the token itself lives only in the e-mail.
    tokenHash: text('token_hash').notNull().unique(),
    invitedById: text('invited_by_id').references(() => user.id, { onDelete: 'set null' }),
    createdAt: integer('created_at', { mode: 'timestamp_ms' }).notNull().default(now),
    expiresAt: integer('expires_at', { mode: 'timestamp_ms' }).notNull(),
    acceptedAt: integer('accepted_at', { mode: 'timestamp_ms' }),
    acceptedUserId: text('accepted_user_id').references(() => user.id, { onDelete: 'set null' }),
  },
  (t) => [
    // One open invitation per person and campaign; accepted ones stay as history.
    uniqueIndex('invitations_open_unique')
      .on(t.campaignId, t.email)
      .where(sql`accepted_at is null`),
    index('invitations_email_idx').on(t.email),
  ],
);
