/** True when better-sqlite3 refused a write because of a UNIQUE or PRIMARY KEY constraint. */
export function isUniqueViolation(err: unknown): boolean {
  const code = (err as { code?: string } | null)?.code;
  return code === 'SQLITE_CONSTRAINT_UNIQUE' || code === 'SQLITE_CONSTRAINT_PRIMARYKEY';
}

/** True for an error raised by SQLite itself (better-sqlite3 gives them codes starting SQLITE_): busy, locked, I/O … */
export function isDatabaseError(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  return typeof code === 'string' && code.startsWith('SQLITE_');
}

/** True when SQLite refused because another connection holds the lock (SQLITE_BUSY*, SQLITE_LOCKED*). */
export function isBusy(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  return typeof code === 'string' && (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED'));
}

/** Wait before retry number `attempt` (1-based): base doubled per attempt, at most 30 s, with ±25 % jitter so workers do not retry in step. */
export function databaseBackoffMs(attempt: number, baseMs = 200, random: () => number = Math.random): number {
  const raw = Math.min(30_000, baseMs * 2 ** Math.max(0, attempt - 1));
  return Math.round(raw * (0.75 + 0.5 * random()));
}

/**
 * Runs a best-effort write without waiting for the lock: when another connection holds it (a long
 * import in the intake thread), the write is skipped (false) instead of blocking this thread for
 * the busy timeout. Only for writes that may be lost, such as a token's last-used time.
 */
export function writeIfFree(sqlite: { pragma(source: string, options?: { simple?: boolean }): unknown }, write: () => void): boolean {
  const previous = Number(sqlite.pragma('busy_timeout', { simple: true }));
  sqlite.pragma('busy_timeout = 0');
  try {
    write();
    return true;
  } catch (err) {
    if (isBusy(err)) return false;
    throw err;
  } finally {
    sqlite.pragma(`busy_timeout = ${previous}`);
  }
}
