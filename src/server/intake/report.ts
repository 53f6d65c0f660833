// The validation report kept with each upload: every problem with file, row and column.
import type { MappingProblem } from '../../core/input/mapping';
import type { ReportEntry } from '../../contracts/intake';

export type { ReportEntry } from '../../contracts/intake';

/** Reports larger than this are cut, with a last entry saying how many were left out. */
export const REPORT_LIMIT = 2000;

export function toReport(problems: readonly MappingProblem[]): ReportEntry[] {
  const entries = problems.slice(0, REPORT_LIMIT).map((p) => ({
    file: p.file,
    row: p.row,
    ...(p.line !== undefined ? { line: p.line } : {}),
    ...(p.column ? { column: p.column.name, columnNumber: p.column.number } : {}),
    severity: p.severity,
    message: p.message,
  }));
  if (problems.length > REPORT_LIMIT) {
    const errors = problems.slice(REPORT_LIMIT).filter((p) => p.severity === 'error').length;
    entries.push({
      file: problems[0].file,
      row: 0,
      severity: errors > 0 ? 'error' : 'warning',
      message: `…and ${problems.length - REPORT_LIMIT} more problems (${errors} errors) not listed here`,
    });
  }
  return entries;
}

export function fileProblem(file: string, message: string): ReportEntry[] {
  return [{ file, row: 0, severity: 'error', message }];
}
