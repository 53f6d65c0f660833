// Withdrawing an upload: the upload and everything its import brought in go in one IMMEDIATE
// transaction — its measurements, and the stars that then have no measurement and no fit left
// (stars that other files also measured, or that were fitted, stay: their fits and review history
// are part of the record). The stored file and its staging file are removed after the commit. Audited with the file's
// name, checksum and what was removed. Callers check the role (the campaign's analysts, admins).
import { rmSync } from 'node:fs';
import type { AppDatabase } from '../../db/client';
import { recordAudit } from '../audit';
import type { Actor } from '../context';
import { HttpError } from '../errors';
import { removeStaging } from './staging';

export interface WithdrawOutcome {
  uploadId: string;
  originalName: string;
  measurementsRemoved: number;
  starsRemoved: number;
  /** Stars the upload measured that stay (measured by another file, or fitted). */
  starsKept: number;
}

export function withdrawUpload(db: AppDatabase, actor: Actor, campaignId: string, uploadId: string): WithdrawOutcome {
  const sqlite = db.$client;
  const outcome = db.transaction(
    (tx) => {
      const up = sqlite.prepare('SELECT id, original_name, stored_path, sha256 FROM uploads WHERE id = ? AND campaign_id = ?').get(uploadId, campaignId) as
        | { id: string; original_name: string; stored_path: string; sha256: string }
        | undefined;
      if (!up) throw new HttpError('not_found', 'No upload with that id in this campaign.');
      // A job reading or importing it would write for an upload that is gone: wait for it.
      const busy = sqlite.prepare("SELECT kind FROM intake_jobs WHERE upload_id = ? AND status IN ('pending', 'running') LIMIT 1").pluck().get(uploadId) as string | undefined;
      if (busy) throw new HttpError('conflict', `${up.original_name} is being ${busy === 'import' ? 'imported' : busy === 'check' ? 'checked' : 'read'}; withdraw it once that has finished.`);
      const starIds = sqlite.prepare('SELECT DISTINCT star_id FROM measurements WHERE upload_id = ?').pluck().all(uploadId) as number[];
      const measurementsRemoved = sqlite.prepare('DELETE FROM measurements WHERE upload_id = ?').run(uploadId).changes;
      const orphan = sqlite.prepare(
        `DELETE FROM stars WHERE id = ? AND campaign_id = ? AND NOT EXISTS (SELECT 1 FROM measurements m WHERE m.star_id = stars.id)
         AND NOT EXISTS (SELECT 1 FROM fit_results r WHERE r.star_id = stars.id)`,
      );
      let starsRemoved = 0;
      for (const id of starIds) starsRemoved += orphan.run(id, campaignId).changes;
      sqlite.prepare('DELETE FROM uploads WHERE id = ?').run(uploadId);
      recordAudit(tx, {
        actorId: actor.id,
        action: 'intake.upload_withdrawn',
        campaignId,
        details: { uploadId, originalName: up.original_name, sha256: up.sha256, measurementsRemoved, starsRemoved, starsKept: starIds.length - starsRemoved },
      });
      return { uploadId, originalName: up.original_name, storedPath: up.stored_path, measurementsRemoved, starsRemoved, starsKept: starIds.length - starsRemoved };
    },
    { behavior: 'immediate' },
  );
  rmSync(outcome.storedPath, { force: true });
  removeStaging(outcome.storedPath);
  return { uploadId: outcome.uploadId, originalName: outcome.originalName, measurementsRemoved: outcome.measurementsRemoved, starsRemoved: outcome.starsRemoved, starsKept: outcome.starsKept };
}
