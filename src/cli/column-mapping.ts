// Which column means what, for `starkiln fit`: the intake's own detection (core/input/mapping
// detectMapping) or a mapping saved from the app, then the command line's overrides (--columns,
// --quality, --no-quality-rules). The rows themselves go through core/input/mapping applyMapping, the
// same path as the web intake, so a file maps the same way in both.
import { readFileSync } from 'node:fs';
import { getBand, type BandLibrary } from '../core/bands';
import { measurementToBandFlux } from '../core/photometry';
import {
  BAND_ROLES,
  COLUMN_ROLES,
  detectMapping,
  mistypedBandColumn,
  ROLE_LABELS,
  type ColumnAssignment,
  type ColumnRole,
  type ColumnTable,
  type Mapping,
  type MappingProblem,
  type MappingRules,
} from '../core/input/mapping';
import type { ParallaxOrigin, SurveyRules } from '../core/input/survey-rules';
import { UsageError } from './args';

/** Rows the detection looks at to tell numbers from text and to count quality letters (the intake uses 50 too). */
export const SAMPLE_ROWS = 50;

export interface ResolvedMapping {
  mapping: Mapping;
  rules: MappingRules;
  /** Where the mapping came from: 'detected from the column names' or the preset file. */
  origin: string;
  /** Detection's remarks per column (e.g. why a second id-like column was not used). */
  notes: Record<string, string>;
  /** Changes the CLI made on its own (a band it cannot convert), reported as warnings. */
  warnings: MappingProblem[];
}

export interface MappingChoices {
  mappingFile?: string;
  columnMap?: Record<string, string>;
  qualityKeep: { column: string; letters: string[] }[];
  noQualityRules: boolean;
  excludeBands: string[];
  /** The survey rules from the command line (absent: the mapping file's, else the defaults). */
  survey?: SurveyRules;
}

const SINGLE_ROLES: ColumnRole[] = ['id', 'ra', 'dec', 'parallax', 'parallax_err', 'av', 'band', 'ul'];
const VALUE_ROLES: ColumnRole[] = ['mag', 'jy', 'gaia_flux', 'mag_ul', 'jy_ul'];
const ERROR_OF: Partial<Record<ColumnRole, ColumnRole>> = { mag: 'mag_err', jy: 'jy_err', gaia_flux: 'gaia_flux_err' };

function isRecord(x: unknown): x is Record<string, unknown> {
  return typeof x === 'object' && x !== null && !Array.isArray(x);
}

/**
 * A mapping file: a preset as the app shows and saves it ({ name?, mapping, rules }) or a bare
 * mapping ({ layout, columns }). Checked for shape here; what it says about the file's columns is
 * checked by applyMapping like any mapping from the intake.
 */
export function readMappingFile(file: string): { mapping: Mapping; rules: MappingRules } {
  let raw: unknown;
  try {
    raw = JSON.parse(readFileSync(file, 'utf8'));
  } catch (e) {
    const err = e as NodeJS.ErrnoException;
    throw new UsageError(`--mapping: cannot read ${file}: ${err.code === 'ENOENT' ? 'no such file' : err.message}`);
  }
  const bad = (what: string) => new UsageError(`--mapping: ${file}: ${what}`);
  const holder = isRecord(raw) && isRecord(raw.mapping) ? raw : { mapping: raw, rules: undefined };
  const m = holder.mapping;
  if (!isRecord(m) || (m.layout !== 'wide' && m.layout !== 'long') || !isRecord(m.columns)) {
    throw bad('expected a saved mapping: {"mapping": {"layout": "wide" or "long", "columns": {…}}, "rules": {"quality": […]}}');
  }
  const columns: Record<string, ColumnAssignment> = {};
  for (const [name, a] of Object.entries(m.columns)) {
    if (!isRecord(a) || typeof a.role !== 'string' || !COLUMN_ROLES.includes(a.role as ColumnRole)) {
      throw bad(`column "${name}": role must be one of ${COLUMN_ROLES.join(', ')}`);
    }
    if (a.band !== undefined && typeof a.band !== 'string') throw bad(`column "${name}": band must be a band key`);
    if (a.bands !== undefined && !(Array.isArray(a.bands) && a.bands.every((b) => typeof b === 'string'))) throw bad(`column "${name}": bands must be a list of band keys`);
    if (a.origin !== undefined && !PARALLAX_ORIGINS.includes(a.origin as ParallaxOrigin)) throw bad(`column "${name}": origin must be one of ${PARALLAX_ORIGINS.join(', ')}`);
    columns[name] = {
      role: a.role as ColumnRole,
      ...(a.band !== undefined ? { band: a.band as string } : {}),
      ...(a.bands !== undefined ? { bands: a.bands as string[] } : {}),
      ...(a.origin !== undefined ? { origin: a.origin as ParallaxOrigin } : {}),
    };
  }
  const quality: MappingRules['quality'] = [];
  const r = holder.rules;
  if (r !== undefined && r !== null) {
    if (!isRecord(r) || (r.quality !== undefined && !Array.isArray(r.quality))) throw bad('rules must be {"quality": [{"column": …, "keep": ["A", "B"]}]}');
    for (const q of (r.quality as unknown[] | undefined) ?? []) {
      if (!isRecord(q) || typeof q.column !== 'string' || !Array.isArray(q.keep) || !q.keep.every((k) => typeof k === 'string')) {
        throw bad('each quality rule needs a column name and the letters to keep, e.g. {"column": "ph_qual", "keep": ["A", "B"]}');
      }
      quality.push({ column: q.column, keep: q.keep as string[] });
    }
  }
  let survey: SurveyRules | undefined;
  if (isRecord(r) && r.survey !== undefined) {
    const sv = r.survey;
    const ok =
      isRecord(sv) &&
      (sv.brightLimits === undefined || ['catalogue', 'all', 'off'].includes(sv.brightLimits as string)) &&
      (sv.brightLimitMag === undefined || (isRecord(sv.brightLimitMag) && Object.values(sv.brightLimitMag).every((x) => typeof x === 'number' && Number.isFinite(x)))) &&
      (sv.catalogueFlags === undefined || typeof sv.catalogueFlags === 'boolean') &&
      (sv.nativeUpperLimits === undefined || typeof sv.nativeUpperLimits === 'boolean') &&
      (sv.parallaxOrigin === undefined || PARALLAX_ORIGINS.includes(sv.parallaxOrigin as ParallaxOrigin));
    if (!ok) throw bad('rules.survey must be {"brightLimits": "catalogue"|"all"|"off", "brightLimitMag": {"W1": 7.5}, "catalogueFlags": true, "nativeUpperLimits": true, "parallaxOrigin": "gaia_dr3"|"hipparcos"|"other"}');
    survey = sv as SurveyRules;
  }
  return { mapping: { layout: m.layout, columns }, rules: { quality, ...(survey ? { survey } : {}) } };
}

const PARALLAX_ORIGINS: readonly ParallaxOrigin[] = ['gaia_dr3', 'hipparcos', 'other'];

/** The preset shape the app saves, so `--save-mapping` output loads in both places. */
export function mappingFileJson(resolved: ResolvedMapping, name: string): string {
  const columns = Object.fromEntries(Object.entries(resolved.mapping.columns).filter(([, a]) => a.role !== 'ignore'));
  return JSON.stringify({ name, mapping: { layout: resolved.mapping.layout, columns }, rules: resolved.rules }, null, 2) + '\n';
}

function columnValues(table: ColumnTable, name: string): ColumnTable['rows'][number] {
  const c = table.columns.indexOf(name);
  return table.rows.slice(0, SAMPLE_ROWS).map((r) => r[c]);
}

/** Frees whatever another column held that `a` now claims, so the mapping stays one column per meaning. */
function clearConflicts(mapping: Mapping, rules: MappingRules, target: string, a: ColumnAssignment): void {
  for (const [name, b] of Object.entries(mapping.columns)) {
    if (name === target || b.role === 'ignore') continue;
    const sameSingle = SINGLE_ROLES.includes(a.role) && b.role === a.role;
    const sameBand = a.band !== undefined && b.band === a.band && BAND_ROLES.includes(b.role);
    // A new value column for a band replaces the band's other value columns and their errors.
    const replaced = sameBand && VALUE_ROLES.includes(a.role) && (VALUE_ROLES.includes(b.role) || b.role !== ERROR_OF[a.role]);
    if (sameSingle || (sameBand && b.role === a.role) || replaced) mapping.columns[name] = { role: 'ignore' };
  }
  if (a.role !== 'quality') rules.quality = rules.quality.filter((q) => q.column !== target);
}

/** `--columns source=target`: target is any name the detection knows (canonical or catalogue-style), or '-'. */
function applyColumnOverrides(table: ColumnTable, bandKeys: readonly string[], resolved: ResolvedMapping, columnMap: Record<string, string>): void {
  for (const [source, target] of Object.entries(columnMap)) {
    if (!table.columns.includes(source)) {
      throw new UsageError(`--columns: ${table.file} has no column "${source}" (its columns: ${table.columns.join(', ')})`);
    }
    if (target === '-') {
      resolved.mapping.columns[source] = { role: 'ignore' };
      resolved.rules.quality = resolved.rules.quality.filter((q) => q.column !== source);
      continue;
    }
    const detected = detectMapping([target], columnValues(table, source).map((v) => [v]), bandKeys);
    const a = detected.columns[target];
    if (!a || a.role === 'ignore') {
      throw new UsageError(
        `--columns ${source}=${target}: "${target}" is not a name Starkiln recognises; use a canonical name (id, ra, dec, parallax_mas, parallax_err_mas, av, ` +
          `<band>, <band>_err, <band>_jy, <band>_jy_err, <band>_ul, <band>_jy_ul, quality) or a catalogue name such as Vmag, e_Vmag, j_m, phot_g_mean_flux`,
      );
    }
    clearConflicts(resolved.mapping, resolved.rules, source, a);
    resolved.mapping.columns[source] = a;
    if (a.role === 'quality' && !resolved.rules.quality.some((q) => q.column === source)) {
      resolved.rules.quality.push({ column: source, keep: detected.rules.quality[0]?.keep ?? ['A', 'B'] });
    }
  }
}

/** `--quality <column or 2mass or wise>=<letters>` → the quality column it means. */
function qualityColumn(mapping: Mapping, name: string): string {
  const quality = Object.entries(mapping.columns).filter(([, a]) => a.role === 'quality');
  const direct = quality.find(([n]) => n === name);
  if (direct) return direct[0];
  const lower = name.toLowerCase();
  const wanted = lower === '2mass' ? 'J' : lower === 'wise' || lower === 'allwise' ? 'W1' : null;
  const byBand = wanted ? quality.filter(([, a]) => a.bands?.includes(wanted)) : [];
  if (byBand.length === 1) return byBand[0][0];
  const list = quality.map(([n, a]) => `${n} (${(a.bands ?? []).join(' ')})`).join(', ');
  throw new UsageError(
    `--quality ${name}=…: ${quality.length === 0 ? 'the mapping has no quality-letter column' : `no quality column "${name}"; the mapping has ${list}`}` +
      ' (use a quality column\'s name, or 2mass or wise)',
  );
}

/**
 * A band whose magnitudes the band library cannot convert yet (no zero-point): its magnitude
 * columns are left out with one warning, rather than every star being refused for it. The worker
 * skips such a measurement the same way (src/server/fit-job.ts starBandFluxes).
 */
function dropUnconvertibleBands(library: BandLibrary, table: ColumnTable, resolved: ResolvedMapping, excluded: ReadonlySet<string>): void {
  const refused = new Map<string, string>();
  for (const [name, a] of Object.entries(resolved.mapping.columns)) {
    if (!a.band || !BAND_ROLES.includes(a.role)) continue;
    if (excluded.has(a.band)) {
      resolved.mapping.columns[name] = { role: 'ignore' };
      resolved.notes[name] = `not used: band ${a.band} is left out with --exclude`;
      continue;
    }
    if (!['mag', 'mag_ul', 'gaia_flux'].includes(a.role)) continue;
    const band = getBand(library, a.band);
    if (!band) continue;
    try {
      measurementToBandFlux(band, { bandKey: a.band, mag: 10, magErr: 0.01 });
    } catch (e) {
      refused.set(a.band, (e as Error).message);
    }
  }
  const dropped = new Map<string, string[]>();
  for (const [name, a] of Object.entries(resolved.mapping.columns)) {
    if (!a.band || !refused.has(a.band) || !['mag', 'mag_err', 'mag_ul', 'gaia_flux', 'gaia_flux_err'].includes(a.role)) continue;
    resolved.mapping.columns[name] = { role: 'ignore' };
    dropped.set(a.band, [...(dropped.get(a.band) ?? []), name]);
  }
  for (const [band, names] of dropped) {
    resolved.warnings.push({
      file: table.file,
      row: 0,
      column: { name: names[0], number: table.columns.indexOf(names[0]) + 1 },
      severity: 'warning',
      message: `column${names.length > 1 ? 's' : ''} ${names.join(', ')} (band ${band}) not used: ${refused.get(band)}`,
    });
  }
}

/**
 * Canonical wide pairs (`X` + `X_err`, `X_jy` + `X_jy_err`) that nothing reads because X is not a
 * band key (`W5`, `Y`, `Lp`): in the canonical layout the file means a band the library does not
 * have, and its data would vanish without a word. A warning naming the columns, not an error: the
 * rows still fit on their other bands, and a table may carry such pairs for other quantities. A key
 * in the wrong case ('KS') is already reported by the mapping check with what it most likely meant.
 */
function warnUnknownBandPairs(table: ColumnTable, resolved: ResolvedMapping, bandKeys: readonly string[]): void {
  if (resolved.mapping.layout !== 'wide') return;
  const ignored = new Set(table.columns.filter((c) => (resolved.mapping.columns[c]?.role ?? 'ignore') === 'ignore'));
  for (const name of table.columns) {
    const errName = `${name}_err`;
    if (!ignored.has(name) || !ignored.has(errName)) continue;
    const base = name.endsWith('_jy') ? name.slice(0, -3) : name;
    if (base === '' || bandKeys.includes(base) || mistypedBandColumn(name, bandKeys) || mistypedBandColumn(errName, bandKeys)) continue;
    resolved.warnings.push({
      file: table.file,
      row: 0,
      column: { name, number: table.columns.indexOf(name) + 1 },
      severity: 'warning',
      message: `unknown band column "${name}" (with ${errName}): "${base}" is not a band key (band keys are case-sensitive: ${bandKeys.join(' ')}); the columns were not read`,
    });
  }
}

export function resolveMapping(table: ColumnTable, library: BandLibrary, choices: MappingChoices): ResolvedMapping {
  const bandKeys = Object.keys(library.bands);
  let resolved: ResolvedMapping;
  if (choices.mappingFile) {
    const saved = readMappingFile(choices.mappingFile);
    const columns: Record<string, ColumnAssignment> = Object.fromEntries(table.columns.map((c) => [c, { role: 'ignore' } as ColumnAssignment]));
    resolved = { mapping: { layout: saved.mapping.layout, columns: { ...columns, ...saved.mapping.columns } }, rules: saved.rules, origin: `from ${choices.mappingFile}`, notes: {}, warnings: [] };
  } else {
    const d = detectMapping(table.columns, table.rows.slice(0, SAMPLE_ROWS), bandKeys);
    resolved = { mapping: { layout: d.layout, columns: d.columns }, rules: d.rules, origin: 'detected from the column names', notes: d.notes, warnings: [] };
  }
  if (choices.columnMap) applyColumnOverrides(table, bandKeys, resolved, choices.columnMap);
  if (choices.noQualityRules) resolved.rules.quality = [];
  for (const q of choices.qualityKeep) {
    const column = qualityColumn(resolved.mapping, q.column);
    resolved.rules.quality = [...resolved.rules.quality.filter((r) => r.column !== column), { column, keep: q.letters }];
  }
  if (choices.survey) resolved.rules.survey = { ...resolved.rules.survey, ...choices.survey };
  dropUnconvertibleBands(library, table, resolved, new Set(choices.excludeBands));
  warnUnknownBandPairs(table, resolved, bandKeys);
  return resolved;
}

/** The mapping as a person reads it: one line per used column, then the rules, notes and unused columns. */
export function describeMapping(resolved: ResolvedMapping, table: ColumnTable, formatLabel: string): string {
  const used = table.columns.filter((c) => (resolved.mapping.columns[c]?.role ?? 'ignore') !== 'ignore');
  const unused = table.columns.filter((c) => !used.includes(c));
  const width = Math.min(28, Math.max(8, ...used.map((c) => c.length)));
  const lines = [`column mapping for ${table.file} (${formatLabel}, ${resolved.mapping.layout} layout, ${table.rows.length} rows), ${resolved.origin}:`];
  for (const c of used) {
    const a = resolved.mapping.columns[c];
    const what = a.role === 'quality' ? `${ROLE_LABELS.quality} for ${(a.bands ?? []).join(' ')}` : a.band ? `${a.band} ${ROLE_LABELS[a.role]}` : ROLE_LABELS[a.role];
    lines.push(`  ${c.padEnd(width)}  ${what}${resolved.notes[c] ? `  (${resolved.notes[c]})` : ''}`);
  }
  if (resolved.rules.quality.length === 0) lines.push('  quality rules: none (every value is used whatever its quality letter)');
  for (const q of resolved.rules.quality) lines.push(`  quality rule: use a band's value only where its letter in ${q.column} is ${q.keep.join(' or ')}`);
  const sv = resolved.rules.survey ?? {};
  const mode = sv.brightLimits ?? 'catalogue';
  lines.push(
    `  bright limits: ${mode === 'off' ? 'off' : mode === 'all' ? 'on every magnitude column' : 'on columns named as the survey names them'}` +
      (sv.brightLimitMag && Object.keys(sv.brightLimitMag).length ? ` (set here: ${Object.entries(sv.brightLimitMag).map(([k, m]) => `${k} ${m}`).join(', ')})` : ''),
  );
  lines.push(`  catalogue flags (cc_flg, cc_flags, ext_flg, RUWE, BP/RP excess): ${sv.catalogueFlags === false ? 'not read' : 'read where present'}; native upper limits: ${sv.nativeUpperLimits === false ? 'off' : 'on'}`);
  const plx = Object.entries(resolved.mapping.columns).find(([, a]) => a.role === 'parallax');
  if (plx) lines.push(`  parallax ${plx[0]}: origin ${sv.parallaxOrigin ?? plx[1].origin ?? 'other'}`);
  for (const c of unused.filter((c) => resolved.notes[c])) lines.push(`  ${c}: ${resolved.notes[c]}`);
  if (unused.length) lines.push(`  not used: ${unused.join(', ')}`);
  return lines.join('\n') + '\n';
}
