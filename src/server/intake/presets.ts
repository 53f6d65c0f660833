// Named column mappings (with their quality rules) saved per campaign, so the next file from the
// same catalogue maps in one click. Saving under an existing name replaces that preset.
import { and, asc, eq } from 'drizzle-orm';
import { z } from 'zod';
import type { DbOrTx } from '../../db/client';
import { mappingPresets } from '../../db/schema';
import type { Actor } from '../context';
import { HttpError } from '../errors';
import { newId } from '../ids';
import { parseInput } from '../validation';
import { mappingInput, rulesInput } from './intake';
import type { MappingPresetView } from '../../contracts/intake';

export type { MappingPresetView } from '../../contracts/intake';

export const presetInput = z.object({
  name: z
    .string({ error: 'name is required.' })
    .trim()
    .min(1, 'Give the preset a name.')
    .max(80, 'A preset name can have at most 80 characters.'),
  mapping: mappingInput,
  rules: rulesInput,
});

function view(row: typeof mappingPresets.$inferSelect): MappingPresetView {
  const stored = row.mapping as { mapping: MappingPresetView['mapping']; rules?: MappingPresetView['rules'] };
  return { id: row.id, name: row.name, mapping: stored.mapping, rules: stored.rules ?? { quality: [] }, createdAt: row.createdAt.toISOString() };
}

export function listPresets(db: DbOrTx, campaignId: string): MappingPresetView[] {
  return db.select().from(mappingPresets).where(eq(mappingPresets.campaignId, campaignId)).orderBy(asc(mappingPresets.name)).all().map(view);
}

export function savePreset(db: DbOrTx, actor: Actor, campaignId: string, raw: unknown): { preset: MappingPresetView; replaced: boolean } {
  const input = parseInput(presetInput, raw);
  const stored = { mapping: input.mapping, rules: input.rules };
  const existing = db.select().from(mappingPresets).where(and(eq(mappingPresets.campaignId, campaignId), eq(mappingPresets.name, input.name))).get();
  if (existing) {
    db.update(mappingPresets).set({ mapping: stored, createdById: actor.id }).where(eq(mappingPresets.id, existing.id)).run();
    return { preset: view(db.select().from(mappingPresets).where(eq(mappingPresets.id, existing.id)).get()!), replaced: true };
  }
  const id = newId();
  db.insert(mappingPresets).values({ id, campaignId, name: input.name, mapping: stored, createdById: actor.id }).run();
  return { preset: view(db.select().from(mappingPresets).where(eq(mappingPresets.id, id)).get()!), replaced: false };
}

export function deletePreset(db: DbOrTx, campaignId: string, presetId: string): void {
  const res = db.delete(mappingPresets).where(and(eq(mappingPresets.id, presetId), eq(mappingPresets.campaignId, campaignId))).run();
  if (res.changes === 0) throw new HttpError('not_found', 'No mapping preset with that id in this campaign.');
}
