// The output catalogue (docs/science.md, "Interfaces"): one row per star with the fitted and derived
// values, and a provenance header. Shared by the CLI, the worker and the downloads, so every export
// says the same thing the same way.
import { FLAG_EXPLANATIONS, type FitFailure, type FitResult } from './fit';

export interface CatalogueColumn {
  name: string;
  unit?: string;
  description: string;
  /** Significant digits written; undefined = as given (ids, positions, text). */
  digits?: number;
}

/**
 * F_bol's unit, spelled the same in every download and the CLI output: 1 mW m⁻² = 1 erg s⁻¹ cm⁻²,
 * so the numbers are the cgs ones. "mW.m-2" reads as the same unit in VOUnit (IVOA VOUnits 1.0),
 * the FITS standard (4.0, sect. 4.3) and astropy's unit parser; erg is deprecated in VOUnit.
 */
export const FBOL_UNIT = 'mW.m-2';

/** Catalogue columns in output order. `review_status` is added only where reviews exist. */
export const CATALOGUE_COLUMNS: readonly CatalogueColumn[] = [
  { name: 'id', description: 'star identifier as given in the input' },
  { name: 'ra', unit: 'deg', description: 'right ascension as given in the input' },
  { name: 'dec', unit: 'deg', description: 'declination as given in the input' },
  { name: 'teff_k', unit: 'K', description: 'effective temperature from the calibrated photosphere model (the Planck temperature for a Planck-only fit)', digits: 6 },
  { name: 'teff_err_k', unit: 'K', description: 'reported 1σ error: formal × max(1, √(reduced χ²)) with the per-band model scatter, plus the calibration term', digits: 3 },
  { name: 'teff_err_formal_k', unit: 'K', description: 'formal 1σ error from the covariance', digits: 3 },
  { name: 'teff_lower_k', unit: 'K', description: 'lower bound on the temperature (one-sided 95 %), set only when no value can be given', digits: 5 },
  { name: 'tbb_k', unit: 'K', description: 'pure Planck (blackbody colour) temperature, always fitted beside the model; not an effective temperature', digits: 6 },
  { name: 'tbb_err_k', unit: 'K', description: 'reported 1σ error of the Planck temperature (never widened by a model term)', digits: 3 },
  { name: 'tbb_err_formal_k', unit: 'K', description: 'formal 1σ error of the Planck temperature', digits: 3 },
  { name: 'tbb_lower_k', unit: 'K', description: 'lower bound of the Planck temperature (one-sided 95 %), set only when no value can be given', digits: 5 },
  { name: 'tbb_chi2_red', description: 'reduced χ² of the Planck fit', digits: 4 },
  { name: 'theta_mas', unit: 'mas', description: 'angular diameter θ = 2√s', digits: 6 },
  { name: 'theta_err_mas', unit: 'mas', description: '1σ error of θ', digits: 3 },
  { name: 'radius_rsun', unit: 'R_sun', description: 'radius R = 107.516 θ/ϖ (IAU 2015 B3, IAU 2012 au)', digits: 5 },
  { name: 'radius_err_rsun', unit: 'R_sun', description: '1σ error of R, parallax error included', digits: 3 },
  { name: 'lum_lsun', unit: 'L_sun', description: 'luminosity (R/R☉)² (T/5772 K)⁴', digits: 5 },
  { name: 'lum_err_lsun', unit: 'L_sun', description: '1σ error of L, T–s covariance and parallax error included', digits: 3 },
  { name: 'fbol_cgs', unit: FBOL_UNIT, description: 'bolometric flux at Earth s σT⁴, in mW m⁻² (the same numbers as erg s⁻¹ cm⁻²)', digits: 6 },
  { name: 'fbol_err_cgs', unit: FBOL_UNIT, description: '1σ error of F_bol, T–s covariance included', digits: 3 },
  { name: 'av', unit: 'mag', description: 'A_V used (given, default or fitted)', digits: 4 },
  { name: 'av_err', unit: 'mag', description: '1σ error of A_V when fitted', digits: 3 },
  { name: 'chi2_red', description: 'reduced χ² of the fit', digits: 4 },
  { name: 'n_bands', description: 'number of detections in the fit' },
  { name: 'bands_used', description: 'keys of the bands in the fit, space-separated' },
  { name: 'ir_excess_sigma', description: 'largest excess of a band beyond ~5 µm over the curve, in σ', digits: 3 },
  { name: 'flags', description: 'quality flags of the calibrated fit, space-separated (explained in the header)' },
  { name: 'lum_class', description: 'luminosity class the photosphere used: dwarf or giant' },
  { name: 'lum_class_source', description: 'where the class came from: parallax, input, batch or assumed' },
  // No unit: dex is neither a FITS Standard nor a VOUnit unit, so the files could not carry it alike.
  { name: 'feh', description: '[Fe/H] in dex, as given in the input (recorded, not fitted)', digits: 4 },
  { name: 'model', description: 'temperature model and version (empty: Planck only)' },
];

/**
 * What went into each star's fit, in compact text (the CLI writes these after the catalogue columns;
 * its JSON output carries the same in full, per row, under "detail").
 */
export const FIT_DETAIL_COLUMNS: readonly CatalogueColumn[] = [
  { name: 'residuals_sigma', description: '(data − model)/σ of every band of the star, excluded ones too, as band:value, space-separated (σ with the floor and the model scatter; an upper limit is marked band<:value)' },
  { name: 'excluded_bands', description: 'bands left out of the fit, as band:reason, space-separated (reasons listed in the header; the JSON output gives each one\'s detail)' },
  { name: 'teff_theta_corr', description: 'correlation of the Teff and θ errors (reported errors); the covariance is teff_theta_corr × teff_err_k × theta_err_mas', digits: 3 },
  { name: 'distance_pc', unit: 'pc', description: 'distance the radius and luminosity rest on', digits: 6 },
  { name: 'distance_source', description: 'where the distance came from: parallax (1/ϖ as given)' },
];

/** Why a band is not in a fit (the excluded_bands reasons), one line each. */
export const EXCLUSION_EXPLANATIONS: Record<string, string> = {
  excluded_by_option: 'left out by the fit options (--exclude, or the batch\'s excluded bands)',
  long_wavelength: 'beyond ~5 µm: an excess diagnostic, not a fit input',
  rejected: 'inconsistent with the other bands (robust rejection on the calibrated fit; the JSON detail gives the test)',
  clipped: 'dropped by the older sequential clipping (--clip with rejection off)',
  no_valid_error: 'no usable error, so it cannot be weighted',
};

/** The distance a fit's R and L rest on, as the caller knows it. */
export interface DistanceUsed {
  pc: number;
  source: string;
}

/** A residual to 0.01σ with its sign ("+0.00" for anything that rounds to zero). */
function signed(v: number): string {
  if (!Number.isFinite(v)) return 'nan';
  const r = Math.round(v * 100) / 100;
  return r > 0 || r === 0 ? `+${Math.abs(r).toFixed(2)}` : r.toFixed(2);
}

/** The FIT_DETAIL_COLUMNS of one star. */
export function fitDetailRow(result: FitResult | FitFailure, distance: DistanceUsed | null, upperLimits: ReadonlySet<string> = new Set()): CatalogueRow {
  const excluded = result.excluded.map((e) => `${e.band}:${e.reason}`).join(' ');
  if (!result.ok) return { residuals_sigma: '', excluded_bands: excluded, teff_theta_corr: null, distance_pc: distance?.pc ?? null, distance_source: distance?.source ?? null };
  return {
    residuals_sigma: Object.entries(result.residualsSigma)
      .map(([b, v]) => `${b}${upperLimits.has(b) ? '<' : ''}:${signed(v)}`)
      .join(' '),
    excluded_bands: excluded,
    teff_theta_corr: result.teffTheta?.corr ?? null,
    distance_pc: distance?.pc ?? null,
    distance_source: distance?.source ?? null,
  };
}

/** Everything the JSON output says per star beyond the columns: residuals, exclusions and their reasons, covariance, rejection tests. */
export function fitDetailJson(result: FitResult | FitFailure, distance: DistanceUsed | null): Record<string, unknown> {
  if (!result.ok) return { excluded: result.excluded, failure: { reason: result.reason, message: result.message }, distance };
  return {
    residuals_sigma: result.residualsSigma,
    model_scatter: result.modelScatter ?? null,
    excluded: result.excluded,
    rejection: result.rejection,
    teff_theta: result.teffTheta,
    covariance: result.covariance,
    distance,
    planck: { teff_k: result.planck.teffK, teff_lower_k: result.planck.teffLowerK, chi2_red: result.planck.chi2Red, flags: result.planck.flags },
  };
}

export const REVIEW_STATUS_COLUMN: CatalogueColumn = { name: 'review_status', description: 'review decision: accepted, flagged or unreviewed' };

export type CatalogueValue = string | number | null;
export type CatalogueRow = Record<string, CatalogueValue>;

export interface CatalogueStar {
  id: string;
  raDeg?: number | null;
  decDeg?: number | null;
  result: FitResult | FitFailure;
  reviewStatus?: string;
}

/** One catalogue row; failed fits keep id, position, the band count and their reason as a flag. */
export function catalogueRow(star: CatalogueStar): CatalogueRow {
  const r = star.result;
  // One literal with every column, so all rows share one object shape (fast for 10⁵–10⁶ rows).
  const row: CatalogueRow = r.ok
    ? {
        id: star.id,
        ra: star.raDeg ?? null,
        dec: star.decDeg ?? null,
        teff_k: r.teffK,
        teff_err_k: r.teffErrK,
        teff_err_formal_k: r.teffErrFormalK,
        teff_lower_k: r.teffLowerK,
        tbb_k: r.planck.teffK,
        tbb_err_k: r.planck.teffErrK,
        tbb_err_formal_k: r.planck.teffErrFormalK,
        tbb_lower_k: r.planck.teffLowerK,
        tbb_chi2_red: r.planck.chi2Red,
        theta_mas: r.thetaMas,
        theta_err_mas: r.thetaErrMas,
        radius_rsun: r.radiusRsun,
        radius_err_rsun: r.radiusErrRsun,
        lum_lsun: r.lumLsun,
        lum_err_lsun: r.lumErrLsun,
        fbol_cgs: r.fbolCgs,
        fbol_err_cgs: r.fbolErrCgs,
        av: r.avMag,
        av_err: r.avFitted ? r.avErrMag : null,
        chi2_red: r.chi2Red,
        n_bands: r.nBands,
        bands_used: r.bandsUsed.join(' '),
        ir_excess_sigma: r.irExcessSigma,
        flags: r.flags.join(' '),
        lum_class: r.lumClass,
        lum_class_source: r.lumClassSource,
        feh: r.fehDex,
        model: r.photosphere ? `${r.photosphere.name} ${r.photosphere.version}` : null,
      }
    : {
        id: star.id,
        ra: star.raDeg ?? null,
        dec: star.decDeg ?? null,
        teff_k: null,
        teff_err_k: null,
        teff_err_formal_k: null,
        teff_lower_k: null,
        tbb_k: null,
        tbb_err_k: null,
        tbb_err_formal_k: null,
        tbb_lower_k: null,
        tbb_chi2_red: null,
        theta_mas: null,
        theta_err_mas: null,
        radius_rsun: null,
        radius_err_rsun: null,
        lum_lsun: null,
        lum_err_lsun: null,
        fbol_cgs: null,
        fbol_err_cgs: null,
        av: null,
        av_err: null,
        chi2_red: null,
        n_bands: 0,
        bands_used: '',
        ir_excess_sigma: null,
        flags: r.reason,
        lum_class: null,
        lum_class_source: null,
        feh: null,
        model: null,
      };
  if (star.reviewStatus !== undefined) row.review_status = star.reviewStatus;
  return row;
}

const POW10 = Array.from({ length: 23 }, (_, i) => Number(`1e${i}`));

/** A value as text: rounded to the column's significant digits, shortest form; null/NaN → ''. */
export function formatCatalogueValue(v: CatalogueValue | undefined, column?: CatalogueColumn): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'string') return v;
  if (!Number.isFinite(v)) return '';
  if (column?.digits === undefined || v === 0) return String(v);
  // Round to `digits` significant digits: n / 10^k is the double nearest the decimal, so String()
  // prints at most `digits` digits; much faster than toPrecision for catalogue-sized output.
  const decimals = column.digits - 1 - Math.floor(Math.log10(Math.abs(v)));
  if (decimals > 22 || decimals < -22) return String(Number(v.toPrecision(column.digits)));
  const p = POW10[Math.abs(decimals)];
  const x = decimals >= 0 ? v * p : v / p;
  // Near a tie the scaled product's own rounding may decide; toPrecision rounds the exact value.
  if (Math.abs(Math.abs(x - Math.trunc(x)) - 0.5) < 1e-6) return String(Number(v.toPrecision(column.digits)));
  return String(decimals >= 0 ? Math.round(x) / p : Math.round(x) * p);
}

/** RFC 4180: quote fields holding the delimiter, a quote, a line break or edge blanks. */
export function csvField(text: string, delimiter = ','): string {
  if (text.includes(delimiter) || text.includes('"') || text.includes('\n') || text.includes('\r') || text.startsWith(' ') || text.endsWith(' ') || text.startsWith('#')) {
    return `"${text.replace(/"/g, '""')}"`;
  }
  return text;
}

/**
 * Spreadsheet formula injection (OWASP "CSV Injection"): a text cell that starts with =, +, -, @,
 * a tab or a carriage return, also after leading blanks, gets a single quote in front so a
 * spreadsheet shows it as text instead of running it. Only text cells (ids, band lists, flags) pass
 * through here; numbers are written as numbers, so a negative declination stays -5.
 */
export function neutraliseFormula(text: string): string {
  return /^[ ]*[=+\-@\t\r]/.test(text) ? `'${text}` : text;
}

export function catalogueColumns(withReview = false): CatalogueColumn[] {
  return withReview ? [...CATALOGUE_COLUMNS, REVIEW_STATUS_COLUMN] : [...CATALOGUE_COLUMNS];
}

export function catalogueCsvHeader(columns: readonly CatalogueColumn[] = CATALOGUE_COLUMNS, delimiter = ','): string {
  return columns.map((c) => c.name).join(delimiter);
}

export function catalogueCsvLine(row: CatalogueRow, columns: readonly CatalogueColumn[] = CATALOGUE_COLUMNS, delimiter = ','): string {
  let s = '';
  for (let i = 0; i < columns.length; i++) {
    if (i > 0) s += delimiter;
    const v = row[columns[i].name];
    const text = formatCatalogueValue(v, columns[i]);
    s += csvField(typeof v === 'string' ? neutraliseFormula(text) : text, delimiter);
  }
  return s;
}

export interface Provenance {
  software: { name: string; version: string };
  bandLibraryVersion: string;
  law: string;
  rv: number;
  /** Fit options as given to the fit (floor, A_V default or fitted, excluded bands, clipping …). */
  options: Record<string, unknown>;
  /** ISO 8601 time the catalogue was made. */
  createdAt: string;
  input?: { file: string; sha256: string; format: string; rows: number; stars: number; rejectedRows: number };
  /** Bands whose curve reaches past the extinction law's range (the law's infrared form is extrapolated there). */
  extrapolatedBands?: string[];
  /** The temperature model (name and version); null or absent = Planck only. */
  photosphere?: string | null;
  notes?: string[];
}

/** Constants the numbers depend on (docs/science.md, "The science"). */
export const PROVENANCE_CONSTANTS =
  'CODATA 2018 (h, c, k_B exact; σ = 5.670374419e-8 W m-2 K-4); IAU 2015 Resolution B3 nominal solar values (R_sun = 6.957e8 m, L_sun = 3.828e26 W, Teff_sun = 5772 K); au = 1.495978707e11 m (IAU 2012 B2)';

const BLACKBODY_NOTE =
  'tbb_k (and teff_k of a Planck-only fit) is a single blackbody\'s colour temperature: on the mean dwarf sequence it is +10 to +17 % off Teff for A dwarfs, within ±2 % only from F5V to G5V, −3 to −9 % for K dwarfs and −9 to −16 % for M dwarfs; hot stars are weakly constrained (Rayleigh–Jeans tail, degeneracy with A_V).';

export function optionText(v: unknown): string {
  if (Array.isArray(v)) return v.length ? v.join(' ') : '(none)';
  if (v === undefined || v === null) return '(none)';
  if (typeof v === 'object') return JSON.stringify(v);
  return String(v);
}

/** Provenance as plain lines (no comment marker): the CSV writes them after '# ', other formats as metadata. */
export function provenanceLines(p: Provenance, columns: readonly CatalogueColumn[] = CATALOGUE_COLUMNS): string[] {
  const lines = [
    `${p.software.name} catalogue, software version ${p.software.version}`,
    `created: ${p.createdAt}`,
    `band library version: ${p.bandLibraryVersion}`,
    `constants: ${PROVENANCE_CONSTANTS}`,
    `temperature model: ${p.photosphere ? `${p.photosphere} (empirical photosphere calibrated on the mean dwarf sequence of Pecaut & Mamajek 2013 and the Gaia FGK benchmark stars, Soubiran et al. 2024); the pure Planck fit is in the tbb_* columns` : 'Planck only (teff_* = tbb_*)'}`,
    `extinction law: ${p.law}, R_V = ${p.rv}${p.extrapolatedBands && p.extrapolatedBands.length ? `; extrapolated past the law's range in bands: ${p.extrapolatedBands.join(' ')}` : ''}`,
    `options: ${Object.entries(p.options)
      .map(([k, v]) => `${k} = ${optionText(v)}`)
      .join('; ')}`,
  ];
  if (p.input) {
    lines.push(`input: ${p.input.file} (${p.input.format}, sha256 ${p.input.sha256}); ${p.input.rows} data rows, ${p.input.stars} stars read, ${p.input.rejectedRows} rows left out for input errors`);
  }
  lines.push(`note: ${BLACKBODY_NOTE}`);
  for (const n of p.notes ?? []) lines.push(`note: ${n}`);
  lines.push('columns:');
  for (const c of columns) lines.push(`  ${c.name}${c.unit ? ` [${c.unit}]` : ''}: ${c.description}`);
  lines.push('flags:');
  for (const [code, text] of Object.entries(FLAG_EXPLANATIONS)) lines.push(`  ${code}: ${text}`);
  if (columns.some((c) => c.name === 'excluded_bands')) {
    lines.push('excluded band reasons:');
    for (const [code, text] of Object.entries(EXCLUSION_EXPLANATIONS)) lines.push(`  ${code}: ${text}`);
  }
  return lines;
}

/** The provenance as leading '#' lines of a CSV file, each ending in a newline. */
export function provenanceCsvHeader(p: Provenance, columns: readonly CatalogueColumn[] = CATALOGUE_COLUMNS): string {
  return provenanceLines(p, columns)
    .map((l) => `# ${l}\n`)
    .join('');
}
