// The words of the account and role model, shared by every layer (db schema, server, islands).
// Deliberately import-free so browser islands can use it without pulling in server code.

/** Account kinds. Admins manage the service; members may create campaigns; guests are invited collaborators. */
export const ACCOUNT_KINDS = ['admin', 'member', 'guest'] as const;
export type AccountKind = (typeof ACCOUNT_KINDS)[number];

/** Roles a person can hold inside one campaign (one or more). */
export const CAMPAIGN_ROLES = ['analyst', 'reviewer', 'collaborator'] as const;
export type CampaignRole = (typeof CAMPAIGN_ROLES)[number];

export const ROLE_DESCRIPTIONS: Record<CampaignRole, string> = {
  analyst: 'uploads photometry, sets fit options, starts batches',
  reviewer: 'accepts or flags each fit with a reason',
  collaborator: 'reads the campaign and downloads the accepted catalogue',
};

/** Account kinds that may create campaigns. */
export function canCreateCampaigns(kind: AccountKind): boolean {
  return kind === 'member' || kind === 'admin';
}
