// Reading a passband curve an admin uploads: ECSV (astropy's header-in-comments table), CSV with a
// header row, or plain two-column text. The admin chooses the wavelength unit and declares whether
// the response is per photon or energy-type; the parsed curve is checked here so a bad file never
// reaches the band library, and every message names the file, line and column.
import { pivotWavelength, validateCurve } from '../passband';
import type { ResponseConvention } from '../types';

export const WAVELENGTH_UNITS = ['angstrom', 'nm', 'um'] as const;
export type WavelengthUnit = (typeof WAVELENGTH_UNITS)[number];

/** Å per unit. */
export const ANGSTROM_PER_UNIT: Record<WavelengthUnit, number> = { angstrom: 1, nm: 10, um: 1e4 };
export const UNIT_LABEL: Record<WavelengthUnit, string> = { angstrom: 'Å', nm: 'nm', um: 'µm' };

export type CurveFileFormat = 'ecsv' | 'csv' | 'text';

/**
 * Where a photometric band can sit. Below the Lyman limit (912 Å) interstellar hydrogen absorbs
 * starlight, so no band for stellar photometry lives there; above 1 mm is radio, not a passband
 * Starkiln integrates a Planck curve through. A curve outside means the unit was chosen wrongly.
 */
export const MIN_PLAUSIBLE_ANGSTROM = 912;
export const MAX_PLAUSIBLE_ANGSTROM = 1e7;
/** A passband's non-zero part spanning more than this factor in wavelength is no single band. */
export const MAX_PLAUSIBLE_SPAN = 20;

export interface CurveFileOptions {
  fileName: string;
  wavelengthUnit: WavelengthUnit;
  convention: ResponseConvention;
  /** Detected from the content when absent. */
  format?: CurveFileFormat;
}

export interface ParsedCurve {
  fileName: string;
  format: CurveFileFormat;
  /** Column names as the file gives them (or "column 1", "column 2"). */
  wavelengthColumn: string;
  responseColumn: string;
  wavelengthUnit: WavelengthUnit;
  convention: ResponseConvention;
  wavelengthAngstrom: number[];
  response: number[];
  pivotAngstrom: number;
  /** Things the admin should know (a descending file was turned round, a unit from the header …). */
  notes: string[];
}

export class CurveFileError extends Error {
  constructor(
    message: string,
    readonly line?: number,
    readonly column?: string,
  ) {
    super(message);
    this.name = 'CurveFileError';
  }
}

const UNIT_ALIASES: Record<string, WavelengthUnit> = {
  angstrom: 'angstrom', aa: 'angstrom', a: 'angstrom', 'å': 'angstrom', angstroms: 'angstrom',
  nm: 'nm', nanometer: 'nm', nanometre: 'nm',
  um: 'um', micron: 'um', micrometer: 'um', micrometre: 'um', 'µm': 'um', 'μm': 'um', microns: 'um',
};

export function detectFormat(text: string, fileName: string): CurveFileFormat {
  if (/^\s*#\s*%ECSV/m.test(text.slice(0, 2000)) || /\.ecsv$/i.test(fileName)) return 'ecsv';
  const first = text.split(/\r?\n/).find((l) => l.trim() && !l.trim().startsWith('#')) ?? '';
  if (/\.csv$/i.test(fileName) || first.includes(',')) return 'csv';
  return 'text';
}

interface RawTable {
  names: string[];
  /** Declared units by column name (ECSV). */
  units: Record<string, string>;
  rows: { line: number; cells: string[] }[];
}

function splitCsvLine(line: string): string[] {
  return line.split(',').map((c) => c.trim().replace(/^"(.*)"$/, '$1'));
}

const isNumberLike = (s: string) => s !== '' && Number.isFinite(Number(s));

function readEcsv(lines: string[], where: string): RawTable {
  if (!lines.some((l) => /^#\s*%ECSV/.test(l))) throw new CurveFileError(`${where}: an ECSV file must start with "# %ECSV".`, 1);
  const units: Record<string, string> = {};
  const declared: string[] = [];
  let delimiter = ' ';
  let i = 0;
  for (; i < lines.length; i++) {
    const l = lines[i];
    if (!l.startsWith('#')) break;
    const col = /^#\s*-\s*\{\s*name:\s*([^,}]+?)\s*(?:,|\})(.*)$/.exec(l);
    if (col) {
      const name = col[1].replace(/^['"]|['"]$/g, '');
      declared.push(name);
      const unit = /unit:\s*([^,}]+)/.exec(col[2]);
      if (unit) units[name] = unit[1].trim().replace(/^['"]|['"]$/g, '');
    }
    const d = /^#\s*delimiter:\s*['"]?(.)['"]?\s*$/.exec(l);
    if (d) delimiter = d[1];
  }
  while (i < lines.length && !lines[i].trim()) i++;
  if (i >= lines.length) throw new CurveFileError(`${where}: the ECSV header is not followed by a row of column names.`, lines.length);
  const split = (l: string) => (delimiter === ',' ? splitCsvLine(l) : l.trim().split(/\s+/));
  const names = split(lines[i]);
  if (declared.length && names.join(' ') !== declared.join(' ')) {
    throw new CurveFileError(`${where}, line ${i + 1}: the column names (${names.join(', ')}) differ from the ECSV header (${declared.join(', ')}).`, i + 1);
  }
  const rows: RawTable['rows'] = [];
  for (let j = i + 1; j < lines.length; j++) {
    const t = lines[j].trim();
    if (!t || t.startsWith('#')) continue;
    rows.push({ line: j + 1, cells: split(t) });
  }
  return { names, units, rows };
}

function readDelimited(lines: string[], csv: boolean): RawTable {
  const rows: RawTable['rows'] = [];
  let names: string[] | null = null;
  for (let j = 0; j < lines.length; j++) {
    const t = lines[j].trim();
    if (!t || t.startsWith('#') || t.startsWith('!') || t.startsWith('%')) continue;
    const cells = csv ? splitCsvLine(t) : t.split(/[\s,;]+/);
    if (names === null && rows.length === 0 && !cells.slice(0, 2).every(isNumberLike)) {
      names = cells;
      continue;
    }
    rows.push({ line: j + 1, cells });
  }
  const width = Math.max(2, ...rows.slice(0, 1).map((r) => r.cells.length));
  return { names: names ?? Array.from({ length: width }, (_, k) => `column ${k + 1}`), units: {}, rows };
}

/** Which columns hold the wavelength and the response (by name when the names say so, else the first two). */
function pickColumns(t: RawTable, where: string): { w: number; r: number } {
  const lower = t.names.map((n) => n.toLowerCase());
  let w = lower.findIndex((n) => /^(wave|wavelength|lambda|wl|lam)/.test(n));
  let r = lower.findIndex((n, k) => k !== w && /(resp|trans|throughput|thru|filter|qe|eff|^s$|^r$|^t$)/.test(n));
  if (w < 0) w = 0;
  if (r < 0) r = w === 0 ? 1 : 0;
  if (t.names.length < 2) throw new CurveFileError(`${where}: a curve needs two columns, a wavelength and a response; found only "${t.names[0]}".`, 1);
  return { w, r };
}

/**
 * Reads, converts and checks a curve file. Throws CurveFileError naming the file, line and column
 * for: unreadable numbers, fewer than two columns or rows, wavelengths ≤ 0, wavelengths that do not
 * ascend (a strictly descending file is turned round, with a note), negative responses, a response
 * that is zero everywhere, a unit that disagrees with the file's header, and a wavelength range
 * that makes no sense in the chosen unit.
 */
export function parseCurveFile(text: string, options: CurveFileOptions): ParsedCurve {
  const { fileName, wavelengthUnit, convention } = options;
  const where = fileName || 'curve file';
  if (!WAVELENGTH_UNITS.includes(wavelengthUnit)) {
    throw new CurveFileError(`${where}: wavelength unit must be one of Å, nm or µm (angstrom, nm, um); got "${String(wavelengthUnit)}".`);
  }
  if (convention !== 'photon' && convention !== 'energy') {
    throw new CurveFileError(`${where}: say whether the response is per photon or energy-type (got "${String(convention)}").`);
  }
  if (!text.trim()) throw new CurveFileError(`${where}: the file is empty.`);
  const lines = text.replace(/^\uFEFF/, '').split(/\r?\n/);
  const format = options.format ?? detectFormat(text, fileName);
  const table = format === 'ecsv' ? readEcsv(lines, where) : readDelimited(lines, format === 'csv');
  const { w: wi, r: ri } = pickColumns(table, where);
  const wName = table.names[wi];
  const rName = table.names[ri];
  const notes: string[] = [];

  const declaredUnit = table.units[wName];
  if (declaredUnit) {
    const known = UNIT_ALIASES[declaredUnit.toLowerCase()];
    if (!known) throw new CurveFileError(`${where}: the header gives column "${wName}" the unit "${declaredUnit}", which is not a wavelength unit Starkiln reads (Å, nm, µm).`);
    if (known !== wavelengthUnit) {
      throw new CurveFileError(
        `${where}: the header gives column "${wName}" in ${UNIT_LABEL[known]}, but ${UNIT_LABEL[wavelengthUnit]} was chosen. Choose ${UNIT_LABEL[known]} or fix the file.`,
        undefined,
        wName,
      );
    }
    notes.push(`The file's header also says the wavelength is in ${UNIT_LABEL[known]}.`);
  }

  if (table.rows.length < 2) throw new CurveFileError(`${where}: a curve needs at least two rows of numbers; found ${table.rows.length}.`);
  const scale = ANGSTROM_PER_UNIT[wavelengthUnit];
  const unit = UNIT_LABEL[wavelengthUnit];
  const wl: number[] = [];
  const resp: number[] = [];
  const lineOf: number[] = [];
  for (const row of table.rows) {
    const cell = (k: number, name: string) => {
      const s = row.cells[k];
      if (s === undefined || s === '') throw new CurveFileError(`${where}, line ${row.line}, column ${k + 1} (${name}): empty; every row needs a wavelength and a response.`, row.line, name);
      const v = Number(s);
      if (!Number.isFinite(v)) throw new CurveFileError(`${where}, line ${row.line}, column ${k + 1} (${name}): "${s}" is not a number.`, row.line, name);
      return v;
    };
    const w = cell(wi, wName);
    const r = cell(ri, rName);
    if (w <= 0) throw new CurveFileError(`${where}, line ${row.line}, column ${wi + 1} (${wName}): wavelength ${w} ${unit} must be above 0.`, row.line, wName);
    if (r < 0) throw new CurveFileError(`${where}, line ${row.line}, column ${ri + 1} (${rName}): response ${r} is negative; a passband lets through a fraction ≥ 0.`, row.line, rName);
    wl.push(w);
    resp.push(r);
    lineOf.push(row.line);
  }

  // A table printed from red to blue is still a curve; anything else out of order is an error.
  const descending = wl.every((v, k) => k === 0 || v < wl[k - 1]);
  if (descending) {
    wl.reverse();
    resp.reverse();
    lineOf.reverse();
    notes.push('The wavelengths descend in the file; the curve was turned round to ascend.');
  } else {
    for (let k = 1; k < wl.length; k++) {
      if (!(wl[k] > wl[k - 1])) {
        const what = wl[k] === wl[k - 1] ? 'repeats' : 'goes back from';
        throw new CurveFileError(
          `${where}, line ${lineOf[k]}, column ${wi + 1} (${wName}): wavelength ${wl[k]} ${unit} ${what} ${wl[k - 1]} ${unit} on line ${lineOf[k - 1]}; wavelengths must ascend.`,
          lineOf[k],
          wName,
        );
      }
    }
  }
  if (!resp.some((r) => r > 0)) {
    throw new CurveFileError(`${where}, column ${ri + 1} (${rName}): the response is zero on every row (lines ${lineOf[0]}–${lineOf[lineOf.length - 1]}); nothing would pass this band.`, undefined, rName);
  }

  // Plausibility of the unit: where the band lets light through, in Å.
  const first = resp.findIndex((r) => r > 0);
  const last = resp.length - 1 - [...resp].reverse().findIndex((r) => r > 0);
  const lo = wl[Math.max(0, first - 1)] * scale;
  const hi = wl[Math.min(wl.length - 1, last + 1)] * scale;
  const fmt = (aa: number) => `${Number((aa / scale).toPrecision(6))} ${unit} (${Number(aa.toPrecision(6))} Å)`;
  if (hi < MIN_PLAUSIBLE_ANGSTROM) {
    throw new CurveFileError(
      `${where}: read in ${unit}, the band would end at ${fmt(hi)}, below the Lyman limit (912 Å) where no stellar photometry is made. Is the wavelength unit right?`,
      undefined,
      wName,
    );
  }
  if (lo < MIN_PLAUSIBLE_ANGSTROM) {
    throw new CurveFileError(`${where}: read in ${unit}, the band would start at ${fmt(lo)}, below the Lyman limit (912 Å). Is the wavelength unit right?`, undefined, wName);
  }
  if (hi > MAX_PLAUSIBLE_ANGSTROM) {
    throw new CurveFileError(`${where}: read in ${unit}, the band would reach ${fmt(hi)}, beyond 1 mm. Is the wavelength unit right?`, undefined, wName);
  }
  if (hi / lo > MAX_PLAUSIBLE_SPAN) {
    throw new CurveFileError(
      `${where}: the response is above zero from ${fmt(lo)} to ${fmt(hi)}, a factor ${(hi / lo).toFixed(0)} in wavelength; no single passband is that wide. Check the columns and the unit.`,
      undefined,
      wName,
    );
  }

  const wavelengthAngstrom = wl.map((v) => v * scale);
  const curve = { wavelengthAngstrom, response: resp, convention, key: fileName };
  try {
    validateCurve(curve);
  } catch (err) {
    throw new CurveFileError(`${where}: ${err instanceof Error ? err.message : String(err)}`);
  }
  return {
    fileName,
    format,
    wavelengthColumn: wName,
    responseColumn: rName,
    wavelengthUnit,
    convention,
    wavelengthAngstrom,
    response: resp,
    pivotAngstrom: pivotWavelength(curve),
    notes,
  };
}
