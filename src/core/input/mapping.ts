// Column mapping: which column of an input table holds the star id, position, parallax, A_V and
// each band's value, error or upper limit — detected from the column names (canonical names,
// catalogue-style names such as Vmag/e_Vmag, j_m/j_msigcom, w1mpro, phot_g_mean_flux), adjusted by
// the analyst, and then applied to every row with quality rules. One path for every input format:
// CSV/TSV, VOTable and FITS tables are all handed over as a `ColumnTable`.
// Pure: the intake (web), the worker and the CLI share it.
import type { Measurement } from '../types';

/** A cell as readers give it: text (CSV), numbers/booleans/null (FITS, VOTable). */
export type TableCell = string | number | bigint | boolean | null | undefined;

/** The in-memory table every reader produces. */
export interface ColumnTable {
  /** Name of the file, used in problems. */
  file: string;
  columns: string[];
  /** Units per column when the format carries them (FITS TUNIT, VOTable unit). */
  units?: (string | undefined)[];
  /** Data rows; rows[i] is data row i + 1 as a person counts it. */
  rows: TableCell[][];
  /** 1-based line of the file where each row starts (text formats); absent = rows are table rows. */
  lines?: number[];
}

/** What one column means. Band roles carry the band key (wide format). */
export type ColumnRole =
  | 'ignore'
  | 'id'
  | 'ra'
  | 'dec'
  | 'parallax'
  | 'parallax_err'
  | 'av'
  /** magnitude in the band's default system */
  | 'mag'
  | 'mag_err'
  /** band-mean F_ν in Jy */
  | 'jy'
  | 'jy_err'
  /** upper limit as a magnitude (the star is fainter) */
  | 'mag_ul'
  /** upper limit as a flux in Jy */
  | 'jy_ul'
  /** Gaia mean flux in e⁻/s, converted with the Gaia DR3 Vega zero-point */
  | 'gaia_flux'
  | 'gaia_flux_err'
  /** catalogue quality letters, one per band in `bands` (2MASS ph_qual: J H Ks) */
  | 'quality'
  /** long format: the column naming the band of each row */
  | 'band'
  /** long format: 1 = upper limit */
  | 'ul';

export const COLUMN_ROLES: readonly ColumnRole[] = [
  'ignore', 'id', 'ra', 'dec', 'parallax', 'parallax_err', 'av', 'mag', 'mag_err', 'jy', 'jy_err',
  'mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err', 'quality', 'band', 'ul',
];

/** Roles that belong to one band in the wide format. */
export const BAND_ROLES: readonly ColumnRole[] = ['mag', 'mag_err', 'jy', 'jy_err', 'mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err'];

/** Plain-word labels for the mapping screen. */
export const ROLE_LABELS: Record<ColumnRole, string> = {
  ignore: 'not used',
  id: 'star id',
  ra: 'right ascension (deg)',
  dec: 'declination (deg)',
  parallax: 'parallax (mas)',
  parallax_err: 'parallax error (mas)',
  av: 'A_V (mag)',
  mag: 'magnitude',
  mag_err: 'magnitude error',
  jy: 'flux (Jy)',
  jy_err: 'flux error (Jy)',
  mag_ul: 'upper limit (mag)',
  jy_ul: 'upper limit (Jy)',
  gaia_flux: 'Gaia flux (e⁻/s)',
  gaia_flux_err: 'Gaia flux error (e⁻/s)',
  quality: 'quality letters',
  band: 'band name (long format)',
  ul: 'upper-limit flag (long format)',
};

export interface ColumnAssignment {
  role: ColumnRole;
  /** Band key for band roles in the wide format. */
  band?: string;
  /** For 'quality': the band each letter belongs to, in order (one band = the whole cell). */
  bands?: string[];
}

export type TableLayout = 'wide' | 'long';

export interface Mapping {
  layout: TableLayout;
  /** By column name; a column not listed is not used. */
  columns: Record<string, ColumnAssignment>;
}

/** Keep a band's value only where the quality column's letter for it is one of `keep`. */
export interface QualityRule {
  column: string;
  keep: string[];
}

export interface MappingRules {
  quality: QualityRule[];
}

export interface MappingProblem {
  file: string;
  /** 1-based data row; 0 for the header or the whole file. */
  row: number;
  /** 1-based line of the file when the format has lines. */
  line?: number;
  column?: { name: string; number: number };
  severity: 'error' | 'warning';
  message: string;
}

export interface MappedStar {
  id: string;
  raDeg?: number;
  decDeg?: number;
  parallaxMas?: number;
  parallaxErrMas?: number;
  avMag?: number;
  measurements: (Measurement & { quality?: string })[];
  /** First data row of the star. */
  row: number;
}

export interface MappingResult {
  stars: MappedStar[];
  problems: MappingProblem[];
  rowCount: number;
  /** Rows left out because of an error in them (or in another row of the same star). */
  rejectedRows: number;
  /** Band values left out by a quality rule (not an error: the rule asked for it). */
  excludedByQuality: number;
  errorCount: number;
  warningCount: number;
}

/**
 * Gaia DR3 Vega zero-points (Riello et al. 2021, A&A 649, A3; quoted there rounded as 25.6874,
 * 25.3385, 24.7479): G = −2.5 log10(flux) + ZP with flux the mean flux in e⁻/s. These are the
 * unrounded values the Gaia archive uses (from memory; they reproduce the archive's own
 * phot_*_mean_mag to 1e-6 mag, see mapping.test.ts, where the rounded ones are 3e-5 mag off). The
 * band library then treats the result as a catalogue magnitude (for an AB band it adds the
 * ZP_AB − ZP_Vega offset it records).
 */
export const GAIA_VEGA_ZERO_POINT_MAG: Readonly<Record<string, number>> = { G: 25.6873668, BP: 25.3385422, RP: 24.7478955 };

/** 2.5 / ln 10: σ_m = 1.0857 σ_F / F (first-order error propagation, common practice). */
const MAG_PER_LN = 2.5 / Math.LN10;

// ---------------------------------------------------------------------------------------------
// Detection

interface Template {
  prefix: string;
  suffix: string;
  role: ColumnRole;
  /** Only for these band keys (catalogue-specific spellings). */
  onlyKeys?: readonly string[];
  /** The key part may differ in case even when another key differs only by case (Gaia 'phot_g_…'). */
  keyAnyCase?: boolean;
  /** Canonical names spell the key exactly (a column 'b' is galactic latitude, not Bessell B). */
  exactKey?: boolean;
  /** Lower = preferred when two columns claim the same band and role. */
  rank: number;
}

const GAIA_KEYS = ['G', 'BP', 'RP'] as const;

// Common spellings in exported catalogues (VizieR e_Xmag, 2MASS PSC j_m/j_msigcom, AllWISE w1mpro,
// Gaia archive phot_g_mean_flux) and Starkiln's canonical names (docs/science.md, "Interfaces").
const TEMPLATES: Template[] = [
  { prefix: '', suffix: '', role: 'mag', rank: 0, exactKey: true },
  { prefix: '', suffix: '_err', role: 'mag_err', rank: 0, exactKey: true },
  { prefix: '', suffix: '_jy', role: 'jy', rank: 0, exactKey: true },
  { prefix: '', suffix: '_jy_err', role: 'jy_err', rank: 0, exactKey: true },
  { prefix: '', suffix: '_ul', role: 'mag_ul', rank: 0, exactKey: true },
  { prefix: '', suffix: '_jy_ul', role: 'jy_ul', rank: 0, exactKey: true },
  { prefix: 'phot_', suffix: '_mean_flux', role: 'gaia_flux', onlyKeys: GAIA_KEYS, keyAnyCase: true, rank: 0 },
  { prefix: 'phot_', suffix: '_mean_flux_error', role: 'gaia_flux_err', onlyKeys: GAIA_KEYS, keyAnyCase: true, rank: 0 },
  { prefix: 'F', suffix: '', role: 'gaia_flux', onlyKeys: GAIA_KEYS, rank: 1 },
  { prefix: 'e_F', suffix: '', role: 'gaia_flux_err', onlyKeys: GAIA_KEYS, rank: 1 },
  { prefix: 'phot_', suffix: '_mean_mag', role: 'mag', onlyKeys: GAIA_KEYS, keyAnyCase: true, rank: 2 },
  { prefix: '', suffix: 'mag', role: 'mag', rank: 1 },
  { prefix: '', suffix: '_mag', role: 'mag', rank: 1 },
  { prefix: '', suffix: '_m', role: 'mag', rank: 1 },
  { prefix: '', suffix: 'mpro', role: 'mag', rank: 1 },
  { prefix: 'mag_', suffix: '', role: 'mag', rank: 2 },
  { prefix: 'e_', suffix: '', role: 'mag_err', rank: 1 },
  { prefix: 'e_', suffix: 'mag', role: 'mag_err', rank: 1 },
  { prefix: 'e_', suffix: '_mag', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: 'mag_err', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: '_mag_err', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: '_magerr', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: 'magerr', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: '_mag_error', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: '_error', role: 'mag_err', rank: 2 },
  { prefix: '', suffix: 'err', role: 'mag_err', rank: 2 },
  { prefix: 'err_', suffix: '', role: 'mag_err', rank: 2 },
  { prefix: 'sig_', suffix: '', role: 'mag_err', rank: 2 },
  { prefix: '', suffix: '_msigcom', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: '_cmsig', role: 'mag_err', rank: 2 },
  { prefix: '', suffix: 'mpro_error', role: 'mag_err', rank: 1 },
  { prefix: '', suffix: 'sigmpro', role: 'mag_err', rank: 1 },
  { prefix: 'e_', suffix: '_jy', role: 'jy_err', rank: 1 },
];

/** Other spellings of a band key in catalogues: 2MASS writes Ks as K (Kmag, k_m). */
const KEY_ALIASES: Record<string, string[]> = { Ks: ['K'] };

const STAR_NAMES: { role: ColumnRole; names: string[] }[] = [
  { role: 'id', names: ['id', 'star', 'star_id', 'starid', 'name', 'star_name', 'object', 'main_id', 'designation', 'source_id', 'source', 'hip', 'hd', 'tmass_id', '2mass', 'objid'] },
  { role: 'ra', names: ['ra', 'ra_deg', 'radeg', 'ra_icrs', 'raj2000', '_raj2000', 'ra_j2000', 'ra_icrs_deg', 'ramdeg'] },
  { role: 'dec', names: ['dec', 'dec_deg', 'decdeg', 'de', 'dedeg', 'de_icrs', 'dej2000', '_dej2000', 'dec_j2000', 'decj2000', 'demdeg'] },
  { role: 'parallax', names: ['parallax_mas', 'parallax', 'plx', 'plx_mas', 'pi'] },
  { role: 'parallax_err', names: ['parallax_err_mas', 'parallax_error', 'parallax_err', 'e_plx', 'plx_err', 'e_parallax', 'eplx', 'sig_plx'] },
  { role: 'av', names: ['av', 'a_v', 'av_mag', 'a_v_mag', 'ext_v', 'extinction_v'] },
];

/** Long format: column names of the band, value and flag columns. */
const LONG_NAMES: { role: ColumnRole; names: string[] }[] = [
  { role: 'band', names: ['band', 'filter', 'passband', 'band_key'] },
  { role: 'mag', names: ['mag', 'magnitude'] },
  { role: 'mag_err', names: ['mag_err', 'e_mag', 'magerr', 'mag_error'] },
  { role: 'jy', names: ['jy', 'flux_jy', 'fnu_jy'] },
  { role: 'jy_err', names: ['jy_err', 'flux_jy_err', 'e_jy', 'fnu_err_jy'] },
  { role: 'ul', names: ['ul', 'upper_limit', 'is_ul', 'limit'] },
];

function keyMatches(part: string, key: string, bandKeys: readonly string[], anyCase: boolean): boolean {
  if (part === key) return true;
  if (part.toLowerCase() !== key.toLowerCase()) return false;
  if (anyCase) return true;
  // `g` (SDSS) and `G` (Gaia), `r`/`R`, `i`/`I`, `u`/`U`: case decides when both keys exist.
  return !bandKeys.some((k) => k !== key && k.toLowerCase() === key.toLowerCase());
}

/** The band and role a column name stands for in the wide format, with the template's rank. */
export function matchBandColumn(name: string, bandKeys: readonly string[]): { band: string; role: ColumnRole; rank: number } | null {
  let best: { band: string; role: ColumnRole; rank: number } | null = null;
  const lower = name.toLowerCase();
  for (const key of bandKeys) {
    const spellings = [key, ...(KEY_ALIASES[key] ?? []).filter((a) => !bandKeys.includes(a))];
    for (const t of TEMPLATES) {
      if (t.onlyKeys && !t.onlyKeys.includes(key)) continue;
      for (const spelling of spellings) {
        const len = t.prefix.length + spelling.length + t.suffix.length;
        if (name.length !== len) continue;
        if (lower.slice(0, t.prefix.length) !== t.prefix.toLowerCase()) continue;
        if (lower.slice(len - t.suffix.length) !== t.suffix.toLowerCase()) continue;
        const part = name.slice(t.prefix.length, t.prefix.length + spelling.length);
        // An alias (K for Ks) is only a catalogue spelling: no canonical suffixes on it.
        const rank = t.rank + (spelling === key ? 0 : 1);
        if (t.exactKey ? part !== spelling : !keyMatches(part, spelling, bandKeys, !!t.keyAnyCase)) continue;
        if (!best || rank < best.rank) best = { band: key, role: t.role, rank };
      }
    }
  }
  return best;
}

function levenshtein(a: string, b: string): number {
  const dp = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let prev = dp[0];
    dp[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const tmp = dp[j];
      dp[j] = Math.min(dp[j] + 1, dp[j - 1] + 1, prev + (a[i - 1] === b[j - 1] ? 0 : 1));
      prev = tmp;
    }
  }
  return dp[b.length];
}

/** `sure` when only case or a magnitude decoration differs (then it is surely meant as that band). */
function bandKeyGuess(name: string, bandKeys: readonly string[]): { key: string; sure: boolean } | undefined {
  const lower = name.toLowerCase();
  const exactCase = bandKeys.filter((k) => k.toLowerCase() === lower);
  if (exactCase.length > 0) return { key: exactCase.join("' or '"), sure: true };
  const stripped = name.replace(/^(e_|err_|sig_)/i, '').replace(/(mag|_mag|_m)$/i, '');
  if (stripped !== name && stripped.length > 0) {
    const hit = bandKeys.find((k) => k === stripped) ?? bandKeys.find((k) => k.toLowerCase() === stripped.toLowerCase());
    if (hit) return { key: hit, sure: true };
  }
  // One edit away may be a coincidence ('hd' vs 'Hp'), so short keys and ties give no guess.
  if (name.length >= 2) {
    const near = bandKeys.filter((k) => k.length >= 2 && levenshtein(k.toLowerCase(), lower) === 1);
    if (near.length === 1) return { key: near[0], sure: false };
  }
  return undefined;
}

/** The band key a mistyped one most likely meant: same letters in another case, a 'mag' decoration, or one edit away. */
export function closestBandKey(name: string, bandKeys: readonly string[]): string | undefined {
  return bandKeyGuess(name, bandKeys)?.key;
}

/** Canonical wide-format suffixes, longest first, so 'V_jy_err' strips to 'V'. */
const CANONICAL_SUFFIXES = ['_jy_err', '_jy_ul', '_err', '_jy', '_ul'] as const;

/**
 * A column name that is neither a known star column nor a band column Starkiln recognises, but
 * looks like a band column with the key mistyped ('KS', 'KS_err', 'v_jy'): the canonical name it
 * most likely meant. Names the detection knows for something else (hd, plx, band …) give nothing.
 */
export function mistypedBandColumn(name: string, bandKeys: readonly string[]): string | undefined {
  const lower = name.toLowerCase();
  if (STAR_NAMES.some((s) => s.names.includes(lower)) || LONG_NAMES.some((s) => s.names.includes(lower))) return undefined;
  if (matchBandColumn(name, bandKeys)) return undefined;
  const suffix = CANONICAL_SUFFIXES.find((s) => name.length > s.length && lower.endsWith(s)) ?? '';
  const base = name.slice(0, name.length - suffix.length);
  // A bare letter in another case is as likely something else ('b' and 'l' are galactic
  // coordinates); with a band suffix ('v_jy') it is a band column.
  if (suffix === '' && base.length < 2) return undefined;
  const guess = bandKeyGuess(base, bandKeys);
  if (!guess) return undefined;
  // Several keys differing only by case ('u' or 'U'): name them all rather than pick one.
  return guess.key.includes("'") ? guess.key : `${guess.key}${suffix}`;
}

function textOf(cell: TableCell): string {
  if (cell === null || cell === undefined) return '';
  return typeof cell === 'string' ? cell.trim() : String(cell);
}

/** Most non-empty sample cells are numbers (one stray word in a sample does not hide a band column). */
function looksNumeric(values: TableCell[]): boolean {
  let numbers = 0;
  let others = 0;
  for (const v of values) {
    if (typeof v === 'number' || typeof v === 'bigint') {
      numbers++;
      continue;
    }
    const t = textOf(v);
    if (t === '' || MISSING.has(t)) continue;
    if (Number.isFinite(Number(t))) numbers++;
    else others++;
  }
  return numbers >= others && (numbers > 0 || others === 0);
}

export interface DetectedMapping extends Mapping {
  /** Suggested quality rules (2MASS and WISE quality letters: keep A and B). */
  rules: MappingRules;
  /** Why a column was not used when its name looked like something (e.g. a second id column). */
  notes: Record<string, string>;
}

/**
 * Guess the mapping from column names and a few sample rows. Unknown columns are 'ignore'; the
 * analyst confirms or changes each one on the mapping screen.
 */
export function detectMapping(columns: readonly string[], sampleRows: readonly TableCell[][], bandKeys: readonly string[]): DetectedMapping {
  const out: DetectedMapping = { layout: 'wide', columns: {}, rules: { quality: [] }, notes: {} };
  const sample = (c: number) => sampleRows.map((r) => r[c]);
  const lowerNames = columns.map((c) => c.toLowerCase());
  const assign = (name: string, a: ColumnAssignment) => (out.columns[name] = a);
  for (const name of columns) assign(name, { role: 'ignore' });

  // Long format when a column names bands and its values are band keys.
  const bandCol = columns.findIndex((c, i) => LONG_NAMES[0].names.includes(lowerNames[i]) && sample(i).some((v) => bandKeys.includes(textOf(v))));
  if (bandCol >= 0) {
    out.layout = 'long';
    for (const { role, names } of LONG_NAMES) {
      const i = lowerNames.findIndex((n) => names.includes(n));
      if (i >= 0) assign(columns[i], { role });
    }
  }

  // Star columns: the first name in each list's order wins; later candidates are noted.
  for (const { role, names } of STAR_NAMES) {
    let chosen = -1;
    for (const n of names) {
      const i = lowerNames.indexOf(n);
      if (i < 0 || out.columns[columns[i]].role !== 'ignore') continue;
      if (role !== 'id' && !looksNumeric(sample(i))) continue;
      if (chosen < 0) chosen = i;
      else out.notes[columns[i]] = `looks like ${ROLE_LABELS[role]}, but column ${columns[chosen]} was taken for it`;
    }
    if (chosen >= 0) assign(columns[chosen], { role });
  }

  if (out.layout === 'wide') {
    // Band columns: best-ranked column per (band, role).
    const claims = new Map<string, { col: number; rank: number }>();
    columns.forEach((name, i) => {
      if (out.columns[name].role !== 'ignore') return;
      const m = matchBandColumn(name, bandKeys);
      if (!m || !looksNumeric(sample(i))) return;
      const k = `${m.band}\u0000${m.role}`;
      const prior = claims.get(k);
      if (!prior || m.rank < prior.rank) {
        if (prior) out.notes[columns[prior.col]] = `also looks like ${m.band} ${ROLE_LABELS[m.role]}; ${name} was preferred`;
        claims.set(k, { col: i, rank: m.rank });
      } else out.notes[name] = `also looks like ${m.band} ${ROLE_LABELS[m.role]}; ${columns[prior.col]} was preferred`;
    });
    for (const [k, { col }] of claims) {
      const [band, role] = k.split('\u0000') as [string, ColumnRole];
      assign(columns[col], { role, band });
    }
    // One value per band: a Gaia flux with its error beats the catalogue's rounded magnitude.
    for (const key of GAIA_KEYS) {
      const flux = claims.get(`${key}\u0000gaia_flux`);
      const fluxErr = claims.get(`${key}\u0000gaia_flux_err`);
      const mag = claims.get(`${key}\u0000mag`);
      const magErr = claims.get(`${key}\u0000mag_err`);
      if (flux && fluxErr && mag) {
        assign(columns[mag.col], { role: 'ignore' });
        out.notes[columns[mag.col]] = `not used: ${key} comes from ${columns[flux.col]} with its error`;
        if (magErr) {
          assign(columns[magErr.col], { role: 'ignore' });
          out.notes[columns[magErr.col]] = `not used: ${key} comes from ${columns[flux.col]} with its error`;
        }
      } else if (flux && !fluxErr) {
        assign(columns[flux.col], { role: 'ignore' });
        out.notes[columns[flux.col]] = `not used: no ${key} flux error column was found`;
      }
    }
    for (const name of columns) {
      if (out.columns[name].role !== 'ignore' || out.notes[name]) continue;
      const meant = mistypedBandColumn(name, bandKeys);
      if (meant) out.notes[name] = `unknown band column "${name}" (band keys are case-sensitive); did you mean '${meant}'?`;
    }
  }

  // Quality letters: 2MASS ph_qual (J H Ks), AllWISE ph_qual (W1–W4).
  columns.forEach((name, i) => {
    const n = lowerNames[i];
    if (!n.startsWith('ph_qual') && !n.startsWith('qflg') && n !== 'qual' && n !== 'quality') return;
    if (out.columns[name].role !== 'ignore') return;
    const lengths = new Set(sample(i).map((v) => textOf(v).length).filter((l) => l > 0));
    const len = lengths.size === 1 ? [...lengths][0] : n.includes('wise') ? 4 : 3;
    const bands = len === 4 ? ['W1', 'W2', 'W3', 'W4'] : len === 3 ? ['J', 'H', 'Ks'] : null;
    if (!bands || !bands.every((b) => bandKeys.includes(b))) return;
    assign(name, { role: 'quality', bands });
    out.rules.quality.push({ column: name, keep: ['A', 'B'] });
  });
  return out;
}

// ---------------------------------------------------------------------------------------------
// Checking a mapping against the table

/** Mistakes in the mapping itself (not in the data): missing id, a band role without a band … */
export function checkMapping(mapping: Mapping, columns: readonly string[], bandKeys: readonly string[], file = 'table'): MappingProblem[] {
  const problems: MappingProblem[] = [];
  const header = (message: string, name?: string) =>
    problems.push({ file, row: 0, column: name === undefined ? undefined : { name, number: columns.indexOf(name) + 1 }, severity: 'error', message });
  const used = Object.entries(mapping.columns).filter(([, a]) => a.role !== 'ignore');
  for (const [name] of used) if (!columns.includes(name)) header(`the mapping names column "${name}", which the file does not have`);
  const single = (role: ColumnRole) => {
    const cols = used.filter(([, a]) => a.role === role).map(([n]) => n);
    if (cols.length > 1) header(`only one column can be ${ROLE_LABELS[role]}; ${cols.join(', ')} all are`, cols[1]);
  };
  if (!used.some(([, a]) => a.role === 'id')) header('no column is mapped to the star id');
  for (const r of ['id', 'ra', 'dec', 'parallax', 'parallax_err', 'av'] as ColumnRole[]) single(r);
  if (mapping.layout === 'long') {
    for (const r of ['band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul'] as ColumnRole[]) single(r);
    if (!used.some(([, a]) => a.role === 'band')) header('the long format needs a column with the band of each row');
    if (!used.some(([, a]) => a.role === 'mag' || a.role === 'jy')) header('the long format needs a magnitude or a flux (Jy) column');
    for (const [name, a] of used) {
      if (['mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err', 'quality'].includes(a.role)) header(`column ${name}: ${ROLE_LABELS[a.role]} is for the wide format (one row per star)`, name);
    }
  } else {
    const seen = new Map<string, string>();
    for (const [name, a] of used) {
      if (a.role === 'band' || a.role === 'ul') {
        header(`column ${name}: ${ROLE_LABELS[a.role]} only applies to the long format (one row per star and band)`, name);
        continue;
      }
      if (!BAND_ROLES.includes(a.role)) continue;
      if (!a.band) header(`column ${name} is mapped to ${ROLE_LABELS[a.role]} but no band is chosen`, name);
      else if (!bandKeys.includes(a.band)) {
        const guess = closestBandKey(a.band, bandKeys);
        header(`column ${name}: unknown band "${a.band}" (band keys are case-sensitive; ${guess ? `did you mean '${guess}'?` : `known bands: ${bandKeys.join(' ')}`})`, name);
      }
      else if ((a.role === 'gaia_flux' || a.role === 'gaia_flux_err') && !(a.band in GAIA_VEGA_ZERO_POINT_MAG)) {
        header(`column ${name}: Gaia fluxes in e⁻/s only convert for G, BP and RP, not ${a.band}`, name);
      } else {
        const k = `${a.band}/${a.role}`;
        if (seen.has(k)) header(`columns ${seen.get(k)} and ${name} are both ${a.band} ${ROLE_LABELS[a.role]}`, name);
        else seen.set(k, name);
      }
    }
    const bandsWith = (roles: ColumnRole[]) => new Map(used.filter(([, a]) => a.band && roles.includes(a.role)).map(([n, a]) => [a.band!, n]));
    const values = bandsWith(['mag', 'jy', 'gaia_flux', 'mag_ul', 'jy_ul']);
    for (const [name, a] of used) {
      if ((a.role === 'mag_err' || a.role === 'jy_err' || a.role === 'gaia_flux_err') && a.band && !values.has(a.band)) {
        header(`column ${name} is the ${a.band} error, but no column holds a ${a.band} value`, name);
      }
    }
    const kinds = new Map<string, Set<string>>();
    for (const [, a] of used) {
      if (!a.band || !['mag', 'jy', 'gaia_flux'].includes(a.role)) continue;
      if (!kinds.has(a.band)) kinds.set(a.band, new Set());
      kinds.get(a.band)!.add(a.role);
    }
    for (const [band, set] of kinds) {
      if (set.size > 1) header(`band ${band} has more than one value column (${[...set].map((r) => ROLE_LABELS[r as ColumnRole]).join(', ')}); keep one per file, or import them as separate sources`);
    }
    // A band column with its key mistyped would lose its data without a word: say so, and what it
    // most likely meant. A warning, not an error: the analyst may leave the column out on purpose.
    columns.forEach((name, i) => {
      if ((mapping.columns[name]?.role ?? 'ignore') !== 'ignore') return;
      const meant = mistypedBandColumn(name, bandKeys);
      if (meant) {
        problems.push({ file, row: 0, column: { name, number: i + 1 }, severity: 'warning', message: `unknown band column "${name}" (band keys are case-sensitive); did you mean '${meant}'? The column was not read` });
      }
    });
  }
  for (const [name, a] of used) {
    if (a.role !== 'quality') continue;
    if (!a.bands || a.bands.length === 0) header(`column ${name}: say which band each quality letter belongs to`, name);
    else for (const b of a.bands) if (b !== '-' && !bandKeys.includes(b)) header(`column ${name}: unknown band "${b}" for a quality letter`, name);
  }
  return problems;
}

// ---------------------------------------------------------------------------------------------
// Applying a mapping

/** Cells that mean "no value" besides the empty cell: common spellings in exported tables. */
const MISSING = new Set(['', 'nan', 'NaN', 'NAN', 'NA', 'N/A', 'null', 'NULL', 'None', '--', '-']);

/** undefined = no value; NaN = not a number (the caller reports it). */
export function readCellNumber(cell: TableCell): number | undefined {
  if (cell === null || cell === undefined) return undefined;
  if (typeof cell === 'number') return Number.isNaN(cell) ? undefined : Number.isFinite(cell) ? cell : NaN;
  if (typeof cell === 'bigint') return Number(cell);
  if (typeof cell === 'boolean') return NaN;
  // Every number cell of every upload passes here (a 100 000-star file has millions): one character
  // scan instead of a regular expression, and no trimmed copy unless the cell has surrounding blanks.
  const n = cell.length;
  const t = n > 0 && cell.charCodeAt(0) > 32 && cell.charCodeAt(n - 1) > 32 && cell.charCodeAt(0) < 127 && cell.charCodeAt(n - 1) < 127 ? cell : cell.trim();
  const kind = decimalKind(t);
  if (kind === DECIMAL) return Number(t);
  if (kind === DECIMAL_D) return Number(t.replace(/[dD]/, 'e'));
  if (MISSING.has(t)) return undefined;
  // Number() also takes hex/binary/octal literals and 'Infinity': refuse those (decimalKind does).
  return NaN;
}

const NOT_DECIMAL = 0;
const DECIMAL = 1;
/** A decimal with a Fortran-style D exponent (1.5D3), which Number() does not read. */
const DECIMAL_D = 2;

/** Whether t is [+-]?(digits[.digits]|.digits)([eEdD][+-]?digits)? in full, and which exponent letter. */
function decimalKind(t: string): number {
  const n = t.length;
  let i = 0;
  let c = n > 0 ? t.charCodeAt(0) : 0;
  if (c === 43 || c === 45) c = ++i < n ? t.charCodeAt(i) : 0; // + -
  let digits = 0;
  while (c >= 48 && c <= 57) {
    digits++;
    c = ++i < n ? t.charCodeAt(i) : 0;
  }
  if (c === 46) {
    // '.'
    c = ++i < n ? t.charCodeAt(i) : 0;
    while (c >= 48 && c <= 57) {
      digits++;
      c = ++i < n ? t.charCodeAt(i) : 0;
    }
  }
  if (digits === 0) return NOT_DECIMAL;
  if (i === n) return DECIMAL;
  const kind = c === 101 || c === 69 ? DECIMAL : c === 100 || c === 68 ? DECIMAL_D : NOT_DECIMAL; // e E | d D
  if (kind === NOT_DECIMAL) return kind;
  c = ++i < n ? t.charCodeAt(i) : 0;
  if (c === 43 || c === 45) c = ++i < n ? t.charCodeAt(i) : 0;
  let expDigits = 0;
  while (c >= 48 && c <= 57) {
    expDigits++;
    c = ++i < n ? t.charCodeAt(i) : 0;
  }
  return expDigits > 0 && i === n ? kind : NOT_DECIMAL;
}

const TRUE_FLAGS = new Set(['1', 'true', 't', 'yes', 'y']);
const FALSE_FLAGS = new Set(['', '0', 'false', 'f', 'no', 'n']);

export interface ApplyOptions {
  bandKeys: readonly string[];
}

interface BandCols {
  mag?: number;
  mag_err?: number;
  jy?: number;
  jy_err?: number;
  mag_ul?: number;
  jy_ul?: number;
  gaia_flux?: number;
  gaia_flux_err?: number;
  /** quality column and letter position */
  quality?: { col: number; pos: number; single: boolean };
}

const STAR_PROPS = { ra: 'raDeg', dec: 'decDeg', parallax: 'parallaxMas', parallax_err: 'parallaxErrMas', av: 'avMag' } as const;
type StarRole = keyof typeof STAR_PROPS;
const STAR_WORDS: Record<StarRole, string> = { ra: 'right ascension', dec: 'declination', parallax: 'parallax', parallax_err: 'parallax error', av: 'A_V' };

/**
 * Every row through the mapping → stars with measurements, and every problem with file, row and
 * column. A star with an error in any of its rows is left out whole; the others carry on, so the
 * caller can import the valid rows and keep the report.
 */
export function applyMapping(table: ColumnTable, mapping: Mapping, rules: MappingRules, options: ApplyOptions): MappingResult {
  const file = table.file;
  const { bandKeys } = options;
  const problems: MappingProblem[] = checkMapping(mapping, table.columns, bandKeys, file);
  const colIndex = new Map(table.columns.map((c, i) => [c, i] as const));
  const result = (stars: MappedStar[], rowCount: number, rejectedRows: number, excluded: number): MappingResult => ({
    stars,
    problems,
    rowCount,
    rejectedRows,
    excludedByQuality: excluded,
    errorCount: problems.filter((p) => p.severity === 'error').length,
    warningCount: problems.filter((p) => p.severity === 'warning').length,
  });
  if (problems.some((p) => p.severity === 'error')) return result([], table.rows.length, table.rows.length, 0);

  const roleCol = (role: ColumnRole): number | undefined => {
    const e = Object.entries(mapping.columns).find(([, a]) => a.role === role);
    return e ? colIndex.get(e[0]) : undefined;
  };
  const idCol = roleCol('id')!;
  const starCols: Partial<Record<StarRole, number>> = {};
  for (const r of Object.keys(STAR_PROPS) as StarRole[]) {
    const c = roleCol(r);
    if (c !== undefined) starCols[r] = c;
  }
  // Quality rules by column.
  const keepByCol = new Map<number, Set<string>>();
  for (const rule of rules.quality) {
    const c = colIndex.get(rule.column);
    if (c === undefined) {
      problems.push({ file, row: 0, severity: 'error', message: `the quality rule names column "${rule.column}", which the file does not have` });
      continue;
    }
    if (mapping.columns[rule.column]?.role !== 'quality') {
      problems.push({ file, row: 0, column: { name: rule.column, number: c + 1 }, severity: 'error', message: `the quality rule on ${rule.column} needs that column mapped to quality letters` });
      continue;
    }
    keepByCol.set(c, new Set(rule.keep.map((k) => k.trim().toUpperCase())));
  }
  if (problems.some((p) => p.severity === 'error')) return result([], table.rows.length, table.rows.length, 0);

  const bandCols = new Map<string, BandCols>();
  const band = (key: string) => {
    if (!bandCols.has(key)) bandCols.set(key, {});
    return bandCols.get(key)!;
  };
  for (const [name, a] of Object.entries(mapping.columns)) {
    const c = colIndex.get(name)!;
    if (a.role === 'quality') {
      a.bands!.forEach((b, pos) => {
        if (b !== '-') band(b).quality = { col: c, pos, single: a.bands!.length === 1 };
      });
    } else if (mapping.layout === 'wide' && a.band && BAND_ROLES.includes(a.role)) {
      (band(a.band) as Record<string, number>)[a.role] = c;
    }
  }

  const ncol = table.columns.length;
  const cur = { row: 0, line: undefined as number | undefined, cells: [] as TableCell[], bad: false };
  const problem = (col: number | undefined, message: string, severity: 'error' | 'warning' = 'error') => {
    problems.push({
      file,
      row: cur.row,
      line: cur.line,
      column: col === undefined ? undefined : { name: table.columns[col], number: col + 1 },
      severity,
      message: `row ${cur.row}${col === undefined ? '' : `, column ${table.columns[col]}`}: ${message}`,
    });
    if (severity === 'error') cur.bad = true;
  };
  /** The cell as a number; `what` (prefixed by `key` when given) names it in the problem, built only then. */
  const num = (col: number | undefined, what: string, key?: string): number | undefined => {
    if (col === undefined) return undefined;
    const x = readCellNumber(cur.cells[col]);
    if (x !== undefined && Number.isNaN(x)) {
      problem(col, `${key === undefined ? what : `${key} ${what}`} "${textOf(cur.cells[col])}" is not a number`);
      return undefined;
    }
    return x;
  };
  const nonNegative = (col: number | undefined, value: number | undefined, what: string) => {
    if (value !== undefined && value < 0) problem(col, `negative ${what} ${value}`);
  };
  let excluded = 0;
  /** true when the band's value may be used under the quality rules */
  const qualityOf = (key: string): { keep: boolean; letter?: string } => {
    const q = bandCols.get(key)?.quality;
    if (!q) return { keep: true };
    const text = textOf(cur.cells[q.col]);
    const letter = q.single ? text : text.charAt(q.pos);
    const keep = keepByCol.get(q.col);
    if (!keep) return { keep: true, letter: letter || undefined };
    return { keep: letter !== '' && keep.has(letter.toUpperCase()), letter: letter || undefined };
  };

  const starRoles = Object.keys(starCols) as StarRole[];
  const readStarValues = (star: MappedStar, mergeWithin: boolean) => {
    for (let j = 0; j < starRoles.length; j++) {
      const r = starRoles[j];
      const c = starCols[r]!;
      const v = num(c, STAR_WORDS[r]);
      if (v === undefined) continue;
      if (r === 'ra' && (v < 0 || v >= 360)) problem(c, `right ascension ${v} is outside 0 ≤ ra < 360 degrees`);
      if (r === 'dec' && (v < -90 || v > 90)) problem(c, `declination ${v} is outside −90…90 degrees`);
      if (r === 'parallax_err' || r === 'av') nonNegative(c, v, r === 'av' ? 'A_V' : 'parallax error');
      const prop = STAR_PROPS[r];
      if (mergeWithin && star[prop] !== undefined && star[prop] !== v) problem(c, `${STAR_WORDS[r]} ${v} differs from ${star[prop]} given for star "${star.id}" in an earlier row`);
      else star[prop] = v;
    }
  };

  /** Makes row r current; its star id, or null when the row is ragged or has no id (both reported). */
  const beginRow = (cells: TableCell[], r: number): string | null => {
    cur.row = r + 1;
    cur.line = table.lines?.[r];
    cur.cells = cells;
    cur.bad = false;
    if (cells.length !== ncol) {
      problem(undefined, `has ${cells.length} value${cells.length === 1 ? '' : 's'} but the header has ${ncol} columns; the row was left out`);
      return null;
    }
    const id = textOf(cells[idCol]);
    if (id === '') {
      problem(idCol, 'missing star id; the row was left out');
      return null;
    }
    return id;
  };

  if (mapping.layout === 'wide') {
    const stars: MappedStar[] = [];
    // An array, not the Map: iterating a Map makes a fresh [key, value] pair per band and row.
    const bandList = [...bandCols].map(([key, cols]) => ({ key, cols }));
    const firstRow = new Map<string, number>();
    let rejected = 0;
    table.rows.forEach((cells, r) => {
      const id = beginRow(cells, r);
      if (id === null) {
        rejected++;
        return;
      }
      const prior = firstRow.get(id);
      if (prior !== undefined) {
        problem(idCol, `duplicate star id "${id}" (first in row ${prior}); the row was left out`);
        rejected++;
        return;
      }
      firstRow.set(id, cur.row);
      const star: MappedStar = { id, measurements: [], row: cur.row };
      readStarValues(star, false);
      for (let j = 0; j < bandList.length; j++) {
        const key = bandList[j].key;
        const b = bandList[j].cols;
        const mag = num(b.mag, 'magnitude', key);
        const magErr = num(b.mag_err, 'magnitude error', key);
        const jy = num(b.jy, 'flux', key);
        const jyErr = num(b.jy_err, 'flux error', key);
        const magUl = num(b.mag_ul, 'upper limit', key);
        const jyUl = num(b.jy_ul, 'upper limit', key);
        const gFlux = num(b.gaia_flux, 'Gaia flux', key);
        const gFluxErr = num(b.gaia_flux_err, 'Gaia flux error', key);
        nonNegative(b.mag_err, magErr, 'error');
        nonNegative(b.jy_err, jyErr, 'error');
        nonNegative(b.gaia_flux_err, gFluxErr, 'error');
        const given = (mag !== undefined ? 1 : 0) + (jy !== undefined ? 1 : 0) + (magUl !== undefined ? 1 : 0) + (jyUl !== undefined ? 1 : 0) + (gFlux !== undefined ? 1 : 0);
        if (given === 0) continue;
        if (given > 1) {
          problem(b.mag ?? b.jy ?? b.gaia_flux ?? b.mag_ul ?? b.jy_ul, `band ${key} has both a value and an upper limit; keep one`);
          continue;
        }
        const q = qualityOf(key);
        if (!q.keep) {
          excluded++;
          continue;
        }
        const quality = q.letter ? { quality: q.letter } : {};
        if (mag !== undefined) {
          if (magErr === undefined) problem(b.mag_err ?? b.mag, `band ${key} has a magnitude but no error; the value was not used`, 'warning');
          else star.measurements.push({ bandKey: key, mag, magErr, ...quality });
        } else if (jy !== undefined) {
          if (jyErr === undefined) problem(b.jy_err ?? b.jy, `band ${key} has a flux but no error; the value was not used`, 'warning');
          else if (jy <= 0) problem(b.jy, `flux ${jy} Jy must be positive (give a negative detection as an upper limit)`);
          else star.measurements.push({ bandKey: key, fnuJy: jy, fnuErrJy: jyErr, ...quality });
        } else if (gFlux !== undefined) {
          if (gFlux <= 0) problem(b.gaia_flux, `Gaia flux ${gFlux} e⁻/s must be positive`);
          else if (gFluxErr === undefined) problem(b.gaia_flux_err ?? b.gaia_flux, `band ${key} has a Gaia flux but no error; the value was not used`, 'warning');
          else {
            const m = -2.5 * Math.log10(gFlux) + GAIA_VEGA_ZERO_POINT_MAG[key];
            star.measurements.push({ bandKey: key, mag: m, magErr: MAG_PER_LN * (gFluxErr / gFlux), ...quality });
          }
        } else if (magUl !== undefined) {
          star.measurements.push({ bandKey: key, mag: magUl, upperLimit: true, ...quality });
        } else if (jyUl !== undefined) {
          if (jyUl <= 0) problem(b.jy_ul, `upper-limit flux ${jyUl} Jy must be positive`);
          else star.measurements.push({ bandKey: key, fnuJy: jyUl, upperLimit: true, ...quality });
        }
      }
      if (cur.bad) {
        rejected++;
        return;
      }
      stars.push(star);
    });
    return result(stars, table.rows.length, rejected, excluded);
  }

  // Long format: one row per star and band.
  const c = {
    band: roleCol('band')!,
    mag: roleCol('mag'),
    mag_err: roleCol('mag_err'),
    jy: roleCol('jy'),
    jy_err: roleCol('jy_err'),
    ul: roleCol('ul'),
  };
  const byId = new Map<string, MappedStar & { bad: boolean; rows: number; bandRow: Map<string, number> }>();
  let rejected = 0;
  table.rows.forEach((cells, r) => {
    const id = beginRow(cells, r);
    if (id === null) {
      rejected++;
      return;
    }
    let s = byId.get(id);
    if (!s) {
      s = { id, measurements: [], row: cur.row, bad: false, rows: 0, bandRow: new Map() };
      byId.set(id, s);
    }
    s.rows++;
    readStarValues(s, true);
    const key = textOf(cells[c.band]);
    if (!bandKeys.includes(key)) {
      const guess = key === '' ? undefined : closestBandKey(key, bandKeys);
      problem(c.band, key === '' ? 'missing band' : `unknown band "${key}" (band keys are case-sensitive${guess ? `; did you mean '${guess}'?` : `; known bands: ${bandKeys.join(' ')}`})`);
    } else {
      const prior = s.bandRow.get(key);
      if (prior !== undefined) problem(c.band, `duplicate: star "${id}" already has band ${key} in row ${prior}`);
      else s.bandRow.set(key, cur.row);
    }
    const mag = num(c.mag, 'magnitude');
    const magErr = num(c.mag_err, 'magnitude error');
    const jy = num(c.jy, 'flux');
    const jyErr = num(c.jy_err, 'flux error');
    nonNegative(c.mag_err, magErr, 'error');
    nonNegative(c.jy_err, jyErr, 'error');
    const flagText = c.ul === undefined ? '' : textOf(cells[c.ul]).toLowerCase();
    if (!TRUE_FLAGS.has(flagText) && !FALSE_FLAGS.has(flagText)) problem(c.ul, `upper-limit flag must be 1 or 0/empty, found "${flagText}"`);
    const ul = TRUE_FLAGS.has(flagText);
    if (mag !== undefined && jy !== undefined) problem(c.mag, 'both a magnitude and a flux are given; one row holds one of them');
    else if (mag === undefined && jy === undefined) problem(c.mag ?? c.jy, 'neither a magnitude nor a flux is given');
    if (!cur.bad) {
      if (mag !== undefined) {
        if (ul) s.measurements.push({ bandKey: key, mag, upperLimit: true });
        else if (magErr === undefined) problem(c.mag_err ?? c.mag, `band ${key} has a magnitude but no error; the value was not used`, 'warning');
        else s.measurements.push({ bandKey: key, mag, magErr });
      } else if (jy !== undefined) {
        if (jy <= 0) problem(c.jy, `flux ${jy} Jy must be positive`);
        else if (ul) s.measurements.push({ bandKey: key, fnuJy: jy, upperLimit: true });
        else if (jyErr === undefined) problem(c.jy_err ?? c.jy, `band ${key} has a flux but no error; the value was not used`, 'warning');
        else s.measurements.push({ bandKey: key, fnuJy: jy, fnuErrJy: jyErr });
      }
    }
    if (cur.bad) s.bad = true;
  });
  const stars: MappedStar[] = [];
  for (const s of byId.values()) {
    if (s.bad) {
      rejected += s.rows;
      problems.push({ file, row: s.row, line: table.lines?.[s.row - 1], severity: 'error', message: `star "${s.id}" was left out because of the errors in its rows` });
      continue;
    }
    stars.push({ id: s.id, raDeg: s.raDeg, decDeg: s.decDeg, parallaxMas: s.parallaxMas, parallaxErrMas: s.parallaxErrMas, avMag: s.avMag, measurements: s.measurements, row: s.row });
  }
  return result(stars, table.rows.length, rejected, excluded);
}

/** The first `n` rows as display text, for the mapping screen's preview. */
export function previewRows(table: ColumnTable, n = 8): string[][] {
  return table.rows.slice(0, n).map((r) => r.map((v) => (typeof v === 'number' && !Number.isInteger(v) ? String(Number(v.toPrecision(10))) : textOf(v))));
}
