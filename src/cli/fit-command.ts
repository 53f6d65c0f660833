// `starkiln fit`: read a photometry table the way the web intake reads an upload (format from the
// content, column mapping detected from the names, quality rules), fit every good star with the same
// core the worker uses, and write the catalogue atomically (temporary file, then rename) with its
// provenance.
import { createHash } from 'node:crypto';
import { closeSync, fsyncSync, openSync, readFileSync, renameSync, rmSync, statSync, writeSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { STARTER_BAND_KEYS, getBand, starterBandLibrary } from '../core/bands';
import {
  catalogueCsvHeader,
  catalogueCsvLine,
  catalogueRow,
  CATALOGUE_COLUMNS,
  FIT_DETAIL_COLUMNS,
  fitDetailJson,
  fitDetailRow,
  provenanceCsvHeader,
  provenanceLines,
  type CatalogueRow,
  type Provenance,
} from '../core/catalogue';
import { ecsvColumns, ecsvHeader, ecsvLine } from '../core/ecsv';
import { extrapolatedBandKeys } from '../core/extinction';
import { measurementToBandFlux } from '../core/photometry';
import { fitStar, prepareFitModel, type FitFailure, type FitResult } from '../core/fit';
import { applyMapping, closestBandKey, type ColumnTable, type MappedStar, type MappingProblem } from '../core/input/mapping';
import { FORMAT_LABELS, readUpload, UnreadableFile, type ReadUpload } from '../core/input/table-file';
import type { SurveyRules } from '../core/input/survey-rules';
import { limitsFromEnv, ReadBudget, type InputLimits } from '../core/input/limits';
import type { BandFlux } from '../core/types';
import { UsageError, type FitCommandArgs } from './args';
import { describeMapping, mappingFileJson, resolveMapping } from './column-mapping';
import { Progress } from './progress';

export interface Io {
  stdout: NodeJS.WritableStream & { isTTY?: boolean };
  stderr: NodeJS.WritableStream & { isTTY?: boolean; columns?: number };
  now: () => Date;
  /** Where the command's settings (INPUT_MAX_*) come from: the process environment, read by main. */
  env: Readonly<Record<string, string | undefined>>;
}

const MAX_PROBLEMS_SHOWN = 200;

/** The CLI's columns: the catalogue's, then what went into each fit (residuals, exclusions, covariance, distance). */
export const CLI_COLUMNS = [...CATALOGUE_COLUMNS, ...FIT_DETAIL_COLUMNS];

export function softwareVersion(): string {
  const pkg = JSON.parse(readFileSync(fileURLToPath(new URL('../../package.json', import.meta.url)), 'utf8')) as { version: string };
  return pkg.version;
}

/** Writes text to path through a temporary file in the same folder and a rename, so readers never see half a file. */
export function writeFileAtomic(target: string, chunks: Iterable<string>): void {
  const dir = path.dirname(path.resolve(target));
  const tmp = path.join(dir, `.${path.basename(target)}.${process.pid}.${Date.now().toString(36)}.tmp`);
  let fd: number | null = null;
  try {
    fd = openSync(tmp, 'wx', 0o644);
    let buffer = '';
    for (const chunk of chunks) {
      buffer += chunk;
      if (buffer.length > 1 << 20) {
        writeSync(fd, buffer);
        buffer = '';
      }
    }
    if (buffer) writeSync(fd, buffer);
    fsyncSync(fd);
    closeSync(fd);
    fd = null;
    renameSync(tmp, target);
  } catch (e) {
    if (fd !== null) closeSync(fd);
    rmSync(tmp, { force: true });
    throw e;
  }
}

function* csvChunks(provenance: Provenance, rows: CatalogueRow[]): Generator<string> {
  yield provenanceCsvHeader(provenance, CLI_COLUMNS);
  yield catalogueCsvHeader(CLI_COLUMNS) + '\n';
  let block = '';
  for (let i = 0; i < rows.length; i++) {
    block += catalogueCsvLine(rows[i], CLI_COLUMNS) + '\n';
    if ((i & 1023) === 1023) {
      yield block;
      block = '';
    }
  }
  if (block) yield block;
}

function* ecsvChunks(provenance: Provenance, rows: CatalogueRow[]): Generator<string> {
  const columns = ecsvColumns(CLI_COLUMNS);
  yield ecsvHeader(columns, { provenance, comments: provenanceLines(provenance, CLI_COLUMNS) });
  let block = '';
  for (let i = 0; i < rows.length; i++) {
    block += ecsvLine(rows[i], columns);
    if ((i & 1023) === 1023) {
      yield block;
      block = '';
    }
  }
  if (block) yield block;
}

function* jsonChunks(provenance: Provenance, rows: CatalogueRow[], details: Record<string, unknown>[]): Generator<string> {
  yield '{\n"provenance": ' + JSON.stringify({ ...provenance, text: provenanceLines(provenance, CLI_COLUMNS) }, null, 1) + ',\n';
  yield '"columns": ' + JSON.stringify(CLI_COLUMNS) + ',\n"rows": [\n';
  const finite = (_k: string, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? null : v);
  for (let i = 0; i < rows.length; i++) {
    yield JSON.stringify({ ...rows[i], detail: details[i] }, finite) + (i + 1 < rows.length ? ',\n' : '\n');
  }
  yield ']\n}\n';
}

/**
 * Like a compiler, so editors can jump to it: `file:line:column: message`. Text files give the
 * file line; VOTable and FITS tables give the table row instead; header problems give no line.
 */
export function formatProblem(p: MappingProblem): string {
  const line = p.line ?? p.row;
  const where = p.row === 0 && p.line === undefined ? (p.column ? `${p.file}:${p.column.name}` : p.file) : `${p.file}:${line}${p.column ? `:${p.column.number}` : ''}`;
  return `${where}: ${p.severity === 'warning' ? 'warning: ' : ''}${p.message}`;
}

interface Converted {
  fluxes: BandFlux[];
  problems: MappingProblem[];
}

/** Measurements → band fluxes; a measurement the band library cannot convert is an input error of that star. */
function convertStar(star: MappedStar, table: ColumnTable, excluded: Set<string>): Converted {
  const library = starterBandLibrary();
  const fluxes: BandFlux[] = [];
  const problems: MappingProblem[] = [];
  for (const m of star.measurements) {
    if (excluded.has(m.bandKey)) continue;
    const band = getBand(library, m.bandKey)!;
    try {
      fluxes.push(measurementToBandFlux(band, m));
    } catch (e) {
      problems.push({ file: table.file, row: star.row, line: table.lines?.[star.row - 1], severity: 'error', message: `row ${star.row} (star ${star.id}): ${(e as Error).message}; the star was left out (or leave the band out with --exclude ${m.bandKey})` });
    }
  }
  return { fluxes, problems };
}

/** The survey rules the command line sets (undefined: none, the mapping file's or the defaults apply). */
function surveyChoices(args: FitCommandArgs): SurveyRules | undefined {
  const survey: SurveyRules = {
    ...(args.brightLimits !== 'catalogue' ? { brightLimits: args.brightLimits } : {}),
    ...(Object.keys(args.brightLimitMag).length ? { brightLimitMag: args.brightLimitMag } : {}),
    ...(!args.catalogueFlags ? { catalogueFlags: false } : {}),
    ...(!args.nativeUpperLimits ? { nativeUpperLimits: false } : {}),
    ...(args.parallaxOrigin ? { parallaxOrigin: args.parallaxOrigin } : {}),
  };
  return Object.keys(survey).length ? survey : undefined;
}

/** Provenance notes on what the input rules did (counts; the per-star reasons are in each fit). */
function inputNotes(t: { excludedByQuality: number; leftOutBySurveyRules: number; nativeUpperLimits: number; possibleCompanions: number }): string[] | undefined {
  const notes: string[] = [];
  if (t.excludedByQuality > 0) notes.push(`${t.excludedByQuality} band values were left out by the quality rules`);
  if (t.leftOutBySurveyRules > 0) notes.push(`${t.leftOutBySurveyRules} band values were left out by the survey rules (saturation, catalogue flags, BP/RP excess)`);
  if (t.nativeUpperLimits > 0) notes.push(`${t.nativeUpperLimits} band values are upper limits by the catalogue's own convention (2MASS U, AllWISE null error)`);
  if (t.possibleCompanions > 0) notes.push(`${t.possibleCompanions} stars flagged possible_companion (Gaia RUWE above 1.4)`);
  return notes.length ? notes : undefined;
}

export async function runFit(args: FitCommandArgs, io: Io): Promise<number> {
  const started = performance.now();
  const library = starterBandLibrary();
  const bandKeys = Object.keys(library.bands).length ? Object.keys(library.bands) : [...STARTER_BAND_KEYS];
  for (const key of [...args.excludeBands, ...Object.keys(args.brightLimitMag)]) {
    if (!getBand(library, key)) {
      const guess = closestBandKey(key, bandKeys);
      throw new UsageError(`--exclude: unknown band "${key}"${guess ? `; did you mean '${guess}'?` : ''} (band keys: ${bandKeys.join(' ')})`);
    }
  }
  // The same limits as the web intake, from the same settings (INPUT_MAX_*).
  let limits: InputLimits;
  try {
    limits = limitsFromEnv(io.env);
  } catch (e) {
    io.stderr.write(`starkiln: ${(e as Error).message}\n`);
    return 2;
  }
  let bytes: Uint8Array;
  try {
    // Refused by its size before it is read into memory.
    new ReadBudget(args.input, limits).bytes(statSync(args.input).size);
    bytes = new Uint8Array(readFileSync(args.input));
  } catch (e) {
    if (e instanceof UnreadableFile) io.stderr.write(`starkiln: ${e.message}\n`);
    else io.stderr.write(`starkiln: cannot read ${args.input}: ${(e as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (e as Error).message}\n`);
    return 1;
  }
  const sha256 = createHash('sha256').update(bytes).digest('hex');
  let read: ReadUpload;
  try {
    read = readUpload(bytes, args.input, undefined, { hdu: args.hdu, limits });
  } catch (e) {
    if (!(e instanceof UnreadableFile)) throw e;
    io.stderr.write(`starkiln: ${e.message}\n`);
    return 1;
  }
  if (read.format === 'fits-image') {
    io.stderr.write(`starkiln: ${args.input} is a FITS image, not a table: its header describes one observation (filter ${read.observation.filter ?? 'unknown'}); put the star's measured magnitudes in a table to fit them\n`);
    return 1;
  }
  const columnTable = read.table;
  const formatLabel = FORMAT_LABELS[read.format];
  const resolved = resolveMapping(columnTable, library, {
    mappingFile: args.mappingFile,
    columnMap: args.columnMap,
    qualityKeep: args.qualityKeep,
    noQualityRules: args.noQualityRules,
    excludeBands: args.excludeBands,
    survey: surveyChoices(args),
  });
  if (args.showMapping) io.stderr.write(describeMapping(resolved, columnTable, formatLabel));
  const table = applyMapping(columnTable, resolved.mapping, resolved.rules, { bandKeys });
  const problems: MappingProblem[] = [...resolved.warnings, ...table.problems];
  // A mistake in the mapping itself (no id column, two columns for one thing …) concerns every row:
  // stop before fitting and writing anything.
  const mappingErrors = table.problems.filter((p) => p.row === 0 && p.severity === 'error');
  if (mappingErrors.length > 0) {
    for (const p of problems) io.stderr.write(formatProblem(p) + '\n');
    io.stderr.write(`starkiln: the column mapping cannot be used, nothing was written; see it with --show-mapping and correct it with --columns (or --mapping <file>)\n`);
    return 1;
  }
  if (args.saveMappingFile) {
    try {
      writeFileAtomic(args.saveMappingFile, [mappingFileJson(resolved, path.basename(args.input))]);
    } catch (e) {
      io.stderr.write(`starkiln: cannot write ${args.saveMappingFile}: ${(e as Error).message}\n`);
      return 1;
    }
  }
  const usedBandKeys = [...new Set(Object.values(resolved.mapping.columns).flatMap((a) => (a.band && a.role !== 'ignore' ? [a.band] : [])))];

  const model = prepareFitModel(library, {
    law: args.law,
    rv: args.rv,
    avMag: args.avMag,
    fitAv: args.fitAv,
    floorFraction: args.floorFraction,
    excludeBands: args.excludeBands,
    clip: args.clip,
    reject: args.reject,
    includeLongBands: args.includeLongBands,
    planckOnly: args.planckOnly,
    lumClass: args.lumClass,
    gaiaParallaxZeroPointMas: args.gaiaParallaxZeroPointMas,
  });
  const excluded = new Set(args.excludeBands);
  const progress = new Progress(io.stderr, table.stars.length, !args.quiet && io.stderr.isTTY === true && table.stars.length >= 2000);
  const rows: CatalogueRow[] = [];
  const details: Record<string, unknown>[] = [];
  let starsLeftOut = 0;
  const failures: Record<string, number> = {};
  for (let i = 0; i < table.stars.length; i++) {
    const star = table.stars[i];
    const { fluxes, problems: conv } = convertStar(star, columnTable, excluded);
    if (conv.length > 0) {
      problems.push(...conv);
      starsLeftOut++;
      continue;
    }
    const result: FitResult | FitFailure = fitStar(model, {
      id: star.id,
      bandFluxes: fluxes,
      parallaxMas: star.parallaxMas,
      parallaxErrMas: star.parallaxErrMas,
      avMag: star.avMag,
      lumClass: star.lumClass ?? null,
      fehDex: star.fehDex ?? null,
      parallaxOrigin: star.parallaxOrigin ?? null,
      distancePc: star.distancePc ?? null,
      distanceLoPc: star.distanceLoPc ?? null,
      distanceHiPc: star.distanceHiPc ?? null,
      possibleCompanion: star.possibleCompanion === true,
      leftOut: star.leftOut,
    });
    if (!result.ok) failures[result.reason] = (failures[result.reason] ?? 0) + 1;
    const distance = star.parallaxMas !== undefined && star.parallaxMas > 0 ? { pc: 1000 / star.parallaxMas, source: 'parallax' } : null;
    const limits = new Set(fluxes.filter((f) => f.upperLimit).map((f) => f.bandKey));
    rows.push({ ...catalogueRow({ id: star.id, raDeg: star.raDeg, decDeg: star.decDeg, result }), ...fitDetailRow(result, distance, limits) });
    if (args.format === 'json') details.push(fitDetailJson(result, distance));
    if ((i & 255) === 0) progress.update(i);
  }
  progress.done();

  const errors = problems.filter((p) => p.severity === 'error');
  const shown = problems.slice(0, MAX_PROBLEMS_SHOWN);
  for (const p of shown) io.stderr.write(formatProblem(p) + '\n');
  if (problems.length > shown.length) io.stderr.write(`… and ${problems.length - shown.length} more problems\n`);

  const provenance: Provenance = {
    software: { name: 'Starkiln', version: softwareVersion() },
    bandLibraryVersion: library.version,
    law: args.law,
    rv: args.rv,
    options: {
      av_default_mag: args.avMag,
      fit_av: args.fitAv,
      floor_fraction: args.floorFraction,
      exclude: args.excludeBands,
      clip: args.clip,
      reject: args.reject && !args.planckOnly,
      include_long: args.includeLongBands,
      planck_only: args.planckOnly,
      lum_class: args.lumClass,
      mapping: `${resolved.origin}${args.columnMap ? ', with --columns' : ''}`,
      columns: Object.entries(resolved.mapping.columns)
        .filter(([, a]) => a.role !== 'ignore')
        .map(([c, a]) => `${c}=${a.role === 'quality' ? `quality:${(a.bands ?? []).join('/')}` : a.band ? `${a.band}:${a.role}` : a.role}`),
      quality_rules: resolved.rules.quality.map((q) => `${q.column} keep ${q.keep.join('')}`),
      bright_limits: resolved.rules.survey?.brightLimits ?? 'catalogue',
      ...(resolved.rules.survey?.brightLimitMag ? { bright_limit_mag: Object.entries(resolved.rules.survey.brightLimitMag).map(([k, m]) => `${k}=${m}`) } : {}),
      catalogue_flags: resolved.rules.survey?.catalogueFlags !== false,
      native_upper_limits: resolved.rules.survey?.nativeUpperLimits !== false,
      gaia_parallax_zero_point_mas: args.gaiaParallaxZeroPointMas,
    },
    notes: inputNotes(table),
    createdAt: io.now().toISOString(),
    input: { file: path.basename(args.input), sha256, format: `${formatLabel}, ${resolved.mapping.layout} layout`, rows: table.rowCount, stars: table.stars.length, rejectedRows: table.rejectedRows + starsLeftOut },
    photosphere: model.photosphere && !args.planckOnly ? `${model.photosphere.data.name} ${model.photosphere.version}` : null,
    extrapolatedBands: extrapolatedBandKeys(
      usedBandKeys.map((k) => getBand(library, k)!).filter((b) => b !== null),
      args.law,
    ),
  };
  const chunks = args.format === 'json' ? jsonChunks(provenance, rows, details) : args.format === 'ecsv' ? ecsvChunks(provenance, rows) : csvChunks(provenance, rows);
  if (args.output === '-') {
    for (const c of chunks) io.stdout.write(c);
  } else {
    try {
      writeFileAtomic(args.output, chunks);
    } catch (e) {
      io.stderr.write(`starkiln: cannot write ${args.output}: ${(e as Error).message}\n`);
      return 1;
    }
  }
  const rejected = table.rejectedRows + starsLeftOut;
  if (!args.quiet) {
    const seconds = ((performance.now() - started) / 1000).toFixed(1);
    const failText = Object.entries(failures)
      .map(([k, n]) => `${k} ${n}`)
      .join(', ');
    const fitted = rows.length - Object.values(failures).reduce((a, b) => a + b, 0);
    io.stderr.write(
      `starkiln: ${fitted} star${fitted === 1 ? '' : 's'} fitted` +
        (failText ? `, ${rows.length - fitted} not fitted (${failText})` : '') +
        `, ${rejected} input row${rejected === 1 ? '' : 's'} left out` +
        (table.excludedByQuality > 0 ? `, ${table.excludedByQuality} band value${table.excludedByQuality === 1 ? '' : 's'} left out by quality rules` : '') +
        (table.leftOutBySurveyRules > 0 ? `, ${table.leftOutBySurveyRules} by survey rules` : '') +
        (table.nativeUpperLimits > 0 ? `, ${table.nativeUpperLimits} read as upper limits` : '') +
        `, ${errors.length} error${errors.length === 1 ? '' : 's'} and ${problems.length - errors.length} warning${problems.length - errors.length === 1 ? '' : 's'} in the input` +
        (problems.length > 0 ? ` (positions are file:line:column; for VOTable and FITS the table row)` : '') +
        `; wrote ${args.output === '-' ? 'stdout' : args.output} in ${seconds} s\n`,
    );
  }
  return rejected > 0 || errors.length > 0 ? 2 : 0;
}
