// The validation report an intake job keeps: file-wide lines (the mapping's, the summaries by band
// that the long layout sends after its rows) come first and are never cut; the rows fill the rest.
import { describe, expect, it } from 'vitest';
import type { MappingProblem } from '../src/core/input/mapping';
import { CappedProblems, REPORT_LIMIT } from '../src/server/intake/report';

const rowProblem = (row: number): MappingProblem => ({ file: 'long.csv', row, line: row + 1, severity: 'error', message: `row ${row} (file line ${row + 1}): bad` });

describe('CappedProblems', () => {
  it('puts a summary that arrives after the rows at the top', () => {
    const c = new CappedProblems();
    for (let r = 1; r <= 3; r++) c.add(rowProblem(r));
    c.add({ file: 'long.csv', row: 0, severity: 'warning', message: 'G, BP, RP: no magnitude error column is mapped …' });
    expect(c.report().map((e) => e.row)).toEqual([0, 1, 2, 3]);
    expect(c.warningCount).toBe(1);
    expect(c.errorCount).toBe(3);
  });

  it('keeps a late summary when the rows already filled the report, and counts the row it pushed out', () => {
    const c = new CappedProblems();
    for (let r = 1; r <= REPORT_LIMIT + 10; r++) c.add(rowProblem(r));
    c.add({ file: 'long.csv', row: 0, severity: 'warning', message: 'V: no magnitude error column is mapped …' });
    const report = c.report();
    expect(report).toHaveLength(REPORT_LIMIT + 1);
    expect(report[0].message).toMatch(/^V: no magnitude error column/);
    expect(report[REPORT_LIMIT - 1].row).toBe(REPORT_LIMIT - 1);
    expect(report[REPORT_LIMIT].message).toBe('…and 11 more problems (11 errors) not listed here');
  });
});
