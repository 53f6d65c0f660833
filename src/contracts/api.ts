// JSON shapes of the HTTP API, shared by API routes and the browser islands (types only).
import type { AccountKind, CampaignRole } from './vocabulary';

export interface ApiErrorBody {
  error: { code: string; message: string; field?: string };
}

export interface CampaignSummary {
  id: string;
  name: string;
  description: string;
  createdAt: string;
  /** Set when the campaign is archived (read-only, listed apart). */
  archivedAt: string | null;
  myRoles: CampaignRole[];
  memberCount: number;
}

export interface CampaignMember {
  userId: string;
  name: string;
  email: string;
  kind: AccountKind;
  roles: CampaignRole[];
  addedAt: string;
}

export interface PendingInvitation {
  id: string;
  email: string;
  roles: CampaignRole[];
  createdAt: string;
  expiresAt: string;
}

export interface CampaignOverview {
  campaign: { id: string; name: string; description: string; createdAt: string; createdBy: { name: string; email: string } | null; archivedAt: string | null };
  myRoles: CampaignRole[];
  canManageMembers: boolean;
  members: CampaignMember[];
  invitations: PendingInvitation[];
}

export type AddMemberResult =
  | { outcome: 'added'; member: CampaignMember }
  | { outcome: 'invited'; invitation: PendingInvitation };

export interface HealthReport {
  status: 'ok' | 'degraded';
  version: string;
  database: { reachable: boolean; migrated: boolean; appliedMigrations: number; expectedMigrations: number; error?: string };
}

/** A personal API token as GET/POST /api/tokens and DELETE /api/tokens/:id show it (never its secret). */
export interface ApiTokenView {
  id: string;
  name: string;
  /** The first characters of the secret, to tell tokens apart. */
  prefix: string;
  createdAt: string;
  lastUsedAt: string | null;
  expiresAt: string | null;
  revokedAt: string | null;
  status: 'active' | 'revoked' | 'expired';
}
