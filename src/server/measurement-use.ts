// Setting values aside and putting them back: a measurement set aside stays on record (the star
// sheet lists it, with who set it aside, when and why) but no fit made from then on uses it; the
// fit records it among its skipped values ("set aside: not used in fits"). One value from the star
// sheet, or every value an upload brought in (an image header's, say) from the intake page. Fits
// already made keep what they used; the change takes effect when the star is fitted again.
// Audited both ways, in the same transaction as the change. Callers check the role (the campaign's
// analysts, admins).
import { z } from 'zod';
import type { AppDatabase } from '../db/client';
import { recordAudit } from './audit';
import type { Actor } from './context';
import { HttpError } from './errors';
import { assertNotArchived } from './members';
import { parseInput } from './validation';

export const measurementUseInput = z
  .object({
    measurementIds: z.array(z.number({ error: 'Each value is named by its measurement id (a number).' }).int().positive(), { error: 'The values must be a list of measurement ids.' }).min(1, 'Name at least one value.').max(10_000, 'At most 10 000 values at once.').optional(),
    uploadId: z.string({ error: 'The upload must be named by its id.' }).min(1).optional(),
    use: z.boolean({ error: 'Say whether the values are used (true) or set aside (false).' }),
    reason: z.string({ error: 'The reason must be text.' }).trim().max(500, 'Keep the reason under 500 characters.').optional(),
  })
  .refine((v) => (v.measurementIds ? 1 : 0) + (v.uploadId ? 1 : 0) === 1, { message: 'Name either the values (measurementIds) or an upload (uploadId), not both.', path: ['measurementIds'] })
  .refine((v) => v.use || (v.reason !== undefined && v.reason.length > 0), { message: 'Say why the values are set aside: the reason is kept with them and in the audit trail.', path: ['reason'] });

export interface MeasurementUseOutcome {
  use: boolean;
  /** Values whose state changed. */
  changed: number;
  /** Values named that were already in that state. */
  unchanged: number;
  /** Stars whose values changed: their newest fit is now out of step until they are fitted again. */
  starKeys: string[];
  uploadName: string | null;
}

export function setMeasurementUse(db: AppDatabase, actor: Actor, campaignId: string, raw: unknown): MeasurementUseOutcome {
  const input = parseInput(measurementUseInput, raw);
  const sqlite = db.$client;
  return db.transaction(
    (tx) => {
      assertNotArchived(db, campaignId);
      let rows: { id: number; star_key: string; band_key: string; source: string; set_aside: number }[];
      let uploadName: string | null = null;
      const cols = 'm.id, s.star_key, m.band_key, m.source, m.set_aside_at IS NOT NULL AS set_aside';
      if (input.uploadId) {
        const up = sqlite.prepare('SELECT original_name FROM uploads WHERE id = ? AND campaign_id = ?').pluck().get(input.uploadId, campaignId) as string | undefined;
        if (up === undefined) throw new HttpError('not_found', 'No upload with that id in this campaign.');
        uploadName = up;
        rows = sqlite.prepare(`SELECT ${cols} FROM measurements m JOIN stars s ON s.id = m.star_id WHERE m.upload_id = ? AND s.campaign_id = ? ORDER BY m.id`).all(input.uploadId, campaignId) as typeof rows;
        if (rows.length === 0) throw new HttpError('conflict', `${up} brought in no values (or they were replaced by a later import): there is nothing to ${input.use ? 'use again' : 'set aside'}.`);
      } else {
        const ids = [...new Set(input.measurementIds!)];
        rows = sqlite
          .prepare(`SELECT ${cols} FROM measurements m JOIN stars s ON s.id = m.star_id WHERE m.id IN (SELECT value FROM json_each(?)) AND s.campaign_id = ? ORDER BY m.id`)
          .all(JSON.stringify(ids), campaignId) as typeof rows;
        if (rows.length !== ids.length) {
          const found = new Set(rows.map((r) => r.id));
          const missing = ids.filter((id) => !found.has(id));
          throw new HttpError('not_found', `${missing.length === 1 ? 'Value' : 'Values'} ${missing.slice(0, 5).join(', ')}${missing.length > 5 ? ' …' : ''} ${missing.length === 1 ? 'is' : 'are'} not in this campaign.`, 'measurementIds');
        }
      }
      const toChange = rows.filter((r) => (r.set_aside === 1) === input.use);
      const now = Date.now();
      const update = input.use
        ? sqlite.prepare('UPDATE measurements SET set_aside_at = NULL, set_aside_by_id = NULL, set_aside_reason = NULL WHERE id = ?')
        : sqlite.prepare('UPDATE measurements SET set_aside_at = ?, set_aside_by_id = ?, set_aside_reason = ? WHERE id = ?');
      for (const r of toChange) {
        if (input.use) update.run(r.id);
        else update.run(now, actor.id, input.reason!, r.id);
      }
      const starKeys = [...new Set(toChange.map((r) => r.star_key))];
      if (toChange.length > 0) {
        recordAudit(tx, {
          actorId: actor.id,
          action: input.use ? 'photometry.used_again' : 'photometry.set_aside',
          campaignId,
          details: {
            ...(input.uploadId ? { uploadId: input.uploadId, uploadName } : {}),
            ...(input.reason ? { reason: input.reason } : {}),
            count: toChange.length,
            // Named one by one up to a hundred; the rest are counted.
            values: toChange.slice(0, 100).map((r) => ({ id: r.id, star: r.star_key, band: r.band_key, source: r.source })),
          },
        });
      }
      return { use: input.use, changed: toChange.length, unchanged: rows.length - toChange.length, starKeys, uploadName };
    },
    { behavior: 'immediate' },
  );
}

/** Values of an upload used in fits and set aside, for the intake page's list of uploads. */
export function uploadValueUse(db: AppDatabase, campaignId: string): Map<string, { used: number; setAside: number }> {
  const rows = db.$client
    .prepare(
      `SELECT m.upload_id AS id, sum(m.set_aside_at IS NULL) AS used, sum(m.set_aside_at IS NOT NULL) AS set_aside
       FROM measurements m JOIN uploads u ON u.id = m.upload_id WHERE u.campaign_id = ? GROUP BY m.upload_id`,
    )
    .all(campaignId) as { id: string; used: number; set_aside: number }[];
  return new Map(rows.map((r) => [r.id, { used: r.used, setAside: r.set_aside }]));
}
