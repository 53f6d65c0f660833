// CI proof that fixtures/bands is reproducible: when Debian's python3 with synphot is present,
// re-run scripts/references/make_uploaded_curve_fixture.py into a temporary folder; the curve files
// must come out byte for byte and synphot's pivots to 1e-12 relative.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const PYTHON = '/usr/bin/python3';
const canRun = spawnSync(PYTHON, ['-c', 'import synphot, astropy, numpy'], { stdio: 'ignore' }).status === 0;
const CURVES = ['lanternfield-z.ecsv', 'lanternfield-y.txt', 'lanternfield-b.csv'];

describe.runIf(canRun)('uploaded-curve fixtures are reproducible', () => {
  const out = mkdtempSync(path.join(os.tmpdir(), 'starkiln-curves-'));
  afterAll(() => rmSync(out, { recursive: true, force: true }));

  it('make_uploaded_curve_fixture.py regenerates the committed curves and pivots', () => {
    execFileSync(PYTHON, [path.join(root, 'scripts/references/make_uploaded_curve_fixture.py'), '--out', out], { stdio: 'pipe' });
    for (const f of CURVES) expect(readFileSync(path.join(out, f), 'utf8'), f).toBe(readFileSync(path.join(root, 'fixtures/bands', f), 'utf8'));
    type Pivots = { curves: { file: string; pivotAngstromNodes: number; pivotAngstromFine: number }[] };
    const committed = JSON.parse(readFileSync(path.join(root, 'fixtures/bands/pivots.json'), 'utf8')) as Pivots;
    const regenerated = JSON.parse(readFileSync(path.join(out, 'pivots.json'), 'utf8')) as Pivots;
    expect(regenerated.curves.map((c) => c.file)).toEqual(committed.curves.map((c) => c.file));
    committed.curves.forEach((c, i) => {
      const r = regenerated.curves[i];
      expect(Math.abs(r.pivotAngstromFine - c.pivotAngstromFine) / c.pivotAngstromFine, c.file).toBeLessThan(1e-12);
      expect(Math.abs(r.pivotAngstromNodes - c.pivotAngstromNodes) / c.pivotAngstromNodes, c.file).toBeLessThan(1e-12);
    });
  });
});
