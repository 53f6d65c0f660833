// Builds the photosphere corrections from calibrating stars (pure; decision 0022). The caller measures
// d = ln(F_obs / (s·φ_b(Teff))) for every calibrating star and band, with s = (θ/2)² from the star's
// angular diameter (interferometric θ_LD, or R and distance for the dwarf sequence) and φ_b the Planck
// band mean at the reference Teff, and σ(d) from the photometry and the reference values' errors.
//
// Dwarfs, per band: ln c_b(ln T) is a uniform cubic B-spline (knot step KNOT_STEP in ln T) fitted by
// weighted least squares with a second-difference penalty λ (a P-spline, Eilers & Marx 1996, common
// practice). Leave-one-out residuals come from the hat matrix, r_i / (1 − H_ii), exact for a linear
// smoother. Giants, per band: the dwarf curve plus a stiffer P-spline (giantKnotStep, giantLambda) of
// the giants' difference from it; a band with fewer than minGiantStars giants is not calibrated for
// giants (Planck value).
// Per-band model scatter per temperature bin: what the leave-one-out residuals of individual stars
// show beyond their own errors (robust, 1.4826 × MAD); where only the mean sequence calibrates a bin
// (no star-to-star scatter in a mean), an assumed value is used and marked measured = false.

import { bsplineLocate, bsplineValue, bsplineWeights, type UniformSpline } from './bspline';
import { lnCorrection, type BandCorrection, type ClassModel, type LumClass, type PhotosphereData, type ScatterBin } from './model';

export interface CalibPoint {
  /** Star name (unique per source); the unit left out in leave-one-out work. */
  star: string;
  source: 'sequence' | 'benchmark';
  cls: LumClass;
  band: string;
  lnT: number;
  /** ln(F_obs / F_blackbody) at the reference Teff and angular diameter. */
  d: number;
  /** 1σ of d from the photometry and the reference Teff and θ. */
  sigma: number;
}

export interface CalibSettings {
  dwarfLnTMin: number;
  dwarfLnTMax: number;
  knotStep: number;
  lambda: number;
  giantLnTMin: number;
  giantLnTMax: number;
  giantKnotStep: number;
  giantLambda: number;
  minGiantStars: number;
  /** Temperature bin edges (K) for the scatter and the Teff term, inside the class range. */
  binEdgesK: number[];
  /** Scatter assumed where only the mean sequence calibrates a bin. */
  sequenceOnlyScatter: number;
  /** Smallest scatter reported for any bin (the residuals cannot resolve less). */
  minScatter: number;
  /** Calibrators further apart than this in ln T split a band's calibrated span. */
  gapLnT: number;
}

export const DEFAULT_CALIB_SETTINGS: CalibSettings = {
  dwarfLnTMin: Math.log(2300),
  dwarfLnTMax: Math.log(16000),
  knotStep: 0.05,
  lambda: 3,
  giantLnTMin: Math.log(3600),
  giantLnTMax: Math.log(5300),
  giantKnotStep: 0.05,
  giantLambda: 3,
  minGiantStars: 8,
  binEdgesK: [3900, 5200, 6500, 10000],
  sequenceOnlyScatter: 0.03,
  minScatter: 0.01,
  gapLnT: 0.08,
};

/** Solves A x = b for a symmetric positive-definite A (Cholesky, in place on copies). */
export function solveSpd(A: number[][], b: number[]): number[] {
  const n = b.length;
  const L = A.map((r) => r.slice());
  for (let j = 0; j < n; j++) {
    let d = L[j][j];
    for (let k = 0; k < j; k++) d -= L[j][k] * L[j][k];
    if (!(d > 0)) throw new Error('calibration matrix is not positive definite');
    L[j][j] = Math.sqrt(d);
    for (let i = j + 1; i < n; i++) {
      let s = L[i][j];
      for (let k = 0; k < j; k++) s -= L[i][k] * L[j][k];
      L[i][j] = s / L[j][j];
    }
  }
  const y = new Array<number>(n);
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= L[i][k] * y[k];
    y[i] = s / L[i][i];
  }
  const x = new Array<number>(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < n; k++) s -= L[k][i] * x[k];
    x[i] = s / L[i][i];
  }
  return x;
}

export function median(v: number[]): number {
  if (v.length === 0) return NaN;
  const s = v.slice().sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/** 1.4826 × median absolute deviation (robust σ; common practice). */
export function robustSigma(v: number[]): number {
  const m = median(v);
  return 1.4826 * median(v.map((x) => Math.abs(x - m)));
}

interface Residual {
  point: CalibPoint;
  /** Leave-one-out residual (against the final curve for a clipped point). */
  loo: number;
  clipped?: boolean;
}

function spansOf(lnTs: number[], gap: number): [number, number][] {
  const s = [...new Set(lnTs)].sort((a, b) => a - b);
  const spans: [number, number][] = [];
  let lo = s[0];
  let prev = s[0];
  for (let i = 1; i < s.length; i++) {
    if (s[i] - prev > gap) {
      spans.push([lo - 0.01, prev + 0.01]);
      lo = s[i];
    }
    prev = s[i];
  }
  spans.push([lo - 0.01, prev + 0.01]);
  return spans;
}

function scatterBins(res: Residual[], edgesK: number[], loK: number, hiK: number, st: CalibSettings): ScatterBin[] {
  const edges = [loK, ...edgesK.filter((e) => e > loK && e < hiK), hiK];
  const bins: ScatterBin[] = [];
  for (let i = 0; i + 1 < edges.length; i++) {
    const a = edges[i];
    const b = edges[i + 1];
    const inBin = res.filter((r) => {
      const T = Math.exp(r.point.lnT);
      return T >= a && (i + 2 === edges.length ? T <= b : T < b);
    });
    const stars = inBin.filter((r) => r.point.source === 'benchmark' && !r.clipped);
    let sigma: number;
    let measured: boolean;
    if (stars.length >= 5) {
      const rs = robustSigma(stars.map((r) => r.loo));
      const own = median(stars.map((r) => r.point.sigma * r.point.sigma));
      sigma = Math.sqrt(Math.max(0, rs * rs - own));
      measured = true;
    } else {
      const seq = inBin.map((r) => r.loo);
      const rms = seq.length ? Math.sqrt(seq.reduce((s, x) => s + x * x, 0) / seq.length) : 0;
      sigma = Math.max(rms, st.sequenceOnlyScatter);
      measured = false;
    }
    bins.push({ teffMinK: Math.round(a), teffMaxK: Math.round(b), sigma: Math.round(Math.max(sigma, st.minScatter) * 1e4) / 1e4, n: inBin.length, measured });
  }
  return bins;
}

/** A P-spline of one band on [x0, x1], with leave-one-out residuals. */
function fitSplineBand(points: CalibPoint[], x0: number, x1: number, knotStep: number, lambda: number): { spline: UniformSpline; residuals: Residual[] } {
  const intervals = Math.ceil((x1 - x0) / knotStep);
  const h = (x1 - x0) / intervals;
  const n = intervals + 3;
  const A = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  const rhs = new Array<number>(n).fill(0);
  const w4 = new Float64Array(4);
  const located = points.map((p) => bsplineLocate(x0, h, intervals, p.lnT));
  points.forEach((p, idx) => {
    const { i, t } = located[idx];
    bsplineWeights(t, w4);
    const w = 1 / (p.sigma * p.sigma);
    for (let a = 0; a < 4; a++) {
      rhs[i + a] += w * w4[a] * p.d;
      for (let b = 0; b < 4; b++) A[i + a][i + b] += w * w4[a] * w4[b];
    }
  });
  // Second-difference penalty λ Σ (c_j − 2c_{j+1} + c_{j+2})², scaled by the mean weight so λ is unitless.
  const meanW = points.reduce((s, p) => s + 1 / (p.sigma * p.sigma), 0) / Math.max(points.length, 1);
  const lam = lambda * meanW;
  for (let j = 0; j + 2 < n; j++) {
    const idx = [j, j + 1, j + 2];
    const c = [1, -2, 1];
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) A[idx[a]][idx[b]] += lam * c[a] * c[b];
  }
  // A tiny ridge keeps coefficients far from any data defined (they are tapered away anyway).
  for (let j = 0; j < n; j++) A[j][j] += 1e-9 * meanW;
  const coef = solveSpd(A, rhs);
  const spline = { x0, h, coef: coef.map((c) => Math.round(c * 1e7) / 1e7) };
  // Hat-matrix diagonal H_ii = w_i b_iᵀ A⁻¹ b_i for the leave-one-out residuals.
  const residuals: Residual[] = points.map((p, idx) => {
    const { i, t } = located[idx];
    bsplineWeights(t, w4);
    const e = new Array<number>(n).fill(0);
    for (let a = 0; a < 4; a++) e[i + a] = w4[a];
    const z = solveSpd(A, e);
    let hii = 0;
    for (let a = 0; a < 4; a++) hii += w4[a] * z[i + a];
    hii /= p.sigma * p.sigma;
    const r = p.d - bsplineValue(spline, p.lnT);
    return { point: p, loo: r / Math.max(1 - hii, 1e-3) };
  });
  return { spline, residuals };
}

/**
 * fitSplineBand with one round of clipping: benchmark points whose leave-one-out residual lies beyond
 * CLIP_SIGMA robust σ (saturated photometry of the brightest stars, e.g. Gaia G < 3) are dropped and
 * the band refitted; their residuals are still returned (against the refitted curve) for the scatter.
 */
export const CLIP_SIGMA = 4;
function fitClipped(points: CalibPoint[], x0: number, x1: number, knotStep: number, lambda: number): { spline: UniformSpline; residuals: Residual[]; clipped: number } {
  const first = fitSplineBand(points, x0, x1, knotStep, lambda);
  const bench = first.residuals.filter((r) => r.point.source === 'benchmark').map((r) => r.loo);
  if (bench.length < 5) return { ...first, clipped: 0 };
  const m = median(bench);
  const rs = Math.max(robustSigma(bench), 0.01);
  const keep = first.residuals.filter((r) => r.point.source !== 'benchmark' || Math.abs(r.loo - m) <= CLIP_SIGMA * rs).map((r) => r.point);
  if (keep.length === points.length) return { ...first, clipped: 0 };
  const second = fitSplineBand(keep, x0, x1, knotStep, lambda);
  const kept = new Set(keep);
  const residuals = [
    ...second.residuals,
    ...points.filter((p) => !kept.has(p)).map((p) => ({ point: p, loo: p.d - bsplineValue(second.spline, p.lnT), clipped: true })),
  ];
  return { spline: second.spline, residuals, clipped: points.length - keep.length };
}

function fitDwarfBand(points: CalibPoint[], st: CalibSettings): { band: BandCorrection; residuals: Residual[] } {
  const { spline, residuals, clipped } = fitClipped(points, st.dwarfLnTMin, st.dwarfLnTMax, st.knotStep, st.lambda);
  const spans = spansOf(points.map((p) => p.lnT), st.gapLnT);
  return { band: { spline, spans, scatter: [], nCalibrators: new Set(points.map((p) => p.star)).size, nClipped: clipped }, residuals };
}

export interface CalibrationOutput {
  classes: Record<LumClass, ClassModel>;
  residuals: Residual[];
}

/**
 * Corrections for every band with calibrators. `base` supplies the rest of a PhotosphereData (name,
 * version …) so the giant fit can evaluate the dwarf curve through lnCorrection.
 */
export function calibrate(points: CalibPoint[], base: Omit<PhotosphereData, 'classes'>, st: CalibSettings = DEFAULT_CALIB_SETTINGS): CalibrationOutput {
  const classes: Record<LumClass, ClassModel> = {
    dwarf: { teffMinK: 0, teffMaxK: 0, bands: {}, teffTerm: [] },
    giant: { teffMinK: 0, teffMaxK: 0, bands: {}, teffTerm: [] },
  };
  const all: Residual[] = [];
  const dwarfPts = points.filter((p) => p.cls === 'dwarf' && p.lnT >= st.dwarfLnTMin && p.lnT <= st.dwarfLnTMax);
  const dwarfT = dwarfPts.map((p) => Math.exp(p.lnT));
  classes.dwarf.teffMinK = Math.round(Math.min(...dwarfT));
  classes.dwarf.teffMaxK = Math.round(Math.max(...dwarfT));
  const bandKeys = [...new Set(points.map((p) => p.band))];
  for (const key of bandKeys) {
    const pts = dwarfPts.filter((p) => p.band === key);
    if (new Set(pts.map((p) => p.star)).size < 6) continue;
    const { band, residuals } = fitDwarfBand(pts, st);
    const T = pts.map((p) => Math.exp(p.lnT));
    band.scatter = scatterBins(residuals, st.binEdgesK, Math.min(...T), Math.max(...T), st);
    classes.dwarf.bands[key] = band;
    all.push(...residuals);
  }
  const partial: PhotosphereData = { ...base, classes } as PhotosphereData;
  const giantPts = points.filter((p) => p.cls === 'giant');
  if (giantPts.length > 0) {
    const gT = giantPts.map((p) => Math.exp(p.lnT));
    classes.giant.teffMinK = Math.round(Math.min(...gT));
    classes.giant.teffMaxK = Math.round(Math.max(...gT));
  }
  for (const key of bandKeys) {
    const pts = giantPts.filter((p) => p.band === key);
    if (!classes.dwarf.bands[key] || new Set(pts.map((p) => p.star)).size < st.minGiantStars) continue;
    // e = d − ln c_dwarf, fitted with a stiffer spline on the giants' own span.
    const ePts = pts.map((p) => ({ ...p, d: p.d - lnCorrection(partial, 'dwarf', key, p.lnT) }));
    const { spline, residuals, clipped } = fitClipped(ePts, st.giantLnTMin, st.giantLnTMax, st.giantKnotStep, st.giantLambda);
    const T = pts.map((p) => Math.exp(p.lnT));
    const band: BandCorrection = {
      offsetSpline: spline,
      nClipped: clipped,
      spans: [[Math.log(Math.min(...T)) - 0.01, Math.log(Math.max(...T)) + 0.01]],
      scatter: scatterBins(residuals, [], Math.min(...T), Math.max(...T), st),
      nCalibrators: new Set(pts.map((p) => p.star)).size,
    };
    classes.giant.bands[key] = band;
    all.push(...residuals);
  }
  return { classes, residuals: all };
}
