// What the surveys themselves say about their photometry: the bright (saturation) limit of each
// Gaia, 2MASS and AllWISE band, the catalogue flags read beside the magnitudes (2MASS cc_flg, AllWISE
// cc_flags and ext_flg, Gaia RUWE and the BP/RP flux excess), and which column names are a survey's
// own. Applied by the column mapping (apply-mapping.ts) as it reads each row; decision 0028.

/** Why a value read from a file was left out before the fit (listed with the fit's excluded bands). */
export type LeftOutReason = 'quality_letter' | 'saturated' | 'catalogue_flag' | 'bp_rp_excess';

export interface LeftOutValue {
  bandKey: string;
  reason: LeftOutReason;
  /** Plain words: the value, the limit or flag, and its source. */
  detail: string;
}

export interface BrightLimit {
  /** Values brighter (smaller) than this magnitude are left out as saturated. */
  mag: number;
  /** The limit is on this band's magnitude of the same star (Gaia BP's is stated in G). */
  onBand?: string;
  source: string;
}

/**
 * Bright limits per band. Below them the survey's own documentation says the photometry is
 * saturated or its saturation correction is not calibrated.
 */
export const BRIGHT_LIMITS: Readonly<Record<string, BrightLimit>> = {
  // Gaia EDR3 documentation §5.5.2 "Saturation correction" (Riello et al. 2021, A&A 649, A3): the
  // bright-star corrections (gaiaBrightCorrection below) hold for 2 < G < 8, for BP at 2 < G < 3.94 and
  // for RP at 2 < G_RP < 3.45. Brighter than 2 mag nothing is calibrated: those values are left out.
  G: { mag: 2.0, source: 'Gaia EDR3 documentation §5.5.2 (Riello et al. 2021): no bright-star correction brighter than G 2' },
  BP: { mag: 2.0, onBand: 'G', source: 'Gaia EDR3 documentation §5.5.2 (Riello et al. 2021): no BP bright-star correction brighter than G 2' },
  RP: { mag: 2.0, source: 'Gaia EDR3 documentation §5.5.2 (Riello et al. 2021): no RP bright-star correction brighter than G_RP 2' },
  // 2MASS All-Sky Explanatory Supplement (Cutri et al. 2003): stars brighter than about
  // J 9, H 8.5, Ks 8 saturate the 1.3 s exposures and are measured on the 51 ms Read_1 frames, which
  // saturate in turn near J 4.5, H 4, Ks 3.5 (from memory); brighter values are PSF-wing estimates.
  J: { mag: 4.5, source: '2MASS Explanatory Supplement (Cutri et al. 2003): 51 ms Read_1 saturation, from memory' },
  H: { mag: 4.0, source: '2MASS Explanatory Supplement (Cutri et al. 2003): 51 ms Read_1 saturation, from memory' },
  Ks: { mag: 3.5, source: '2MASS Explanatory Supplement (Cutri et al. 2003): 51 ms Read_1 saturation, from memory' },
  // WISE All-Sky Explanatory Supplement (Cutri et al. 2012): saturation onset for point
  // sources W1 8.1, W2 6.7, W3 3.8, W4 −0.4 mag; the AllWISE Supplement §II.1 repeats "W1 < 8 and
  // W2 < 7" as the nominal W1/W2 saturation limits. (W3 and W4 values from memory.)
  W1: { mag: 8.1, source: 'WISE All-Sky Explanatory Supplement (Cutri et al. 2012): W1 saturation onset 8.1 mag' },
  W2: { mag: 6.7, source: 'WISE All-Sky Explanatory Supplement (Cutri et al. 2012): W2 saturation onset 6.7 mag' },
  W3: { mag: 3.8, source: 'WISE All-Sky Explanatory Supplement (Cutri et al. 2012): W3 saturation onset 3.8 mag, from memory' },
  W4: { mag: -0.4, source: 'WISE All-Sky Explanatory Supplement (Cutri et al. 2012): W4 saturation onset −0.4 mag, from memory' },
};

/** Where Gaia's bright-star correction of a band applies: on which band's magnitude, and its range. */
export const GAIA_BRIGHT_CORRECTION_RANGE: Readonly<Record<'G' | 'BP' | 'RP', { on: 'G' | 'RP'; from: number; to: number; equation: string }>> = {
  G: { on: 'G', from: 2, to: 8, equation: '5.29' },
  BP: { on: 'G', from: 2, to: 3.94, equation: '5.30' },
  RP: { on: 'RP', from: 2, to: 3.45, equation: '5.31' },
};

/**
 * Gaia's published correction for saturation at the bright end, m_corr − m in magnitudes, for a
 * catalogue mean magnitude of G, BP or RP (Gaia EDR3 documentation §5.5.2, eqs. 5.29–5.31; the DR3
 * mean magnitudes are the EDR3 ones). `onMag` is the magnitude the relation is stated in: G for G and
 * BP, G_RP for RP. 0 where the star is fainter than the relation's range (no saturation to correct);
 * undefined where it is brighter than the range (not calibrated: the value is left out as saturated).
 */
export function gaiaBrightCorrection(band: 'G' | 'BP' | 'RP', onMag: number): number | undefined {
  const r = GAIA_BRIGHT_CORRECTION_RANGE[band];
  if (onMag >= r.to) return 0;
  if (!(onMag > r.from)) return undefined;
  const x = onMag;
  if (band === 'G') return -0.09892 + 0.059 * x - 0.009775 * x * x + 0.0004934 * x * x * x;
  if (band === 'BP') return -0.9921 - 0.02598 * x + 0.1833 * x * x - 0.02862 * x * x * x;
  return -14.94 + 14.41 * x - 4.657 * x * x + 0.503 * x * x * x;
}

/**
 * RUWE above this suggests a non-single source (Lindegren et al. 2021, A&A 649, A2, and the Gaia
 * EDR3 documentation; 1.4 is the value they suggest, common practice).
 */
export const RUWE_MAX = 1.4;
/**
 * Brighter than this G, RUWE is not read: the astrometric calibration of very bright stars is poor
 * and single stars show RUWE well above 1.4 (from memory, Lindegren et al. 2021 on G < 6; on the
 * Gaia FGK benchmark table 34 of the 36 stars with RUWE > 1.4 have G < 5). Our choice.
 */
export const RUWE_BRIGHT_G = 6;

/**
 * Corrected BP/RP flux excess C* = C − f(BP − RP) and its 1σ spread σ_C*(G) (Riello et al. 2021,
 * Table 2 and Eq. 18; coefficients from memory). |C*| > N σ_C* means BP and RP hold flux from a
 * neighbour or the background: they are left out. N = 3 (the paper's example; our choice).
 */
export function correctedBpRpExcess(excessFactor: number, bpRp: number): number {
  const x = bpRp;
  const f = x < 0.5 ? 1.15436 + 0.033772 * x + 0.032277 * x * x : x < 4 ? 1.162004 + 0.011464 * x + 0.049255 * x * x - 0.005879 * x * x * x : 1.057572 + 0.140537 * x;
  return excessFactor - f;
}

export function bpRpExcessSigma(gMag: number): number {
  return 0.0059898 + 8.817481e-12 * Math.pow(gMag, 7.618399);
}

export const BP_RP_EXCESS_NSIGMA = 3;

/** Where a parallax comes from; decides whether the Gaia DR3 zero-point applies (decision 0028). */
export type ParallaxOrigin = 'gaia_dr3' | 'hipparcos' | 'other';

/**
 * Gaia DR3 global parallax zero-point Z (mas): ϖ_corrected = ϖ − Z, so Z = −0.017 adds 0.017 mas.
 * The quasar median of Lindegren et al. 2021 (A&A 649, A4), from memory. Applied by default to
 * parallaxes recognised as Gaia DR3, never to Hipparcos parallaxes or a given distance.
 */
export const GAIA_DR3_PARALLAX_ZERO_POINT_MAS = -0.017;

/** How the survey rules are applied; every field has a default (the rules are on). */
export interface SurveyRules {
  /**
   * 'catalogue' (default): bright limits on columns named as a survey names them (j_m, w1mpro,
   * phot_g_mean_flux, Jmag …), not on canonical `<band>` columns, which are the user's curated
   * values; 'all': on canonical magnitude columns too; 'off': no bright limits.
   */
  brightLimits?: 'catalogue' | 'all' | 'off';
  /** Bright limit per band replacing BRIGHT_LIMITS (magnitude of the band itself). */
  brightLimitMag?: Record<string, number>;
  /** Read the catalogue flags (cc_flg, cc_flags, ext_flg, RUWE, BP/RP excess); default true. */
  catalogueFlags?: boolean;
  /** 2MASS U letters and AllWISE null-error magnitudes become upper limits; default true. */
  nativeUpperLimits?: boolean;
  /** Where the parallax column comes from, overriding what the column names suggest. */
  parallaxOrigin?: ParallaxOrigin;
}

export const SURVEY_BANDS: Readonly<Record<string, '2MASS' | 'AllWISE' | 'Gaia'>> = {
  J: '2MASS',
  H: '2MASS',
  Ks: '2MASS',
  W1: 'AllWISE',
  W2: 'AllWISE',
  W3: 'AllWISE',
  W4: 'AllWISE',
  G: 'Gaia',
  BP: 'Gaia',
  RP: 'Gaia',
};

/** Canonical names of a band's value columns: the user's curated values, no bright limit by default. */
export function isCanonicalValueColumn(name: string, band: string): boolean {
  return name === band || name === `${band}_ul` || name === `${band}_jy` || name === `${band}_jy_ul`;
}

/** The bright limit for `band` under `rules` (undefined = none), with the band the limit is on. */
export function brightLimitFor(band: string, rules: SurveyRules | undefined): BrightLimit | undefined {
  const o = rules?.brightLimitMag?.[band];
  if (o !== undefined) return { mag: o, source: 'set for this import' };
  return BRIGHT_LIMITS[band];
}

/**
 * A confusion/contamination flag letter left out: '0' is clean in both 2MASS cc_flg and AllWISE
 * cc_flags; any other letter (persistence, diffraction spike, halo, optical ghost, confusion) marks
 * a flux that may not be the star's alone (the column descriptions of the 2MASS and AllWISE
 * Explanatory Supplements; common practice for clean samples).
 */
export function confusionLeftOut(letter: string): boolean {
  return letter !== '' && letter !== '0';
}
