// Audit action names are one vocabulary (src/contracts/audit.ts). The TypeScript writers are held to
// it by their types; the database triggers write some too (drizzle/*.sql), and this holds them to it.
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { AUDIT_ACTIONS } from '../src/contracts/audit';
import { projectRoot } from '../src/db/paths';

describe('audit vocabulary', () => {
  it('every action a trigger writes is in the vocabulary, and the vocabulary has no duplicates', () => {
    const dir = path.join(projectRoot(), 'drizzle');
    const written = new Set<string>();
    for (const file of readdirSync(dir).filter((f) => f.endsWith('.sql'))) {
      const sql = readFileSync(path.join(dir, file), 'utf8');
      for (const stmt of sql.split(/INSERT INTO `?audit_events`?/).slice(1)) {
        const body = stmt.slice(0, stmt.indexOf(';'));
        for (const m of body.matchAll(/'([a-z_]+\.[a-z_]+)'/g)) written.add(m[1]);
      }
    }
    expect(written.size).toBeGreaterThan(0);
    for (const action of written) expect(AUDIT_ACTIONS as readonly string[], action).toContain(action);
    expect(new Set(AUDIT_ACTIONS).size).toBe(AUDIT_ACTIONS.length);
  });
});
