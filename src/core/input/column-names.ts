// Detecting the mapping from column names: canonical names, catalogue-style names such as
// Vmag/e_Vmag, j_m/j_msigcom, w1mpro, phot_g_mean_flux, and near misses of a band key.
import { ROLE_LABELS, type ColumnAssignment, type ColumnRole, type DetectedMapping, type TableCell } from './column-table';
import { looksNumeric, textOf } from './cells';
import { GAIA_KEYS } from './gaia-zero-points';

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
  // Tables derived from the Gaia archive (the archive itself gives no magnitude error) often add one
  // beside phot_g_mean_mag in the archive's own spelling.
  { prefix: 'phot_', suffix: '_mean_mag_error', role: 'mag_err', onlyKeys: GAIA_KEYS, keyAnyCase: true, rank: 1 },
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
  { role: 'lum_class', names: ['lum_class', 'lumclass', 'luminosity_class', 'lum_cls'] },
  { role: 'feh', names: ['feh', 'fe_h', '[fe/h]', 'feh_dex', 'fe_h_dex', '__fe_h_'] },
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
      if (role !== 'id' && role !== 'lum_class' && !looksNumeric(sample(i))) continue;
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
