// The rows a check found good, kept in a SQLite file beside the upload (uploads/<campaign>/<name>.check.sqlite)
// instead of in memory: one row per star with its values and measurements as JSON, plus the first
// row of every id seen (duplicates) and the state of long-format stars while their rows arrive.
// A million stars cost disk, not memory, and the import reads them back one at a time
// (decision record 0023). The file is rebuilt by any check, so it needs no journal.
import Database from 'better-sqlite3';
import { rmSync } from 'node:fs';
import path from 'node:path';
import type { AppDatabase } from '../../db/client';
import type { LongStar, MappedStar, MapperStore } from '../../core/input/apply-mapping';
import { uploadFolderFiles } from './storage';

export function stagingPathFor(storedPath: string): string {
  return `${storedPath}.check.sqlite`;
}

export function removeStaging(storedPath: string): void {
  const p = stagingPathFor(storedPath);
  for (const suffix of ['', '-journal', '-wal', '-shm']) rmSync(p + suffix, { force: true });
}

/** Written by a check; rows are committed every `batch` stars so the file's journal stays small. */
export class StagingWriter implements MapperStore {
  private readonly db: Database.Database;
  private readonly claim: Database.Statement;
  private readonly firstRowOf: Database.Statement;
  private readonly insertGood: Database.Statement;
  private readonly getLongStmt: Database.Statement;
  private readonly putLongStmt: Database.Statement;
  private pending = 0;
  /** The long-format star of the last row (files are usually grouped by star). */
  private cached: LongStar | null = null;
  private cachedDirty = false;

  constructor(
    readonly path: string,
    private readonly batch = 5000,
  ) {
    for (const suffix of ['', '-journal', '-wal', '-shm']) rmSync(path + suffix, { force: true });
    this.db = new Database(path);
    this.db.pragma('journal_mode = OFF');
    this.db.pragma('synchronous = OFF');
    this.db.pragma('cache_size = -16000');
    this.db.exec(`
      CREATE TABLE ids (key TEXT PRIMARY KEY, row INTEGER NOT NULL) WITHOUT ROWID;
      CREATE TABLE good (row INTEGER PRIMARY KEY, key TEXT NOT NULL, nm INTEGER NOT NULL, data TEXT NOT NULL);
      CREATE TABLE long (key TEXT PRIMARY KEY, row INTEGER NOT NULL, data TEXT NOT NULL) WITHOUT ROWID;
      CREATE INDEX long_row ON long (row);
    `);
    this.claim = this.db.prepare('INSERT INTO ids (key, row) VALUES (?, ?) ON CONFLICT (key) DO NOTHING');
    this.firstRowOf = this.db.prepare('SELECT row FROM ids WHERE key = ?').pluck();
    this.insertGood = this.db.prepare('INSERT INTO good (row, key, nm, data) VALUES (?, ?, ?, ?)');
    this.getLongStmt = this.db.prepare('SELECT data FROM long WHERE key = ?').pluck();
    this.putLongStmt = this.db.prepare('INSERT INTO long (key, row, data) VALUES (?, ?, ?) ON CONFLICT (key) DO UPDATE SET data = excluded.data');
    this.db.exec('BEGIN');
  }

  private tick(): void {
    if (++this.pending >= this.batch) {
      this.db.exec('COMMIT; BEGIN');
      this.pending = 0;
    }
  }

  firstRow(id: string, row: number): number | undefined {
    const r = this.claim.run(id, row);
    this.tick();
    return r.changes === 1 ? undefined : (this.firstRowOf.get(id) as number);
  }

  addStar(star: MappedStar): void {
    this.insertGood.run(star.row, star.id, star.measurements.length, JSON.stringify(star));
    this.tick();
  }

  getLong(id: string): LongStar | undefined {
    if (this.cached?.id === id) return this.cached;
    this.flushCached();
    const data = this.getLongStmt.get(id) as string | undefined;
    this.cached = data === undefined ? null : (JSON.parse(data) as LongStar);
    return this.cached ?? undefined;
  }

  putLong(s: LongStar): void {
    if (this.cached && this.cached.id !== s.id) this.flushCached();
    this.cached = s;
    this.cachedDirty = true;
  }

  private flushCached(): void {
    if (this.cached && this.cachedDirty) {
      this.putLongStmt.run(this.cached.id, this.cached.row, JSON.stringify(this.cached));
      this.tick();
    }
    this.cachedDirty = false;
  }

  eachLong(fn: (s: LongStar) => void): void {
    this.flushCached();
    this.cached = null;
    // Pages of 1000 in row order through this same connection (the callback writes good stars meanwhile).
    const page = this.db.prepare('SELECT row, data FROM long WHERE row > ? ORDER BY row LIMIT 1000');
    let after = 0;
    for (;;) {
      const rows = page.all(after) as { row: number; data: string }[];
      if (rows.length === 0) break;
      for (const r of rows) fn(JSON.parse(r.data) as LongStar);
      after = rows[rows.length - 1].row;
    }
  }

  /** Commits and closes; the counts of the good stars and their measurements. */
  close(): { stars: number; measurements: number } {
    this.flushCached();
    this.db.exec('COMMIT');
    this.db.exec('DROP TABLE long; DROP TABLE ids');
    const c = this.db.prepare('SELECT count(*) AS stars, coalesce(sum(nm), 0) AS measurements FROM good').get() as { stars: number; measurements: number };
    this.db.close();
    return c;
  }

  abandon(): void {
    try {
      if (this.db.inTransaction) this.db.exec('ROLLBACK');
      this.db.close();
    } catch {
      // already closed
    }
    for (const suffix of ['', '-journal', '-wal', '-shm']) rmSync(this.path + suffix, { force: true });
  }
}

/** The good stars of a finished check, in file order, read one at a time. */
export function* readStaged(path: string): Generator<MappedStar> {
  const db = new Database(path, { readonly: true, fileMustExist: true });
  try {
    for (const data of db.prepare('SELECT data FROM good ORDER BY row').pluck().iterate() as IterableIterator<string>) yield JSON.parse(data) as MappedStar;
  } finally {
    db.close();
  }
}

const STAGING_SUFFIX = '.check.sqlite';

/**
 * Removes staging files no upload can use: the upload is gone (withdrawn, or its campaign deleted),
 * or its stored check no longer says the file holds its stars (a check cut short by a stopped
 * process, or an import done since). Run by the web server at start-up, before its intake thread
 * starts (the only process that writes them), so no job is building one meanwhile. Returns the
 * files removed.
 */
export function removeOrphanStaging(db: AppDatabase, dataDir: string): string[] {
  const removed: string[] = [];
  // 1 when the upload's stored check says the staging file holds its stars; nothing when the upload is gone.
  const staged = db.$client.prepare("SELECT 1 FROM uploads WHERE stored_path = ? AND json_valid(last_check) AND json_extract(last_check, '$.staged') = 1").pluck();
  for (const { dir, name } of uploadFolderFiles(dataDir)) {
    const at = name.indexOf(STAGING_SUFFIX);
    if (at < 0 || !['', '-journal', '-wal', '-shm'].includes(name.slice(at + STAGING_SUFFIX.length))) continue;
    if (staged.get(path.join(dir, name.slice(0, at))) === 1) continue;
    const file = path.join(dir, name);
    rmSync(file, { force: true });
    removed.push(file);
  }
  return removed;
}
