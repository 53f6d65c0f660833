// What any one input file may cost to read: its size, its rows, columns and cells (the memory it
// takes once read), and the time its reading may take. Every reader (CSV/TSV, VOTable, FITS) checks
// the same budget and answers with an InputLimitError naming the file, where in it the limit was
// passed, the limit and the setting that raises it (docs/decisions/0018-input-limits.md).
// Pure: the intake and `starkiln fit` share it; the settings are read from an environment record.

/**
 * Why a file is not read: it cannot be (`unreadable`), it holds what a reader refuses for safety
 * (`unsafe`: a DTD, entities, absurd nesting), or it passes one of the limits below (`limit`).
 */
export type UnreadableKind = 'unreadable' | 'unsafe' | 'limit';

/** The file cannot be read at all; `message` says why in plain words, starting with the file name. */
export class UnreadableFile extends Error {
  constructor(
    message: string,
    readonly kind: UnreadableKind = 'unreadable',
  ) {
    super(message);
    this.name = 'UnreadableFile';
  }
}

/** A reader's message without its leading "file: " (the caller names the file once, its own way). */
export function stripSource(message: string, file: string): string {
  return message.startsWith(`${file}: `) ? message.slice(file.length + 2) : message;
}

export interface InputLimits {
  /** Largest file read, in bytes. */
  maxBytes: number;
  /** Most data rows in one table. */
  maxRows: number;
  /** Most columns in one table. */
  maxColumns: number;
  /** Most cells (rows × columns) in one table: the memory budget (at most about 100 bytes a cell while read). */
  maxCells: number;
  /** Longest a file's reading may take, in seconds (checked as the reader goes). */
  maxSeconds: number;
}

/** The settings (environment variables) behind each limit. */
export const LIMIT_SETTINGS: Record<keyof InputLimits, string> = {
  maxBytes: 'INPUT_MAX_BYTES',
  maxRows: 'INPUT_MAX_ROWS',
  maxColumns: 'INPUT_MAX_COLUMNS',
  maxCells: 'INPUT_MAX_CELLS',
  maxSeconds: 'INPUT_MAX_SECONDS',
};

export const DEFAULT_INPUT_LIMITS: Readonly<InputLimits> = Object.freeze({
  maxBytes: 200 * 1024 * 1024,
  maxRows: 2_000_000,
  maxColumns: 1000,
  maxCells: 10_000_000,
  maxSeconds: 120,
});

/** A limit of an input file was passed; the message names the file, the place, the limit and its setting. */
export class InputLimitError extends UnreadableFile {
  readonly limit: keyof InputLimits;
  readonly position: string;
  constructor(file: string, position: string, what: string, limit: keyof InputLimits, value: number) {
    super(`${file}${position ? `, ${position}` : ''}: ${what}; the limit is ${LIMIT_SETTINGS[limit]} = ${value}${limit === 'maxSeconds' ? ' s' : ''}`, 'limit');
    this.name = 'InputLimitError';
    this.limit = limit;
    this.position = position;
  }
}

/** Limits from settings (a missing or empty one keeps its default); throws naming every bad one. */
export function limitsFromEnv(env: Record<string, string | undefined>): InputLimits {
  const out: InputLimits = { ...DEFAULT_INPUT_LIMITS };
  const bad: string[] = [];
  for (const key of Object.keys(LIMIT_SETTINGS) as (keyof InputLimits)[]) {
    const name = LIMIT_SETTINGS[key];
    const raw = env[name]?.trim();
    if (!raw) continue;
    const n = Number(raw);
    if (!/^\d+(\.\d+)?$/.test(raw) || !(n > 0) || (key !== 'maxSeconds' && !Number.isSafeInteger(n))) {
      bad.push(`${name} must be a positive ${key === 'maxSeconds' ? 'number of seconds' : 'whole number'}, found "${raw}"`);
      continue;
    }
    out[key] = n;
  }
  if (bad.length) throw new Error(bad.join('; '));
  return out;
}

/** A clock in milliseconds; tests pass their own. */
export type Clock = () => number;

/**
 * One file's reading: the limits and a running clock. Readers call `tick` in their loops (the clock
 * is read once every `every` calls) and `rows`/`columns`/`cells` as the table grows.
 */
export class ReadBudget {
  readonly limits: InputLimits;
  private readonly started: number;
  private calls = 0;
  constructor(
    readonly file: string,
    limits: Partial<InputLimits> = {},
    private readonly clock: Clock = Date.now,
    private readonly every = 1024,
  ) {
    this.limits = { ...DEFAULT_INPUT_LIMITS, ...limits };
    this.started = clock();
  }

  /** Checks the time every `every` calls; `where` says where the reader is (built only on failure). */
  tick(where: () => string): void {
    if (++this.calls % this.every !== 0) return;
    this.checkTime(where);
  }

  checkTime(where: () => string): void {
    const seconds = (this.clock() - this.started) / 1000;
    if (seconds > this.limits.maxSeconds) {
      throw new InputLimitError(this.file, where(), `reading took more than ${this.limits.maxSeconds} s (stopped here); split the file or raise the limit`, 'maxSeconds', this.limits.maxSeconds);
    }
  }

  bytes(n: number): void {
    if (n > this.limits.maxBytes) {
      throw new InputLimitError(this.file, '', `the file has ${n} bytes, more than the ${this.limits.maxBytes} a file may have`, 'maxBytes', this.limits.maxBytes);
    }
  }

  rows(n: number, where: () => string): void {
    if (n > this.limits.maxRows) throw new InputLimitError(this.file, where(), `more than ${this.limits.maxRows} data rows; split the file`, 'maxRows', this.limits.maxRows);
  }

  columns(n: number, where: () => string): void {
    if (n > this.limits.maxColumns) throw new InputLimitError(this.file, where(), `${n} columns, more than ${this.limits.maxColumns}; keep the columns you need`, 'maxColumns', this.limits.maxColumns);
  }

  /** `weight`: what one cell of this format costs in text cells (a VOTable's XML tree costs more). */
  cells(n: number, where: () => string, weight = 1): void {
    if (n * weight > this.limits.maxCells) {
      const counted = weight === 1 ? '' : ` (a cell of this format counts ${weight} times: reading it takes ${weight} times the memory)`;
      throw new InputLimitError(this.file, where(), `more than ${Math.floor(this.limits.maxCells / weight)} cells (rows × columns) to hold in memory${counted}; split the file or keep fewer columns`, 'maxCells', this.limits.maxCells);
    }
  }
}

/**
 * Text from a file as it may appear in a message: control, BiDi and zero-width characters written
 * as U+XXXX (so a message cannot be reordered or hidden by them), and at most `max` characters.
 */
export function shownText(text: string, max = 60): string {
  const cut = text.length > max ? text.slice(0, max) : text;
  const escaped = cut.replace(UNSHOWABLE, (c) => `<U+${c.codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0')}>`);
  return text.length > max ? `${escaped}… (${text.length} characters)` : escaped;
}

// C0 and C1 controls, DEL, the BiDi controls and the zero-width characters (see star-id.ts).
const UNSHOWABLE = /[\u0000-\u001f\u007f-\u009f\u061c\u200b-\u200f\u202a-\u202e\u2060\u2066-\u2069\ufeff]/g;
