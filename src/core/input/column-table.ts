// The shapes of column mapping: the in-memory table every reader produces (ColumnTable), what a
// column means (ColumnRole), a mapping and its quality rules, and what applying it gives back.
// Pure types and vocabularies; the steps are in column-names.ts (detection), check-mapping.ts and
// apply-mapping.ts, and mapping.ts re-exports them all.
import type { Measurement } from '../types';
import type { LeftOutValue, ParallaxOrigin, SurveyRules } from './survey-rules';

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
  /** the star's luminosity class: dwarf or giant (overrides the batch's choice) */
  | 'lum_class'
  /** [Fe/H] in dex, recorded with the fit (the photosphere model is for near-solar stars) */
  | 'feh'
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
  | 'ul'
  /** Gaia renormalised unit weight error (ruwe) */
  | 'ruwe'
  /** Gaia phot_bp_rp_excess_factor (the raw C; the mapping corrects it for colour) */
  | 'bp_rp_excess'
  /** contamination and confusion letters, one per band in `bands` (2MASS cc_flg, AllWISE cc_flags) */
  | 'confusion'
  /** AllWISE ext_flg: 0 = point source; applies to every band in `bands` */
  | 'extended'
  /** distance in pc, used instead of 1/parallax */
  | 'distance'
  /** lower end of the distance interval, pc */
  | 'distance_lo'
  /** upper end of the distance interval, pc */
  | 'distance_hi';

export const COLUMN_ROLES: readonly ColumnRole[] = [
  'ignore', 'id', 'ra', 'dec', 'parallax', 'parallax_err', 'av', 'lum_class', 'feh', 'mag', 'mag_err', 'jy', 'jy_err',
  'mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err', 'quality', 'band', 'ul', 'ruwe', 'bp_rp_excess', 'confusion', 'extended',
  'distance', 'distance_lo', 'distance_hi',
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
  lum_class: 'luminosity class (dwarf or giant)',
  feh: '[Fe/H] (dex)',
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
  ruwe: 'Gaia RUWE',
  bp_rp_excess: 'Gaia BP/RP flux excess factor',
  confusion: 'contamination letters (2MASS cc_flg, AllWISE cc_flags)',
  extended: 'extended-source flag (AllWISE ext_flg)',
  distance: 'distance (pc)',
  distance_lo: 'distance, lower end (pc)',
  distance_hi: 'distance, upper end (pc)',
};

export interface ColumnAssignment {
  role: ColumnRole;
  /** Band key for band roles in the wide format. */
  band?: string;
  /** For 'quality' and 'confusion': the band each letter belongs to, in order (one band = the whole cell); for 'extended', the bands it applies to. */
  bands?: string[];
  /** For 'parallax': where it comes from (Gaia DR3 parallaxes get the zero-point). */
  origin?: ParallaxOrigin;
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
  /** The survey rules (bright limits, catalogue flags, native upper limits); on by default. */
  survey?: SurveyRules;
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
  /** Input column lum_class. */
  lumClass?: 'dwarf' | 'giant';
  /** Input column feh. */
  fehDex?: number;
  /** Input columns distance_pc, distance_lo_pc, distance_hi_pc: used instead of 1/parallax. */
  distancePc?: number;
  distanceLoPc?: number;
  distanceHiPc?: number;
  /** Where the parallax comes from (set whenever a parallax is). */
  parallaxOrigin?: ParallaxOrigin;
  /** Gaia RUWE above 1.4 on a star not too bright for it: possibly a binary, photometry may be blended (false: RUWE read, no flag; absent: no RUWE). */
  possibleCompanion?: boolean;
  /** Values in the file left out by the quality and survey rules, each with its reason. */
  leftOut?: LeftOutValue[];
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
  /** Band values left out by the survey rules (saturation, catalogue flags, BP/RP excess). */
  leftOutBySurveyRules: number;
  /** Band values read as upper limits by the catalogue's own convention. */
  nativeUpperLimits: number;
  /** Stars flagged possible_companion (Gaia RUWE). */
  possibleCompanions: number;
  errorCount: number;
  warningCount: number;
}

export interface DetectedMapping extends Mapping {
  /** Suggested quality rules (2MASS and WISE quality letters: keep A and B). */
  rules: MappingRules;
  /** Why a column was not used when its name looked like something (e.g. a second id column). */
  notes: Record<string, string>;
}
