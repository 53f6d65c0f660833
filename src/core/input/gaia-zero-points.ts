// Gaia mean fluxes (e⁻/s) to Vega magnitudes: the zero-points the column mapping uses for the
// gaia_flux roles.

/** The Gaia bands whose mean fluxes the mapping converts. */
export const GAIA_KEYS = ['G', 'BP', 'RP'] as const;

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
export const MAG_PER_LN = 2.5 / Math.LN10;
