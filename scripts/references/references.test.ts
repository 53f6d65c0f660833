// CI proof that the committed reference fixtures are reproducible: when Debian's python3 with
// synphot, astropy and extinction is present, re-run scripts/references/make_references.py into a
// temporary folder and compare every number with the committed files.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const PYTHON = '/usr/bin/python3';
const canRun =
  spawnSync(PYTHON, ['-c', 'import synphot, astropy, extinction, numpy'], { stdio: 'ignore' }).status === 0;
const FILES = ['synphot/blackbody-band-means.json', 'extinction/laws.json'];

/** Walks two JSON values; numbers must agree to `rel`, everything else exactly; provenance.date is skipped. */
function compare(a: unknown, b: unknown, where: string, rel: number, problems: string[]): void {
  if (typeof a === 'number' && typeof b === 'number') {
    const scale = Math.max(Math.abs(a), Math.abs(b));
    if (Math.abs(a - b) > rel * scale) problems.push(`${where}: committed ${a}, regenerated ${b}`);
    return;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) problems.push(`${where}: length ${a.length} vs ${b.length}`);
    else a.forEach((v, i) => compare(v, b[i], `${where}[${i}]`, rel, problems));
    return;
  }
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    const ka = Object.keys(a).sort();
    const kb = Object.keys(b).sort();
    if (ka.join() !== kb.join()) problems.push(`${where}: keys ${ka} vs ${kb}`);
    for (const k of ka) {
      if (where === '.provenance' && k === 'date') continue;
      compare((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${where}.${k}`, rel, problems);
    }
    return;
  }
  if (a !== b) problems.push(`${where}: ${JSON.stringify(a)} vs ${JSON.stringify(b)}`);
}

describe.runIf(canRun)('reference fixtures are reproducible', () => {
  const out = mkdtempSync(path.join(os.tmpdir(), 'starkiln-references-'));
  afterAll(() => rmSync(out, { recursive: true, force: true }));

  it('make_references.py regenerates the committed numbers', () => {
    execFileSync(PYTHON, [path.join(root, 'scripts/references/make_references.py'), '--out', out], { stdio: 'pipe' });
    for (const file of FILES) {
      const committed = JSON.parse(readFileSync(path.join(root, 'fixtures', file), 'utf8'));
      const regenerated = JSON.parse(readFileSync(path.join(out, file), 'utf8'));
      const problems: string[] = [];
      // Same packages give the same bits; 1e-12 leaves room only for a different BLAS/CPU.
      compare(committed, regenerated, '', 1e-12, problems);
      expect(problems.slice(0, 10), file).toEqual([]);
    }
  }, 180_000);
});
