// `starkiln fit`: read a photometry table, fit every good star with the same core the worker uses,
// and write the catalogue atomically (temporary file, then rename) with its provenance.
import { createHash } from 'node:crypto';
import { closeSync, fsyncSync, openSync, readFileSync, renameSync, rmSync, writeSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { STARTER_BAND_KEYS, getBand, starterBandLibrary } from '../core/bands';
import {
  catalogueCsvHeader,
  catalogueCsvLine,
  catalogueRow,
  CATALOGUE_COLUMNS,
  provenanceCsvHeader,
  provenanceLines,
  type CatalogueRow,
  type Provenance,
} from '../core/catalogue';
import { extrapolatedBandKeys } from '../core/extinction';
import { measurementToBandFlux } from '../core/photometry';
import { fitStar, prepareFitModel, type FitFailure, type FitResult } from '../core/fit';
import { closestBandKey, formatProblem, readPhotometryFile, type StarInput, type TableProblem } from '../core/tables';
import type { BandFlux } from '../core/types';
import { UsageError, type FitCommandArgs } from './args';
import { Progress } from './progress';

export interface Io {
  stdout: NodeJS.WritableStream & { isTTY?: boolean };
  stderr: NodeJS.WritableStream & { isTTY?: boolean; columns?: number };
  now: () => Date;
}

const MAX_PROBLEMS_SHOWN = 200;

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
  yield provenanceCsvHeader(provenance);
  yield catalogueCsvHeader() + '\n';
  let block = '';
  for (let i = 0; i < rows.length; i++) {
    block += catalogueCsvLine(rows[i]) + '\n';
    if ((i & 1023) === 1023) {
      yield block;
      block = '';
    }
  }
  if (block) yield block;
}

function* jsonChunks(provenance: Provenance, rows: CatalogueRow[]): Generator<string> {
  yield '{\n"provenance": ' + JSON.stringify({ ...provenance, text: provenanceLines(provenance) }, null, 1) + ',\n';
  yield '"columns": ' + JSON.stringify(CATALOGUE_COLUMNS) + ',\n"rows": [\n';
  for (let i = 0; i < rows.length; i++) {
    const clean: CatalogueRow = {};
    for (const [k, v] of Object.entries(rows[i])) clean[k] = typeof v === 'number' && !Number.isFinite(v) ? null : v;
    yield JSON.stringify(clean) + (i + 1 < rows.length ? ',\n' : '\n');
  }
  yield ']\n}\n';
}

interface Converted {
  fluxes: BandFlux[];
  problems: TableProblem[];
}

/** Measurements → band fluxes; a measurement the band library cannot convert is an input error of that star. */
function convertStar(star: StarInput, file: string, excluded: Set<string>): Converted {
  const library = starterBandLibrary();
  const fluxes: BandFlux[] = [];
  const problems: TableProblem[] = [];
  for (const m of star.measurements) {
    if (excluded.has(m.bandKey)) continue;
    const band = getBand(library, m.bandKey)!;
    try {
      fluxes.push(measurementToBandFlux(band, m));
    } catch (e) {
      problems.push({ file, row: star.row, line: star.line, severity: 'error', message: `data row ${star.row} (star ${star.id}): ${(e as Error).message}; the star was left out (or leave the band out with --exclude ${m.bandKey})` });
    }
  }
  return { fluxes, problems };
}

export async function runFit(args: FitCommandArgs, io: Io): Promise<number> {
  const started = performance.now();
  const library = starterBandLibrary();
  const bandKeys = Object.keys(library.bands).length ? Object.keys(library.bands) : [...STARTER_BAND_KEYS];
  for (const key of args.excludeBands) {
    if (!getBand(library, key)) {
      const guess = closestBandKey(key, bandKeys);
      throw new UsageError(`--exclude: unknown band "${key}"${guess ? `; did you mean '${guess}'?` : ''} (band keys: ${bandKeys.join(' ')})`);
    }
  }
  let bytes: Uint8Array;
  try {
    bytes = new Uint8Array(readFileSync(args.input));
  } catch (e) {
    io.stderr.write(`starkiln: cannot read ${args.input}: ${(e as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (e as Error).message}\n`);
    return 1;
  }
  const sha256 = createHash('sha256').update(bytes).digest('hex');
  const table = readPhotometryFile(bytes, { file: args.input, bandKeys, columnMap: args.columnMap, hdu: args.hdu });
  const problems: TableProblem[] = [...table.problems];

  const model = prepareFitModel(library, {
    law: args.law,
    rv: args.rv,
    avMag: args.avMag,
    fitAv: args.fitAv,
    floorFraction: args.floorFraction,
    excludeBands: args.excludeBands,
    clip: args.clip,
    includeLongBands: args.includeLongBands,
  });
  const excluded = new Set(args.excludeBands);
  const progress = new Progress(io.stderr, table.stars.length, !args.quiet && io.stderr.isTTY === true && table.stars.length >= 2000);
  const rows: CatalogueRow[] = [];
  let starsLeftOut = 0;
  const failures: Record<string, number> = {};
  for (let i = 0; i < table.stars.length; i++) {
    const star = table.stars[i];
    const { fluxes, problems: conv } = convertStar(star, args.input, excluded);
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
    });
    if (!result.ok) failures[result.reason] = (failures[result.reason] ?? 0) + 1;
    rows.push(catalogueRow({ id: star.id, raDeg: star.raDeg, decDeg: star.decDeg, result }));
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
      include_long: args.includeLongBands,
      ...(args.columnMap ? { columns: Object.entries(args.columnMap).map(([a, b]) => `${a}=${b}`) } : {}),
    },
    createdAt: io.now().toISOString(),
    input: { file: path.basename(args.input), sha256, format: table.kind === 'fits' ? 'FITS binary table' : `${table.format} ${table.delimiter === '\t' ? 'TSV' : 'CSV'}`, rows: table.rowCount, stars: table.stars.length, rejectedRows: table.rejectedRows + starsLeftOut },
    extrapolatedBands: extrapolatedBandKeys(
      table.bandKeys.map((k) => getBand(library, k)!).filter((b) => b !== null),
      args.law,
    ),
  };
  const chunks = args.format === 'json' ? jsonChunks(provenance, rows) : csvChunks(provenance, rows);
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
        `, ${rejected} input row${rejected === 1 ? '' : 's'} left out, ${errors.length} error${errors.length === 1 ? '' : 's'} and ${problems.length - errors.length} warning${problems.length - errors.length === 1 ? '' : 's'} in the input` +
        ` (positions are file:line:column, data rows counted from 1 after the header)` +
        `; wrote ${args.output === '-' ? 'stdout' : args.output} in ${seconds} s\n`,
    );
  }
  return rejected > 0 || errors.length > 0 ? 2 : 0;
}
