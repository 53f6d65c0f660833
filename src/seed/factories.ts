// Factories shared by tests and the demo seed (src/seed/seed.ts): the same code makes both.
import { eq } from 'drizzle-orm';
import { user } from '../db/schema';
import { createAccount } from '../server/accounts';
import { addMember, createCampaign } from '../server/campaigns';
import type { Actor, AppServices } from '../server/context';
import type { AccountKind, CampaignRole } from '../contracts/vocabulary';

let counter = 0;
const next = () => `${Date.now().toString(36)}${(counter++).toString(36)}`;

export const DEFAULT_TEST_PASSWORD = 'correct-horse-battery';

export interface MadeUser extends Actor {
  password: string;
}

/** Create (or, when the e-mail exists, look up) an account. */
export async function makeUser(
  app: AppServices,
  input: { kind?: AccountKind; email?: string; name?: string; password?: string } = {},
): Promise<MadeUser> {
  const kind = input.kind ?? 'member';
  const email = (input.email ?? `${kind}-${next()}@factory.test`).toLowerCase();
  const password = input.password ?? DEFAULT_TEST_PASSWORD;
  const existing = app.db.select().from(user).where(eq(user.email, email)).get();
  if (!existing) await createAccount(app, { name: input.name ?? `Test ${kind}`, email, password, kind });
  const row = app.db.select().from(user).where(eq(user.email, email)).get()!;
  return { id: row.id, name: row.name, email: row.email, kind: row.kind, password };
}

export function makeCampaign(app: AppServices, creator: Actor, input: { name?: string; description?: string } = {}) {
  return createCampaign(app.db, creator, { name: input.name ?? `Campaign ${next()}`, description: input.description ?? '' });
}

export async function addToCampaign(app: AppServices, by: Actor, campaignId: string, member: { email: string }, roles: CampaignRole[]) {
  return addMember(app, by, campaignId, { email: member.email, roles });
}
