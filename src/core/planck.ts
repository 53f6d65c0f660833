// Planck's law and the Stefan–Boltzmann and Wien relations.
// B_λ(T) = 2hc²λ⁻⁵ / (exp(hc/λkT) − 1) (Planck 1901); expm1 keeps the Rayleigh–Jeans side exact
// where exp(x) − 1 would cancel. Where the exponent overflows a double the radiance is 0 (it is
// below 1e-300 of the peak there), never NaN.
import {
  C2_M_K,
  PLANCK_H,
  SI_FLAMBDA_TO_CGS_PER_ANGSTROM,
  SPEED_OF_LIGHT_M_S,
  STEFAN_BOLTZMANN_SIGMA,
  WIEN_B_M_K,
} from './constants';

/** exp(x) overflows a double above ~709.78. */
const MAX_EXPONENT = 709;

/** 2hc², W m² sr⁻¹. */
const C1_SI = 2 * PLANCK_H * SPEED_OF_LIGHT_M_S * SPEED_OF_LIGHT_M_S;
/** 2hc² for λ in Å and B_λ in erg s⁻¹ cm⁻² Å⁻¹ sr⁻¹: × (1e10)⁵ for λ⁻⁵, × 1e-7 for the unit. */
export const C1_CGS_ANGSTROM = C1_SI * 1e50 * SI_FLAMBDA_TO_CGS_PER_ANGSTROM;
/** hc/k in Å K. */
export const C2_ANGSTROM_K = C2_M_K * 1e10;

/** Spectral radiance B_λ(T) in W m⁻³ sr⁻¹ for λ in metres. */
export function planckLambdaSI(wavelengthM: number, teffK: number): number {
  if (!(wavelengthM > 0) || !(teffK > 0)) return 0;
  const x = C2_M_K / (wavelengthM * teffK);
  if (x > MAX_EXPONENT) return 0;
  const l2 = wavelengthM * wavelengthM;
  return C1_SI / (l2 * l2 * wavelengthM) / Math.expm1(x);
}

/**
 * Spectral radiance B_λ(T) in erg s⁻¹ cm⁻² Å⁻¹ sr⁻¹ for λ in Å (hot path of the band integrals:
 * multiply by π for the flux leaving the surface).
 */
export function planckLambdaCgsAngstrom(wavelengthAngstrom: number, teffK: number): number {
  if (!(wavelengthAngstrom > 0) || !(teffK > 0)) return 0;
  const x = C2_ANGSTROM_K / (wavelengthAngstrom * teffK);
  if (x > MAX_EXPONENT) return 0;
  const l2 = wavelengthAngstrom * wavelengthAngstrom;
  return C1_CGS_ANGSTROM / (l2 * l2 * wavelengthAngstrom) / Math.expm1(x);
}

/** Wien peak of B_λ: λ_max = b / T (m). */
export function wienPeakM(teffK: number): number {
  return WIEN_B_M_K / teffK;
}

/** Bolometric surface flux σT⁴, W m⁻². */
export function surfaceFluxWm2(teffK: number): number {
  const t2 = teffK * teffK;
  return STEFAN_BOLTZMANN_SIGMA * t2 * t2;
}

/** Luminosity 4πR²σT⁴ in W for a radius in metres (Stefan–Boltzmann law). */
export function luminosityW(radiusM: number, teffK: number): number {
  return 4 * Math.PI * radiusM * radiusM * surfaceFluxWm2(teffK);
}
