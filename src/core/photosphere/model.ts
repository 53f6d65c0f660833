// The Starkiln empirical photosphere ("Kiln photosphere"): Planck band means times a smooth per-band
// correction c_b(Teff, class), calibrated on real stars (decision 0022; built by
// scripts/photosphere/build.ts into photosphere-v1.json with its provenance). Pure data + evaluation.
//
//   ln c_b(T) = a uniform cubic B-spline in ln T (dwarfs), fitted with a second-difference penalty;
//   giants: the dwarf curve plus a stiffer spline of the difference, fitted on benchmark giants (Gaia bands only).
// Outside a band's calibrated span ln c is held at the edge value and tapered to 0 (the Planck value)
// over TAPER_LN_T, so the model stays smooth for the fit while never extrapolating silently: the
// fit flags such bands (band_uncalibrated) and uses the assumed scatter for them.

import { bsplineValue, type UniformSpline } from './bspline';

export const LUM_CLASSES = ['dwarf', 'giant'] as const;
export type LumClass = (typeof LUM_CLASSES)[number];

/** Width in ln T over which a correction fades to the Planck value beyond its calibrated span. */
export const TAPER_LN_T = 0.1;

export interface ScatterBin {
  teffMinK: number;
  teffMaxK: number;
  /** Fractional model scatter of the band flux (1σ, in ln F). */
  sigma: number;
  /** Number of calibrating stars in the bin; measured = false when the value is an assumed minimum. */
  n: number;
  measured: boolean;
}

export interface BandCorrection {
  /** Dwarfs: the spline of ln c. */
  spline?: UniformSpline;
  /** Giants: ln c = ln c_dwarf + this spline (a stiffer P-spline of the giants' difference) inside the giant span. */
  offsetSpline?: UniformSpline;
  /** Calibrated spans in ln T (gaps between spans have no calibrating star). */
  spans: [number, number][];
  scatter: ScatterBin[];
  nCalibrators: number;
  /** Benchmark values dropped as beyond 4 robust σ (saturated photometry) before the final fit. */
  nClipped?: number;
}

export interface TeffTermBin {
  teffMinK: number;
  teffMaxK: number;
  /** What the band terms and the reference errors do not explain of the leave-one-out residuals, in ln T. */
  sigmaLnT: number;
  n: number;
  measured: boolean;
}

export interface ClassModel {
  teffMinK: number;
  teffMaxK: number;
  bands: Record<string, BandCorrection>;
  teffTerm: TeffTermBin[];
}

export interface PhotosphereData {
  format: 'starkiln-photosphere';
  formatVersion: 1;
  /** Plain name of our own. */
  name: string;
  /** Model version; goes up with the band library (a zero-point change makes a new version of both). */
  version: string;
  bandLibraryVersion: string;
  /** Band definition versions the corrections were built with (a band whose definition differs is uncalibrated). */
  bandVersions: Record<string, number>;
  /** Fractional scatter assumed for a band, range or class without calibration (Planck value used). */
  uncalibratedScatter: number;
  /** [Fe/H] beyond which a star is flagged as outside the near-solar calibration. */
  fehLimitDex: number;
  /** Radius (R☉, from the Planck fit and the parallax) above which a star is taken as a giant. */
  giantRadiusRsun: number;
  classes: Record<LumClass, ClassModel>;
  fitForm: string;
  provenance: Record<string, unknown>;
  accuracy?: Record<string, unknown>;
}

function smoothstep(x: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  return x * x * (3 - 2 * x);
}

function spanOf(b: BandCorrection): [number, number] {
  return [b.spans[0][0], b.spans[b.spans.length - 1][1]];
}

/** Taper weight and clamped x for a span. */
function taper(x: number, lo: number, hi: number): { w: number; xc: number } {
  if (x < lo) return { w: smoothstep(1 - (lo - x) / TAPER_LN_T), xc: lo };
  if (x > hi) return { w: smoothstep(1 - (x - hi) / TAPER_LN_T), xc: hi };
  return { w: 1, xc: x };
}

/** ln c_b at ln T for a class (0 = the Planck value, for bands the class does not calibrate). */
export function lnCorrection(data: PhotosphereData, cls: LumClass, key: string, lnT: number): number {
  const dwarf = data.classes.dwarf.bands[key];
  const dwarfValue = (): number => {
    if (!dwarf?.spline) return 0;
    const [lo, hi] = spanOf(dwarf);
    const { w, xc } = taper(lnT, lo, hi);
    return w === 0 ? 0 : w * bsplineValue(dwarf.spline, xc);
  };
  if (cls === 'dwarf') return dwarfValue();
  const giant = data.classes.giant.bands[key];
  if (!giant?.offsetSpline) return 0;
  const [lo, hi] = spanOf(giant);
  const { w, xc } = taper(lnT, lo, hi);
  if (w === 0) return 0;
  return w * (dwarfValue() + bsplineValue(giant.offsetSpline, xc));
}

/** Whether the class calibrates band key at this temperature (inside one of its spans). */
export function bandCalibrated(data: PhotosphereData, cls: LumClass, key: string, teffK: number): boolean {
  const b = data.classes[cls].bands[key];
  if (!b) return false;
  const x = Math.log(teffK);
  return b.spans.some(([lo, hi]) => x >= lo && x <= hi);
}

/** Fractional model scatter of band key at teffK (the assumed value where it is not calibrated). */
export function bandScatter(data: PhotosphereData, cls: LumClass, key: string, teffK: number): number {
  if (!bandCalibrated(data, cls, key, teffK)) return data.uncalibratedScatter;
  const bins = data.classes[cls].bands[key].scatter;
  for (const bin of bins) if (teffK >= bin.teffMinK && teffK < bin.teffMaxK) return bin.sigma;
  return teffK < bins[0].teffMinK ? bins[0].sigma : bins[bins.length - 1].sigma;
}

/** Whether teffK lies inside the class's calibrated temperature range. */
export function inClassRange(data: PhotosphereData, cls: LumClass, teffK: number): boolean {
  const c = data.classes[cls];
  return teffK >= c.teffMinK && teffK <= c.teffMaxK;
}

/** The calibration term σ(ln T) of the class at teffK (nearest bin outside the range). */
export function teffTermSigma(data: PhotosphereData, cls: LumClass, teffK: number): number {
  const bins = data.classes[cls].teffTerm;
  if (bins.length === 0) return 0;
  for (const bin of bins) if (teffK >= bin.teffMinK && teffK < bin.teffMaxK) return bin.sigmaLnT;
  return teffK < bins[0].teffMinK ? bins[0].sigmaLnT : bins[bins.length - 1].sigmaLnT;
}

/** A short label stored with every fit: name and version. */
export function photosphereLabel(data: PhotosphereData): string {
  return `${data.name} ${data.version}`;
}
