// Stale fits: a fit is stale when a band it used has different numbers (curve, convention,
// systems or zero-point values) in the current band library version than in the version the fit
// was made with. A stale fit stays exactly as it was — readable with its own version — and is
// marked so the analyst can re-fit its star as a new batch (refitStaleStars).
import type { AppDatabase } from '../db/client';
import type { FitOptions } from '../core/fit';
import { getCurrentVersion, versionBandHashes } from './band-library';
import { getBatch, insertBatch, type BatchSummary } from './batches';
import type { Actor, AppServices } from './context';
import { HttpError } from './errors';

// Versions are immutable, so the set of changed bands between two of them never changes either.
const changedCache = new WeakMap<object, Map<string, ReadonlySet<string>>>();

/** Band keys whose numbers differ between two versions (a band missing from either counts as changed). */
export function changedBands(db: AppDatabase, fromVersion: string, toVersion: string): ReadonlySet<string> {
  if (fromVersion === toVersion) return new Set();
  let byPair = changedCache.get(db.$client);
  if (!byPair) changedCache.set(db.$client, (byPair = new Map()));
  const key = `${fromVersion}\u0000${toVersion}`;
  const cached = byPair.get(key);
  if (cached) return cached;
  const from = versionBandHashes(db, fromVersion);
  const to = versionBandHashes(db, toVersion);
  const changed = new Set<string>();
  if (!from || !to) {
    // An unknown version (never written here): every band of the other counts as changed.
    for (const k of (from ?? to ?? new Map()).keys()) changed.add(k);
  } else {
    for (const [k, h] of from) if (to.get(k) !== h) changed.add(k);
  }
  byPair.set(key, changed);
  return changed;
}

export interface StaleCheck {
  stale: boolean;
  /** The bands the fit used whose numbers changed since its version. */
  changedBands: string[];
  fitVersion: string;
  currentVersion: string;
}

/** Is a fit made with `fitVersion` through `bandsUsed` (space-separated or a list) stale now? */
export function checkStale(db: AppDatabase, fit: { bandLibraryVersion: string; bandsUsed: string | readonly string[] | null }, currentVersion = getCurrentVersion(db).label): StaleCheck {
  const used = fit.bandsUsed === null ? [] : typeof fit.bandsUsed === 'string' ? fit.bandsUsed.split(' ').filter(Boolean) : fit.bandsUsed;
  const changed = changedBands(db, fit.bandLibraryVersion, currentVersion);
  const hit = used.filter((k) => changed.has(k));
  return { stale: hit.length > 0, changedBands: hit, fitVersion: fit.bandLibraryVersion, currentVersion };
}

export function isStale(db: AppDatabase, fit: { bandLibraryVersion: string; bandsUsed: string | readonly string[] | null }, currentVersion?: string): boolean {
  return checkStale(db, fit, currentVersion).stale;
}

/**
 * A checker for many rows at once (catalogue pages): one current-version lookup, then a set
 * lookup per row. Failed fits (no bands used) are never stale.
 */
export function staleChecker(db: AppDatabase): (row: { bandLibraryVersion: string; bandsUsed: string | null }) => boolean {
  const current = getCurrentVersion(db).label;
  return (row) => row.bandLibraryVersion !== current && checkStale(db, row, current).stale;
}

export interface StaleFit {
  fitId: number;
  starId: number;
  starKey: string;
  batchId: string;
  bandLibraryVersion: string;
  changedBands: string[];
}

/** The campaign's current results that are stale, by star id (a page of them, and the total). */
export function staleFits(db: AppDatabase, campaignId: string, page: { limit?: number; offset?: number } = {}): { total: number; currentVersion: string; fits: StaleFit[] } {
  const current = getCurrentVersion(db).label;
  const all = allStaleFits(db, campaignId, current);
  const limit = Math.min(1000, Math.max(1, page.limit ?? 100));
  const offset = Math.max(0, page.offset ?? 0);
  return { total: all.length, currentVersion: current, fits: all.slice(offset, offset + limit) };
}

// Only fits made with an older version are read, and each is a set lookup per band.
function allStaleFits(db: AppDatabase, campaignId: string, current: string): StaleFit[] {
  const rows = db.$client
    .prepare(
      `SELECT r.id, r.star_id, s.star_key, r.batch_id, r.band_library_version, r.bands_used
       FROM fit_results r JOIN stars s ON s.id = r.star_id
       WHERE r.campaign_id = ? AND r.is_current = 1 AND r.ok = 1 AND r.band_library_version != ?
       ORDER BY s.star_key`,
    )
    .all(campaignId, current) as { id: number; star_id: number; star_key: string; batch_id: string; band_library_version: string; bands_used: string | null }[];
  const all: StaleFit[] = [];
  for (const r of rows) {
    const c = checkStale(db, { bandLibraryVersion: r.band_library_version, bandsUsed: r.bands_used }, current);
    if (c.stale) all.push({ fitId: r.id, starId: r.star_id, starKey: r.star_key, batchId: r.batch_id, bandLibraryVersion: r.band_library_version, changedBands: c.changedBands });
  }
  return all;
}

/** What a re-fit of the stale stars would do to review work, said on the page before it starts. */
export interface RefitPreview {
  stars: number;
  /** Stale fits with a live decision: accepted, flagged. */
  accepted: number;
  flagged: number;
  /** Stale fits nobody has decided on yet (their new fits simply wait for review). */
  pending: number;
  /** Batches the re-fit makes: one per set of earlier options (usually one). */
  batches: number;
}

export function refitPreview(db: AppDatabase, campaignId: string): RefitPreview {
  const all = allStaleFits(db, campaignId, getCurrentVersion(db).label);
  const out: RefitPreview = { stars: all.length, accepted: 0, flagged: 0, pending: 0, batches: groupByOptions(db, all).size };
  const status = db.$client.prepare('SELECT review_status FROM fit_results WHERE id = ?').pluck();
  for (const f of all) {
    const s = status.get(f.fitId) as string;
    if (s === 'accepted') out.accepted++;
    else if (s === 'flagged') out.flagged++;
    else out.pending++;
  }
  return out;
}

/** Stale fits grouped by the options of the batch that made them (stable JSON of the options). */
function groupByOptions(db: AppDatabase, all: StaleFit[]): Map<string, { options: FitOptions; batchIds: Set<string>; starIds: number[] }> {
  const groups = new Map<string, { options: FitOptions; batchIds: Set<string>; starIds: number[] }>();
  const optionsOf = new Map<string, FitOptions | null>();
  for (const f of all) {
    if (!optionsOf.has(f.batchId)) optionsOf.set(f.batchId, (getBatch(db, f.batchId)?.options as unknown as FitOptions | undefined) ?? null);
    const options = optionsOf.get(f.batchId);
    if (!options) continue;
    const key = stableJson(options);
    let g = groups.get(key);
    if (!g) groups.set(key, (g = { options, batchIds: new Set(), starIds: [] }));
    g.batchIds.add(f.batchId);
    g.starIds.push(f.starId);
  }
  return groups;
}

function stableJson(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(stableJson).join(',')}]`;
  if (v && typeof v === 'object') return `{${Object.keys(v).sort().map((k) => `${JSON.stringify(k)}:${stableJson((v as Record<string, unknown>)[k])}`).join(',')}}`;
  return JSON.stringify(v);
}

/**
 * One action for the analyst: re-fit every star whose current fit is stale, on the current band
 * library version, with the options of the batch that made the stale fit. Stars whose earlier
 * batches had the same options go into one new batch, so a re-fit is one batch on the page; only
 * stars fitted with different options need a batch of their own (each keeps its options). A new
 * batch's refitOfBatchId names the earlier batch (the first, when several had the same options).
 * What happens to review decisions is the database's work (decision record 0016): each decision
 * carries over or its new fit returns to the queue with the reason.
 */
export function refitStaleStars(app: AppServices, actor: Actor, campaignId: string): { batches: BatchSummary[]; stars: number; preview: RefitPreview } {
  const { db } = app;
  const all = allStaleFits(db, campaignId, getCurrentVersion(db).label);
  if (all.length === 0) throw new HttpError('conflict', 'No fit in this campaign is stale: every current fit uses bands unchanged in the current band library version.');
  const preview = refitPreview(db, campaignId);
  const started: BatchSummary[] = [];
  for (const g of groupByOptions(db, all).values()) {
    started.push(insertBatch(app, actor, campaignId, g.options, g.starIds.sort((a, b) => a - b), [...g.batchIds][0]));
  }
  return { batches: started, stars: all.length, preview };
}

export interface BandUsage {
  campaignId: string;
  campaignName: string;
  /** Current successful fits that used the band. */
  fits: number;
}

/**
 * Which campaigns' current fits used a band — what a change of its numbers would mark stale. One
 * pass over current results (admin pages only); keys are compared case-sensitively (`u` ≠ `U`).
 */
export function bandUsage(db: AppDatabase, key: string): BandUsage[] {
  return (
    db.$client
      .prepare(
        `SELECT r.campaign_id AS campaignId, c.name AS campaignName, count(*) AS fits
         FROM fit_results r JOIN campaigns c ON c.id = r.campaign_id
         WHERE r.is_current = 1 AND r.ok = 1 AND instr(' ' || r.bands_used || ' ', ' ' || ? || ' ') > 0
         GROUP BY r.campaign_id ORDER BY fits DESC, c.name`,
      )
      .all(key) as BandUsage[]
  );
}

/**
 * After a band's numbers change: one e-mail per analyst of each campaign whose current fits used
 * the band, saying how many fits are stale and where to re-fit them (through the outbox). Returns
 * the number of messages.
 */
export async function notifyAnalystsOfStaleFits(app: AppServices, bandKey: string, versionLabel: string, reason: string): Promise<number> {
  const { db, mailer, env } = app;
  let sent = 0;
  const esc = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
  for (const usage of bandUsage(db, bandKey)) {
    const analysts = db.$client
      .prepare(
        `SELECT u.name, u.email FROM campaign_member_roles r JOIN user u ON u.id = r.user_id
         WHERE r.campaign_id = ? AND r.role = 'analyst' AND u.deactivated_at IS NULL ORDER BY u.email`,
      )
      .all(usage.campaignId) as { name: string; email: string }[];
    const link = `${env.baseUrl}/campaigns/${usage.campaignId}/batches`;
    for (const a of analysts) {
      const what = `${usage.fits} current ${usage.fits === 1 ? 'fit' : 'fits'}`;
      await mailer.send(db, {
        kind: 'notice',
        to: a.email,
        subject: `Band ${bandKey} changed: ${what} in "${usage.campaignName}" ${usage.fits === 1 ? 'is' : 'are'} stale`,
        text: [
          `Hello ${a.name},`,
          '',
          `An admin changed band ${bandKey} in band library version ${versionLabel} (${reason}).`,
          `${what} in "${usage.campaignName}" used it and ${usage.fits === 1 ? 'is' : 'are'} now marked stale. Their results stay as they were made until you re-fit them:`,
          link,
        ].join('\n'),
        html: `<p>Hello ${esc(a.name)},</p><p>An admin changed band <strong>${esc(bandKey)}</strong> in band library version ${esc(versionLabel)} (${esc(reason)}).</p><p>${what} in <strong>${esc(usage.campaignName)}</strong> used it and ${usage.fits === 1 ? 'is' : 'are'} now marked stale. Their results stay as they were made until you <a href="${esc(link)}">re-fit them</a>.</p>`,
      });
      sent++;
    }
  }
  return sent;
}
