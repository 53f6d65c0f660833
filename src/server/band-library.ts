// The band library as the app keeps it: immutable versions in SQLite (src/db/schema/band-library.ts,
// docs/decisions/0012-versioned-band-library.md). Every change — a new band, a new zero-point or
// source — writes a new version that shares every band it did not change; nothing is edited in
// place, so a fit made with version X can always be redone and explained with version X.
// The first version is the starter library (src/core/bands/starter-library.json) under its own
// label 'starter-1', written the first time anything asks for the library.
import { createHash } from 'node:crypto';
import { z } from 'zod';
import type { AppDatabase, DbOrTx } from '../db/client';
import { starterBandLibrary, type BandLibrary } from '../core/bands';
import { CurveFileError, parseCurveFile, WAVELENGTH_UNITS, type ParsedCurve } from '../core/bands/curve-file';
import { zeroMagnitudeFlambdaCgs } from '../core/magnitude';
import { validateCurve } from '../core/passband';
import type { Band, ZeroPoint } from '../core/types';
import { bandLibraryAction, recordAudit } from './audit';
import type { Actor } from './context';
import { HttpError } from './errors';
import { parseInput } from './validation';

export const STARTER_VERSION_LABEL = 'starter-1';

export interface BandLibraryVersionInfo {
  id: number;
  label: string;
  parentId: number | null;
  reason: string;
  change: Record<string, unknown>;
  createdAt: string;
  createdBy: { id: string; name: string } | null;
}

type Sqlite = AppDatabase['$client'];
const sqliteOf = (db: DbOrTx): Sqlite => (db as unknown as { $client?: Sqlite }).$client ?? (db as unknown as { session: { client: Sqlite } }).session.client;

/**
 * What decides a band's numbers: curve, convention, systems and the zero-point's values. A change of
 * wording alone (a zero-point's source, a citation) makes a new band version but leaves this hash,
 * so fits made before it are not stale.
 */
export function scienceHash(band: Pick<Band, 'wavelengthAngstrom' | 'response' | 'convention' | 'system' | 'magnitudeSystem' | 'zeroPoint'>): string {
  const zp = band.zeroPoint;
  const canonical = JSON.stringify([
    band.system,
    band.magnitudeSystem,
    band.convention,
    band.wavelengthAngstrom,
    band.response,
    zp ? [zp.fLambdaCgs ?? null, zp.fnuJy ?? null, zp.relErr, zp.catalogueOffsetMag ?? null, zp.isophotalWavelengthAngstrom ?? null] : null,
  ]);
  return createHash('sha256').update(canonical).digest('hex');
}

function freezeBand(b: Band): Band {
  Object.freeze(b.wavelengthAngstrom);
  Object.freeze(b.response);
  if (b.zeroPoint) Object.freeze(b.zeroPoint);
  if (b.derivedFrom) Object.freeze(b.derivedFrom);
  return Object.freeze(b);
}

/** Writes the starter library as the first version when the library is empty. Safe to call from several processes. */
export function ensureBandLibrary(db: AppDatabase): void {
  const sqlite = sqliteOf(db);
  if (sqlite.prepare('SELECT 1 FROM band_library_versions LIMIT 1').get()) return;
  const starter = starterBandLibrary();
  sqlite
    .transaction(() => {
      if (sqlite.prepare('SELECT 1 FROM band_library_versions LIMIT 1').get()) return;
      const versionId = Number(
        sqlite
          .prepare('INSERT INTO band_library_versions (label, parent_id, created_by_id, reason, change) VALUES (?, NULL, NULL, ?, ?)')
          .run(STARTER_VERSION_LABEL, 'The starter band library shipped with Starkiln (published curves and zero-points).', JSON.stringify({ action: 'starter' })).lastInsertRowid,
      );
      const insertDef = sqlite.prepare('INSERT INTO band_definitions (key, band_version, content_hash, definition) VALUES (?, ?, ?, ?)');
      const insertEntry = sqlite.prepare('INSERT INTO band_library_entries (version_id, key, definition_id, position) VALUES (?, ?, ?, ?)');
      Object.values(starter.bands).forEach((b, i) => {
        const defId = Number(insertDef.run(b.key, b.version, scienceHash(b), JSON.stringify(b)).lastInsertRowid);
        insertEntry.run(versionId, b.key, defId, i);
      });
    })
    .immediate();
}

interface VersionRow {
  id: number;
  label: string;
  parent_id: number | null;
  reason: string;
  change: string;
  created_at: number;
  created_by_id: string | null;
  created_by_name: string | null;
}

const VERSION_SELECT = `SELECT v.id, v.label, v.parent_id, v.reason, v.change, v.created_at, v.created_by_id, u.name AS created_by_name
  FROM band_library_versions v LEFT JOIN user u ON u.id = v.created_by_id`;

function versionInfo(r: VersionRow): BandLibraryVersionInfo {
  return {
    id: r.id,
    label: r.label,
    parentId: r.parent_id,
    reason: r.reason,
    change: JSON.parse(r.change) as Record<string, unknown>,
    createdAt: new Date(r.created_at).toISOString(),
    createdBy: r.created_by_id ? { id: r.created_by_id, name: r.created_by_name ?? r.created_by_id } : null,
  };
}

/** The newest version (the one new batches use). */
export function getCurrentVersion(db: AppDatabase): BandLibraryVersionInfo {
  ensureBandLibrary(db);
  return versionInfo(sqliteOf(db).prepare(`${VERSION_SELECT} ORDER BY v.id DESC LIMIT 1`).get() as VersionRow);
}

/** Versions, newest first, a page at a time. */
export function listVersions(db: AppDatabase, page: { limit?: number; offset?: number } = {}): { total: number; versions: BandLibraryVersionInfo[] } {
  ensureBandLibrary(db);
  const sqlite = sqliteOf(db);
  const limit = Math.min(200, Math.max(1, page.limit ?? 50));
  const offset = Math.max(0, page.offset ?? 0);
  const total = sqlite.prepare('SELECT count(*) FROM band_library_versions').pluck().get() as number;
  const rows = sqlite.prepare(`${VERSION_SELECT} ORDER BY v.id DESC LIMIT ? OFFSET ?`).all(limit, offset) as VersionRow[];
  return { total, versions: rows.map(versionInfo) };
}

// Versions never change, so a loaded library is kept for the life of the process (per database:
// two test databases may both have a 'v2' with different contents).
const libraryCache = new WeakMap<Sqlite, Map<string, BandLibrary>>();
// Band definitions are shared between versions: one frozen Band object per definition row, so the
// per-band caches in core (quadratures, pivots, zero-magnitude fluxes) are shared too.
const definitionCache = new WeakMap<Sqlite, Map<number, Band>>();

/** The band library of one version, in the same shape as starterBandLibrary(); null when no such version. */
export function findLibrary(db: AppDatabase, label: string): BandLibrary | null {
  ensureBandLibrary(db);
  const sqlite = sqliteOf(db);
  let byLabel = libraryCache.get(sqlite);
  if (!byLabel) libraryCache.set(sqlite, (byLabel = new Map()));
  const cached = byLabel.get(label);
  if (cached) return cached;
  const version = sqlite.prepare('SELECT id FROM band_library_versions WHERE label = ?').get(label) as { id: number } | undefined;
  if (!version) return null;
  let defs = definitionCache.get(sqlite);
  if (!defs) definitionCache.set(sqlite, (defs = new Map()));
  const rows = sqlite
    .prepare(
      `SELECT e.definition_id AS id, d.definition AS definition FROM band_library_entries e
       JOIN band_definitions d ON d.id = e.definition_id WHERE e.version_id = ? ORDER BY e.position`,
    )
    .all(version.id) as { id: number; definition: string }[];
  const bands: Record<string, Band> = {};
  for (const r of rows) {
    let band = defs.get(r.id);
    if (!band) defs.set(r.id, (band = freezeBand(JSON.parse(r.definition) as Band)));
    bands[band.key] = band;
  }
  const library: BandLibrary = Object.freeze({ version: label, bands: Object.freeze(bands), sourceLicences: starterBandLibrary().sourceLicences });
  byLabel.set(label, library);
  return library;
}

/** The band library of one version; throws a clear error when the version does not exist. */
export function getLibrary(db: AppDatabase, label: string): BandLibrary {
  const lib = findLibrary(db, label);
  if (!lib) throw new HttpError('not_found', `There is no band library version "${label}".`);
  return lib;
}

export function getCurrentLibrary(db: AppDatabase): BandLibrary {
  return getLibrary(db, getCurrentVersion(db).label);
}

/** Science hash of each band in a version (for stale checks), cached like the libraries. */
const hashCache = new WeakMap<Sqlite, Map<string, Map<string, string>>>();
export function versionBandHashes(db: AppDatabase, label: string): Map<string, string> | null {
  ensureBandLibrary(db);
  const sqlite = sqliteOf(db);
  let byLabel = hashCache.get(sqlite);
  if (!byLabel) hashCache.set(sqlite, (byLabel = new Map()));
  const cached = byLabel.get(label);
  if (cached) return cached;
  const rows = sqlite
    .prepare(
      `SELECT e.key AS key, d.content_hash AS hash FROM band_library_versions v
       JOIN band_library_entries e ON e.version_id = v.id JOIN band_definitions d ON d.id = e.definition_id WHERE v.label = ?`,
    )
    .all(label) as { key: string; hash: string }[];
  if (rows.length === 0) return null;
  const map = new Map(rows.map((r) => [r.key, r.hash]));
  byLabel.set(label, map);
  return map;
}

// ---------------------------------------------------------------------------------------------
// Changes

export const bandKeyInput = z
  .string({ error: 'key is required.' })
  .trim()
  .regex(/^[A-Za-z][A-Za-z0-9]{0,11}$/, 'key: a letter followed by up to 11 letters or digits (it becomes a column name such as "Kp" and "Kp_err"; keys are case-sensitive).');

const reasonInput = z
  .string({ error: 'reason is required: say why the band library changes.' })
  .trim()
  .min(5, 'reason is required: say why the band library changes (at least a few words).')
  .max(2000, 'reason can have at most 2000 characters.');

const positive = (what: string) => z.number({ error: `${what} must be a number.` }).positive(`${what} must be above 0.`);

/** A zero-point as the admin gives it: F_λ,0 (Vega-type quoted in F_λ) or F_ν,0 (Jy), with its source. */
export const zeroPointInput = z
  .object({
    fLambdaCgs: positive('fLambdaCgs (F_λ of magnitude 0, erg s⁻¹ cm⁻² Å⁻¹)').optional(),
    fnuJy: positive('fnuJy (F_ν of magnitude 0, Jy)').optional(),
    relErr: z.number({ error: 'relErr must be a number (0.015 means 1.5 %).' }).min(0, 'relErr cannot be negative.').max(1, 'relErr is a fraction: at most 1.').default(0),
    catalogueOffsetMag: z.number({ error: 'catalogueOffsetMag must be a number of magnitudes.' }).min(-5, 'catalogueOffsetMag must be within ±5 mag.').max(5, 'catalogueOffsetMag must be within ±5 mag.').optional(),
    isophotalWavelengthAngstrom: positive('isophotalWavelengthAngstrom').optional(),
    source: z.string({ error: 'source is required: where the zero-point comes from.' }).trim().min(5, 'source is required: cite where the zero-point comes from.').max(1000, 'source can have at most 1000 characters.'),
  })
  .refine((zp) => (zp.fLambdaCgs === undefined) !== (zp.fnuJy === undefined), { error: 'Give the zero-point either as fLambdaCgs (F_λ,0) or as fnuJy (F_ν,0), exactly one of them.', path: ['fLambdaCgs'] });
export type ZeroPointInput = z.input<typeof zeroPointInput>;
// The schema validates the core's ZeroPoint shape (src/core/types.ts); this fails to compile if the two part.
const _zeroPointShape: (parsed: z.output<typeof zeroPointInput>) => ZeroPoint = (parsed) => parsed;
void _zeroPointShape;

export const newBandInput = z.object({
  key: bandKeyInput,
  label: z.string({ error: 'label is required.' }).trim().min(1, 'label is required (e.g. "Lanternfield z").').max(80, 'label can have at most 80 characters.'),
  system: z.string({ error: 'system is required.' }).trim().min(1, 'system is required (the photometric system or instrument family).').max(80, 'system can have at most 80 characters.'),
  magnitudeSystem: z.enum(['vega', 'ab'], 'magnitudeSystem must be vega or ab.'),
  zeroPoint: zeroPointInput.nullable().default(null),
  citation: z.string({ error: 'citation is required.' }).trim().min(5, 'citation is required: where the curve was published.').max(2000, 'citation can have at most 2000 characters.'),
  licence: z.string().trim().max(2000, 'licence can have at most 2000 characters.').default(''),
});
export type NewBandInput = z.input<typeof newBandInput>;

/** The curve part of a new band: the uploaded file as text and how to read it. */
export const curveUploadInput = z.object({
  fileName: z.string({ error: 'fileName is required.' }).trim().min(1, 'fileName is required.').max(200, 'fileName can have at most 200 characters.'),
  content: z.string({ error: 'content (the curve file as text) is required.' }).max(5_000_000, 'The curve file is larger than 5 MB; a passband needs far fewer nodes.'),
  wavelengthUnit: z.enum(WAVELENGTH_UNITS, 'wavelengthUnit must be angstrom, nm or um.'),
  convention: z.enum(['photon', 'energy'], 'convention must be photon (per-photon response) or energy (energy-type response).'),
});

/** Parses an uploaded curve file; a bad file is a 400 naming file, line and column. Nothing is saved. */
export function previewCurve(raw: unknown): ParsedCurve {
  const input = parseInput(curveUploadInput, raw);
  try {
    return parseCurveFile(input.content, { fileName: input.fileName, wavelengthUnit: input.wavelengthUnit, convention: input.convention });
  } catch (err) {
    if (err instanceof CurveFileError) throw new HttpError('validation_failed', err.message, 'content');
    throw err;
  }
}

/** parseInput, with the field named from the request body's top level (zeroPoint.source, reason …). */
function parseAt<S extends z.ZodType>(schema: S, raw: unknown, at: string): z.output<S> {
  try {
    return parseInput(schema, raw);
  } catch (err) {
    if (err instanceof HttpError) throw new HttpError(err.code, err.message, err.field ? `${at}.${err.field}` : at);
    throw err;
  }
}

function toZeroPoint(z: z.output<typeof zeroPointInput> | null): ZeroPoint | null {
  if (!z) return null;
  const zp: ZeroPoint = { relErr: z.relErr, source: z.source };
  if (z.fLambdaCgs !== undefined) zp.fLambdaCgs = z.fLambdaCgs;
  if (z.fnuJy !== undefined) zp.fnuJy = z.fnuJy;
  if (z.catalogueOffsetMag !== undefined) zp.catalogueOffsetMag = z.catalogueOffsetMag;
  if (z.isophotalWavelengthAngstrom !== undefined) zp.isophotalWavelengthAngstrom = z.isophotalWavelengthAngstrom;
  return zp;
}

/** The same checks the fit will make, run now so a band that cannot convert magnitudes is never saved. */
function checkBand(band: Band): void {
  try {
    validateCurve(band);
    if (band.zeroPoint && band.magnitudeSystem === 'ab' && band.zeroPoint.fnuJy !== 3631) {
      throw new Error(`band ${band.key} is an AB band: its zero-point is F_ν,0 = 3631 Jy (Oke & Gunn 1983); give fnuJy 3631 and any catalogue offset in catalogueOffsetMag.`);
    }
    if (band.zeroPoint) zeroMagnitudeFlambdaCgs({ ...band });
  } catch (err) {
    throw new HttpError('validation_failed', err instanceof Error ? err.message : String(err), 'band.zeroPoint');
  }
}

interface NewVersion {
  actor: Actor;
  reason: string;
  /**
   * Given the current library (read inside the write transaction), the bands to write as new
   * definitions (added, or replacing the one with the same key) and what to record as the change.
   * Throws to refuse the change; nothing is then written.
   */
  build: (current: BandLibrary) => { bands: Band[]; change: Record<string, unknown> & { action: 'band_added' | 'zero_point_changed' } };
}

/**
 * Writes a new version on top of the current one: the current entries, with the built bands
 * replacing (or joining) them. One immediate transaction, so two admins saving at once get two
 * versions in order, never one lost change.
 */
function writeVersion(db: AppDatabase, v: NewVersion): { version: BandLibraryVersionInfo; bands: Band[] } {
  ensureBandLibrary(db);
  const sqlite = sqliteOf(db);
  const out = db.transaction(
    (tx) => {
      const parent = sqlite.prepare('SELECT id, label FROM band_library_versions ORDER BY id DESC LIMIT 1').get() as { id: number; label: string };
      const { bands, change } = v.build(getLibrary(db, parent.label));
      const count = sqlite.prepare('SELECT count(*) FROM band_library_versions').pluck().get() as number;
      const label = `v${count + 1}`;
      const versionId = Number(
        sqlite
          .prepare('INSERT INTO band_library_versions (label, parent_id, created_by_id, reason, change) VALUES (?, ?, ?, ?, ?)')
          .run(label, parent.id, v.actor.id, v.reason, JSON.stringify({ ...change, parent: parent.label })).lastInsertRowid,
      );
      const entries = sqlite.prepare('SELECT key, definition_id, position FROM band_library_entries WHERE version_id = ? ORDER BY position').all(parent.id) as {
        key: string;
        definition_id: number;
        position: number;
      }[];
      const byKey = new Map(entries.map((e) => [e.key, e]));
      let nextPosition = entries.reduce((m, e) => Math.max(m, e.position), -1) + 1;
      const insertDef = sqlite.prepare('INSERT INTO band_definitions (key, band_version, content_hash, definition) VALUES (?, ?, ?, ?)');
      for (const band of bands) {
        const defId = Number(insertDef.run(band.key, band.version, scienceHash(band), JSON.stringify(band)).lastInsertRowid);
        const existing = byKey.get(band.key);
        byKey.set(band.key, { key: band.key, definition_id: defId, position: existing ? existing.position : nextPosition++ });
      }
      const insertEntry = sqlite.prepare('INSERT INTO band_library_entries (version_id, key, definition_id, position) VALUES (?, ?, ?, ?)');
      for (const e of byKey.values()) insertEntry.run(versionId, e.key, e.definition_id, e.position);
      recordAudit(tx, {
        actorId: v.actor.id,
        action: bandLibraryAction(change.action),
        details: { ...change, version: label, parentVersion: parent.label, reason: v.reason },
      });
      return { versionId, bands };
    },
    { behavior: 'immediate' },
  );
  return { version: versionInfo(sqlite.prepare(`${VERSION_SELECT} WHERE v.id = ?`).get(out.versionId) as VersionRow), bands: out.bands };
}

/**
 * Adds a band from an uploaded curve: a new library version. Rejected with nothing saved when the
 * file cannot be read, the key exists already, or the zero-point does not fit the magnitude system.
 */
export function createBand(db: AppDatabase, actor: Actor, raw: { band: unknown; curve: unknown; reason: unknown }): { version: BandLibraryVersionInfo; band: Band } {
  const meta = parseAt(newBandInput, raw.band, 'band');
  const parsed = previewCurve(raw.curve);
  const reason = parseAt(reasonInput, raw.reason, 'reason');
  const band: Band = {
    key: meta.key,
    label: meta.label,
    system: meta.system,
    magnitudeSystem: meta.magnitudeSystem,
    zeroPoint: toZeroPoint(meta.zeroPoint),
    convention: parsed.convention,
    wavelengthAngstrom: parsed.wavelengthAngstrom,
    response: parsed.response,
    pivotAngstrom: parsed.pivotAngstrom,
    version: 1,
    citation: meta.citation,
    licence: meta.licence,
    derivedFrom: {
      file: parsed.fileName,
      sha256: createHash('sha256').update((raw.curve as { content: string }).content).digest('hex'),
      conversion: `uploaded; wavelength read in ${parsed.wavelengthUnit} and converted to Å${parsed.notes.length ? '; ' + parsed.notes.join(' ') : ''}`,
    },
  };
  checkBand(band);
  const { version } = writeVersion(db, {
    actor,
    reason,
    build: (current) => {
      const existing = Object.prototype.hasOwnProperty.call(current.bands, band.key) ? current.bands[band.key] : null;
      if (existing) {
        throw new HttpError('conflict', `A band with the key "${band.key}" exists already (${existing.label}, ${existing.system}). Keys are case-sensitive; choose another key or change the existing band.`, 'band.key');
      }
      return { bands: [band], change: { action: 'band_added', bandKey: band.key, pivotAngstrom: band.pivotAngstrom, convention: band.convention, file: parsed.fileName } };
    },
  });
  return { version, band };
}

/**
 * A form shows stored numbers to 10 digits (4.283e-11 for 4.2829999999999996e-11); sent back
 * unchanged they must not count as a new value, or every fit using the band would go stale.
 */
function keepEqualNumbers(next: ZeroPoint, old: ZeroPoint): void {
  const fields = ['fLambdaCgs', 'fnuJy', 'relErr', 'catalogueOffsetMag', 'isophotalWavelengthAngstrom'] as const;
  for (const f of fields) {
    const a = next[f];
    const b = old[f];
    if (a !== undefined && b !== undefined && a !== b && Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b))) next[f] = b;
  }
}

function sameZeroPoint(a: ZeroPoint | null, b: ZeroPoint | null): boolean {
  if (!a || !b) return a === b;
  const fields = ['fLambdaCgs', 'fnuJy', 'relErr', 'catalogueOffsetMag', 'isophotalWavelengthAngstrom', 'source'] as const;
  return fields.every((f) => a[f] === b[f]);
}

/**
 * Sets a band's zero-point and its source — a new library version; fits made with the old numbers
 * become stale. A reason is required. Giving the same numbers with another source makes a new
 * version too (the wording is part of the record) but leaves fits as they are.
 */
export function updateZeroPoint(db: AppDatabase, actor: Actor, key: string, rawZeroPoint: unknown, rawReason: unknown): { version: BandLibraryVersionInfo; band: Band } {
  const zeroPoint = toZeroPoint(parseAt(zeroPointInput, rawZeroPoint, 'zeroPoint'));
  const reason = parseAt(reasonInput, rawReason, 'reason');
  const { version, bands } = writeVersion(db, {
    actor,
    reason,
    build: (current) => {
      const old = Object.prototype.hasOwnProperty.call(current.bands, key) ? current.bands[key] : null;
      if (!old) throw new HttpError('not_found', `There is no band "${key}" in band library ${current.version}.`);
      if (zeroPoint && old.zeroPoint) keepEqualNumbers(zeroPoint, old.zeroPoint);
      if (sameZeroPoint(old.zeroPoint, zeroPoint)) {
        throw new HttpError('validation_failed', `Band ${key} already has exactly this zero-point and source; nothing to change.`, 'zeroPoint');
      }
      const band: Band = { ...old, zeroPoint, version: old.version + 1 };
      checkBand(band);
      return { bands: [band], change: { action: 'zero_point_changed', bandKey: key, before: old.zeroPoint, after: zeroPoint, numbersChanged: scienceHash(old) !== scienceHash(band) } };
    },
  });
  return { version, band: bands[0] };
}

export interface BandHistoryEntry {
  version: BandLibraryVersionInfo;
  bandVersion: number;
  zeroPoint: ZeroPoint | null;
  /** The band's numbers (curve, systems, zero-point values) changed in this version. */
  numbersChanged: boolean;
}

/** The versions in which this band was added or changed, newest first. */
export function listHistory(db: AppDatabase, key: string): BandHistoryEntry[] {
  ensureBandLibrary(db);
  const rows = sqliteOf(db)
    .prepare(
      `SELECT v.id, v.label, v.parent_id, v.reason, v.change, v.created_at, v.created_by_id, u.name AS created_by_name,
              d.band_version, d.definition, d.content_hash, pd.content_hash AS parent_hash
       FROM band_library_versions v
       LEFT JOIN user u ON u.id = v.created_by_id
       JOIN band_library_entries e ON e.version_id = v.id AND e.key = ?
       JOIN band_definitions d ON d.id = e.definition_id
       LEFT JOIN band_library_entries pe ON pe.version_id = v.parent_id AND pe.key = e.key
       LEFT JOIN band_definitions pd ON pd.id = pe.definition_id
       WHERE pe.definition_id IS NULL OR pe.definition_id != e.definition_id
       ORDER BY v.id DESC`,
    )
    .all(key) as (VersionRow & { band_version: number; definition: string; content_hash: string; parent_hash: string | null })[];
  return rows.map((r) => ({
    version: versionInfo(r),
    bandVersion: r.band_version,
    zeroPoint: (JSON.parse(r.definition) as Band).zeroPoint,
    numbersChanged: r.parent_hash === null || r.parent_hash !== r.content_hash,
  }));
}

export interface BandSummary {
  key: string;
  label: string;
  system: string;
  magnitudeSystem: Band['magnitudeSystem'];
  convention: Band['convention'];
  pivotAngstrom: number;
  zeroPoint: ZeroPoint | null;
  bandVersion: number;
  nodes: number;
  minWavelengthAngstrom: number;
  maxWavelengthAngstrom: number;
}

export function summariseBand(b: Band): BandSummary {
  return {
    key: b.key,
    label: b.label,
    system: b.system,
    magnitudeSystem: b.magnitudeSystem,
    convention: b.convention,
    pivotAngstrom: b.pivotAngstrom,
    zeroPoint: b.zeroPoint,
    bandVersion: b.version,
    nodes: b.wavelengthAngstrom.length,
    minWavelengthAngstrom: b.wavelengthAngstrom[0],
    maxWavelengthAngstrom: b.wavelengthAngstrom[b.wavelengthAngstrom.length - 1],
  };
}
