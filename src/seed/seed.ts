// `npm run db:seed`: the demo scenario, an invented survey with invented stars and people.
// Idempotent: running it again leaves an existing demo as it is.
import { realpathSync } from 'node:fs';
import { pathToFileURL } from 'node:url';
import { eq } from 'drizzle-orm';
import { addToCampaign, makeCampaign, makeUser } from './factories';
import { seedReviewDemo } from './review-stars';
import { createApp } from '../app/app';
import { seedDemoSeasonTwo } from './demo-stars';
import { getEnv } from '../adapters/env';
import type { Actor, AppServices } from '../server/context';
import { nameKey } from '../server/campaigns';
import { campaigns, invitations } from '../db/schema';
import { closeDb, getDb } from '../db/client';

/** A reserved top-level domain (.test, RFC 2606): these addresses can never reach anyone. */
export const DEMO_DOMAIN = 'lanternfield.test';

/** Defaults, also written in .env.example and the README; override with DEMO_*_PASSWORD. */
export const DEMO_DEFAULT_PASSWORDS = {
  admin: 'kiln-admin-demo',
  analyst: 'kiln-analyst-demo',
  reviewer: 'kiln-reviewer-demo',
  collaborator: 'kiln-collaborator-demo',
} as const;

export const DEMO_CAMPAIGN = {
  name: 'Lanternfield Survey — cool dwarfs, season one',
  description:
    'The invented Lanternfield Survey follows nearby cool dwarfs with optical and near-infrared photometry. ' +
    'Season one covers eight stars: Cindermoor, Ashbright, Velloran, Tamsel Minor, Orrowind, Harthglow, ' +
    'Pellucid Nine and Quillmark; season two adds three hundred fainter stars from 3500 to 9000 K.',
};

export const DEMO_INVITEE = `visitor@${DEMO_DOMAIN}`;

export function demoUsers(passwords: Partial<Record<keyof typeof DEMO_DEFAULT_PASSWORDS, string>> = {}) {
  const pw = { ...DEMO_DEFAULT_PASSWORDS, ...Object.fromEntries(Object.entries(passwords).filter(([, v]) => !!v)) };
  return {
    admin: { email: `admin@${DEMO_DOMAIN}`, name: 'Sela Marrow', kind: 'admin' as const, password: pw.admin },
    analyst: { email: `analyst@${DEMO_DOMAIN}`, name: 'Rowan Ashby', kind: 'member' as const, password: pw.analyst },
    reviewer: { email: `reviewer@${DEMO_DOMAIN}`, name: 'Noor Halvard', kind: 'member' as const, password: pw.reviewer },
    collaborator: { email: `collaborator@${DEMO_DOMAIN}`, name: 'Emil Dravik', kind: 'guest' as const, password: pw.collaborator },
  };
}

/**
 * fits: also give the demo campaign fitted stars (mock photometry of the invented stars, fitted by
 * the worker path; src/seed/review-stars.ts): the eight season-one stars waiting for review, and the
 * few hundred season-two stars of ./demo-stars.ts, partly reviewed. `npm run db:seed` and
 * `npm run demo` ask for them; tests that need an empty campaign leave it off.
 */
export async function seedDemo(app: AppServices, options: { fits?: boolean } = {}): Promise<{ campaignId: string; created: boolean }> {
  const people = demoUsers(app.env.demoPasswords);
  const admin = await makeUser(app, people.admin);
  const analyst = await makeUser(app, people.analyst);
  const reviewer = await makeUser(app, people.reviewer);
  const collaborator = await makeUser(app, people.collaborator);
  void admin;

  const existing = app.db.select().from(campaigns).where(eq(campaigns.nameKey, nameKey(DEMO_CAMPAIGN.name))).get();
  if (existing) {
    if (options.fits) await seedFits(app, analyst, reviewer, existing.id);
    return { campaignId: existing.id, created: false };
  }

  const campaign = makeCampaign(app, analyst, DEMO_CAMPAIGN);
  await addToCampaign(app, analyst, campaign.id, reviewer, ['reviewer']);
  await addToCampaign(app, analyst, campaign.id, collaborator, ['collaborator']);
  // One open invitation, so the outbox and the member list show how inviting works.
  const invited = app.db.select().from(invitations).where(eq(invitations.email, DEMO_INVITEE)).get();
  if (!invited) await addToCampaign(app, analyst, campaign.id, { email: DEMO_INVITEE }, ['collaborator']);
  if (options.fits) await seedFits(app, analyst, reviewer, campaign.id);
  return { campaignId: campaign.id, created: true };
}

async function seedFits(app: AppServices, analyst: Actor, reviewer: Actor, campaignId: string): Promise<void> {
  await seedReviewDemo(app, analyst, reviewer, campaignId);
  await seedDemoSeasonTwo(app, analyst, reviewer, campaignId);
}

async function main() {
  const env = getEnv();
  const app = createApp(getDb(env.databasePath), env);
  const result = await seedDemo(app, { fits: true });
  const people = demoUsers(app.env.demoPasswords);
  console.log(result.created ? 'db:seed: demo scenario created' : 'db:seed: demo scenario already present');
  for (const [role, p] of Object.entries(people)) console.log(`  ${role.padEnd(12)} ${p.email}`);
  closeDb();
}

// Run as a script (also through a symbolic link, whose real path is the module's URL).
if (process.argv[1] && import.meta.url === pathToFileURL(realpathSync(process.argv[1])).href) {
  main().catch((err) => {
    console.error(err instanceof Error ? err.message : err);
    process.exit(1);
  });
}
