// Shared vocabulary of the science core (see src/core/README.md for the glossary).
// Contract between the band library / synthetic photometry and the fit engine.

/** How a passband curve weights the spectrum (docs/science.md, "Band means"). */
export type ResponseConvention = 'photon' | 'energy';

/** Magnitude system of a band's default magnitudes. */
export type MagnitudeSystem = 'vega' | 'ab';

export type ExtinctionLawKey = 'f99' | 'ccm89' | 'od94';

/** A zero-point with where it came from. Exactly one of the flux fields is set for Vega-type bands. */
export interface ZeroPoint {
  /** Band-mean F_λ of magnitude 0, erg s⁻¹ cm⁻² Å⁻¹ (Vega-type bands quoted that way). */
  fLambdaCgs?: number;
  /** Band-mean (or isophotal, see isophotal*) F_ν of magnitude 0, Jy. */
  fnuJy?: number;
  /** Relative (fractional) uncertainty of the zero-point, 0 when unknown. */
  relErr: number;
  /** Magnitude offset added to catalogue magnitudes to reach the system (e.g. u_AB = u_SDSS − 0.04 → −0.04). */
  catalogueOffsetMag?: number;
  /** WISE-style isophotal calibration: F_ν,0 quoted at this wavelength for an F_ν ∝ ν⁻² spectrum. */
  isophotalWavelengthAngstrom?: number;
  source: string;
}

export interface Band {
  /** Case-sensitive key used in input columns: `V`, `Ks`, `G`, `W1` … */
  key: string;
  label: string;
  /** Photometric system / instrument family, e.g. 'Bessell', '2MASS', 'Gaia DR3'. */
  system: string;
  magnitudeSystem: MagnitudeSystem;
  /** null while no published zero-point has been found: magnitudes are then rejected, flux input works. */
  zeroPoint: ZeroPoint | null;
  convention: ResponseConvention;
  /**
   * Curve nodes, ascending, in Å; response dimensionless, linear between nodes, on the scale of the
   * published table (peak 1 for most; band means and pivots do not depend on the scale).
   */
  wavelengthAngstrom: readonly number[];
  response: readonly number[];
  pivotAngstrom: number;
  /** Version of this band's definition (curve + zero-point); bumped on any change. */
  version: number;
  /** Original publication of the curve and the file it was derived from, with its licence notice. */
  citation: string;
  licence: string;
  /** Source file the curve was derived from, its checksum and any conversion applied. */
  derivedFrom?: { file: string; sha256?: string; conversion?: string };
}

/** A measured value in one band, as read from an input table. */
export interface Measurement {
  bandKey: string;
  /** Exactly one of mag or fnuJy is set. */
  mag?: number;
  magErr?: number;
  fnuJy?: number;
  fnuErrJy?: number;
  upperLimit?: boolean;
}

/** A measurement converted to the fit's unit: band-mean F_λ in erg s⁻¹ cm⁻² Å⁻¹. */
export interface BandFlux {
  bandKey: string;
  fluxCgs: number;
  /** 1σ, before the systematic floor is added. */
  errCgs: number;
  upperLimit: boolean;
}

export interface ExtinctionSpec {
  law: ExtinctionLawKey;
  rv: number;
}
