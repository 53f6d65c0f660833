// Physical constants and unit conversions used by the science core.
// CODATA 2018 (h, c, k_B exact since the 2019 SI; σ and Wien b are derived from them and quoted to
// the digits CODATA 2018 publishes). Nominal solar values: IAU 2015 Resolution B3. au: IAU 2012 B2.

/** Planck constant, J s (CODATA 2018, exact). */
export const PLANCK_H = 6.62607015e-34;
/** Speed of light in vacuum, m s⁻¹ (exact). */
export const SPEED_OF_LIGHT_M_S = 299792458;
/** Boltzmann constant, J K⁻¹ (CODATA 2018, exact). */
export const BOLTZMANN_K = 1.380649e-23;
/** Stefan–Boltzmann constant, W m⁻² K⁻⁴ (CODATA 2018). */
export const STEFAN_BOLTZMANN_SIGMA = 5.670374419e-8;
/** Wien wavelength displacement constant b, m K (CODATA 2018). */
export const WIEN_B_M_K = 2.897771955e-3;

/** Nominal solar radius, m (IAU 2015 B3). */
export const SOLAR_RADIUS_M = 6.957e8;
/** Nominal solar luminosity, W (IAU 2015 B3). */
export const SOLAR_LUMINOSITY_W = 3.828e26;
/** Nominal solar effective temperature, K (IAU 2015 B3). */
export const SOLAR_TEFF_K = 5772;
/** Astronomical unit, m (IAU 2012 B2). */
export const AU_M = 1.495978707e11;
/** Parsec, m: au / tan(1″) ≈ au · 648000/π (IAU 2015 B2). */
export const PARSEC_M = (AU_M * 648000) / Math.PI;
/** Milliarcseconds per radian: 180/π · 3600 · 1000. */
export const MAS_PER_RAD = 206264806.247;

/** AB magnitude zero-point, Jy (Oke & Gunn 1983). */
export const AB_ZERO_POINT_JY = 3631;

/** 1 Jy in erg s⁻¹ cm⁻² Hz⁻¹. */
export const JY_TO_CGS = 1e-23;
/** Speed of light in Å s⁻¹: the factor in F_λ[per Å] = F_ν[per Hz] · c / λ². */
export const SPEED_OF_LIGHT_ANGSTROM_S = SPEED_OF_LIGHT_M_S * 1e10;
/** 1 W m⁻² m⁻¹ (SI spectral irradiance) in erg s⁻¹ cm⁻² Å⁻¹: 1e7 erg / (1e4 cm² · 1e10 Å). */
export const SI_FLAMBDA_TO_CGS_PER_ANGSTROM = 1e-7;
/** Second radiation constant hc/k, m K. */
export const C2_M_K = (PLANCK_H * SPEED_OF_LIGHT_M_S) / BOLTZMANN_K;

/** Band-mean F_ν in Jy → F_λ in erg s⁻¹ cm⁻² Å⁻¹ at wavelength λ (Å); for band means use the pivot. */
export function fnuJyToFlambdaCgs(fnuJy: number, wavelengthAngstrom: number): number {
  return (fnuJy * JY_TO_CGS * SPEED_OF_LIGHT_ANGSTROM_S) / (wavelengthAngstrom * wavelengthAngstrom);
}

/** F_λ in erg s⁻¹ cm⁻² Å⁻¹ → F_ν in Jy at wavelength λ (Å). */
export function flambdaCgsToFnuJy(flambdaCgs: number, wavelengthAngstrom: number): number {
  return (flambdaCgs * wavelengthAngstrom * wavelengthAngstrom) / SPEED_OF_LIGHT_ANGSTROM_S / JY_TO_CGS;
}

/** F_ν in Jy → AB magnitude (Oke & Gunn 1983). */
export function fnuJyToAbMag(fnuJy: number): number {
  return -2.5 * Math.log10(fnuJy / AB_ZERO_POINT_JY);
}

/** AB magnitude → F_ν in Jy. */
export function abMagToFnuJy(abMag: number): number {
  return AB_ZERO_POINT_JY * Math.pow(10, -0.4 * abMag);
}
