// Fuzzing every reader: 360 seeded mutations (random bytes, cuts, removed and repeated ranges,
// inserted quotes, delimiters, NULs, entities and DTDs, deep nesting, long lines, hostile FITS header
// values such as NAXIS2 = 3000000000 or TDIM2 = '(0,5)') of the fixture FITS, VOTable and CSV/TSV
// files (written by astropy, see fixtures/README.md), each read by every reader in a child process
// (tests/support/fuzz-readers.ts). Every reader must answer — with a result or one of our own error
// classes, never another exception — and each file within a generous limit. The seed is fixed, so
// a failure names a mutation that can be replayed.
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';

const SEED = 20261202;
const COUNT = 360;
/** Per file: generous (the files are a few kB; they take milliseconds), so a loaded machine passes. */
const PER_FILE_MS = 30_000;

interface Outcome {
  i: number;
  file: string;
  how: string;
  bytes: number;
  ms: number;
  answers: Record<string, string>;
}

describe('fuzzed FITS, VOTable and CSV files through every reader', () => {
  it(`${COUNT} mutations (seed ${SEED}): each answers with a result or our own error, in time`, () => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', path.join(projectRoot(), 'tests/support/fuzz-readers.ts'), String(SEED), String(COUNT)], {
      cwd: projectRoot(),
      encoding: 'utf8',
      // Only stops a reader that never returns; the run takes seconds.
      timeout: 540_000,
      maxBuffer: 64 * 1024 * 1024,
    });
    const lastStarted = r.stderr.trim().split('\n').pop();
    expect(r.signal, `the child was stopped while reading: ${lastStarted}`).toBeNull();
    expect(r.status, r.stderr.slice(-2000)).toBe(0);
    const outcomes = r.stdout.trim().split('\n').map((l) => JSON.parse(l) as Outcome);
    expect(outcomes).toHaveLength(COUNT);

    const foreign = outcomes.flatMap((o) => Object.entries(o.answers).filter(([, a]) => a.startsWith('foreign:')).map(([reader, a]) => `#${o.i} ${o.file} (${o.how}) ${reader}: ${a}`));
    expect(foreign).toEqual([]);
    const slow = outcomes.filter((o) => o.ms > PER_FILE_MS).map((o) => `#${o.i} ${o.file} (${o.how}): ${o.ms} ms`);
    expect(slow).toEqual([]);

    // The mutations reach both sides: files still read and files refused, in every format.
    for (const ext of ['.fits', '.vot', '.csv', '.tsv']) {
      const mine = outcomes.filter((o) => o.file.endsWith(ext)).map((o) => o.answers.readUpload);
      expect(mine.filter((a) => a === 'ok').length, `${ext} read`).toBeGreaterThan(0);
      expect(mine.filter((a) => a.startsWith('own:')).length, `${ext} refused`).toBeGreaterThan(0);
    }
    // The small limits are reached too.
    expect(outcomes.some((o) => o.answers.readUploadSmallLimits === 'own:InputLimitError')).toBe(true);
  });
});
