// Paths resolve from the project root, never from the working directory: the built server runs from
// dist/, tests from a temp dir, scripts from anywhere.
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

let cachedRoot: string | undefined;

/** The folder holding Starkiln's package.json, found by walking up from this module. */
export function projectRoot(): string {
  if (cachedRoot) return cachedRoot;
  // The one setting read here rather than in src/adapters/env.ts: it says where `.env` is.
  if (process.env.STARKILN_ROOT) return (cachedRoot = path.resolve(process.env.STARKILN_ROOT));
  let dir = path.dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const candidate = path.join(dir, 'package.json');
    if (existsSync(candidate)) {
      try {
        if (JSON.parse(readFileSync(candidate, 'utf8')).name === 'starkiln') return (cachedRoot = dir);
      } catch {
        // an unreadable package.json further down is not ours; keep walking up
      }
    }
    const parent = path.dirname(dir);
    if (parent === dir) throw new Error('Cannot find the Starkiln project root (package.json named "starkiln").');
    dir = parent;
  }
}

export const DEFAULT_DATABASE_PATH = 'data/starkiln.db';

/** DATABASE_PATH if set (relative paths are taken from the project root), else data/starkiln.db. */
export function resolveDatabasePath(fromEnv: string | undefined): string {
  const value = fromEnv && fromEnv.trim() !== '' ? fromEnv : DEFAULT_DATABASE_PATH;
  return path.isAbsolute(value) ? value : path.resolve(projectRoot(), value);
}

export function migrationsFolder(): string {
  return path.join(projectRoot(), 'drizzle');
}
