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

/**
 * Problems as a streaming check produces them: the first REPORT_LIMIT kept as report entries, the
 * rest only counted, so a file with a million bad rows does not hold a million messages. File-wide
 * problems (row 0) come first, as applyMapping lists them.
 */
export class CappedProblems {
  private readonly kept: MappingProblem[] = [];
  private readonly fileWide: MappingProblem[] = [];
  errorCount = 0;
  warningCount = 0;
  private extra = 0;
  private extraErrors = 0;
  private file = '';

  add(p: MappingProblem): void {
    if (p.severity === 'error') this.errorCount++;
    else this.warningCount++;
    if (this.file === '') this.file = p.file;
    // File-wide problems (the mapping's, summaries by band) are few and always kept, listed first.
    if (p.row === 0) this.fileWide.push(p);
    else if (this.fileWide.length + this.kept.length < REPORT_LIMIT) this.kept.push(p);
    else {
      this.extra++;
      if (p.severity === 'error') this.extraErrors++;
    }
  }

  report(): ReportEntry[] {
    // File-wide lines that arrived after the rows filled the report push the last rows out.
    const room = Math.max(0, REPORT_LIMIT - this.fileWide.length);
    const pushedOut = this.kept.slice(room);
    const extra = this.extra + pushedOut.length;
    const extraErrors = this.extraErrors + pushedOut.filter((p) => p.severity === 'error').length;
    const entries = toReport([...this.fileWide, ...this.kept.slice(0, room)]);
    if (extra > 0) {
      entries.push({
        file: this.file,
        row: 0,
        severity: extraErrors > 0 ? 'error' : 'warning',
        message: `…and ${extra} more problems (${extraErrors} errors) not listed here`,
      });
    }
    return entries;
  }
}
