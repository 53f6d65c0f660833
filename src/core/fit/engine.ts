// The fit's hot path: weighted least squares y_i = s·φ_i(T, A_V) through the tables (method: README.md).
//
// One FitEngine per thread is reused for every star: inputs, scratch and outputs are typed arrays or
// numeric fields, so fitting a star allocates nothing. Usage:
//   engine.begin(); engine.add(bandIndex, fluxCgs, sigmaCgs, isUpperLimit, excludeReason) …;
//   engine.run(settings, avMag, parallaxMas, parallaxErrMas)  → status (0 = ok); results in fields.
// fit-star.ts wraps this in the object API; fitPacked() in batch.ts runs it over packed catalogues.
//
// A_V fixed: the profile χ²(u = ln T) with s* = Σwyφ / Σwφ² in closed form is searched on a coarse
// ln T grid (≈10 % steps), then a safeguarded Newton iteration on dχ²/du = 0 finishes it.
// A_V fitted: coarse (ln T, A_V) grid, then Levenberg–Marquardt over (ln T, ln s, A_V) with A_V kept
// inside its bounds (our own small LM: ml-levenberg-marquardt allocates per iteration; the tests check
// this LM against it). The A_V solver lives in av-solver.ts, the 2×2/3×3 solves in linear-algebra.ts;
// everything a fixed-A_V star runs through (the model, the profile, the coarse and fine searches, Newton)
// stays in this file so the hot path reads in one place.
// Upper limits are censored: a limit adds w(y − sφ)² only while the model exceeds it.

import {
  AV_STEP_MAG,
  COARSE_STRIDE,
  FitTables,
  GHOST,
  LN_T_MAX,
  LN_T_MIN,
  LN_T_STEP,
  N_COARSE,
  N_INTERVALS,
  N_T,
  avWeights,
  planeOf,
  type Plane,
} from './grid';
import { FLAG_BITS } from './flags';
import { deriveInto, type Derived } from './derived';
import { AvSolver } from './av-solver';

/** Why a band takes no part in the fit (its residual is still reported). */
export const EXCLUDE_NONE = 0;
export const EXCLUDE_USER = 1;
export const EXCLUDE_LONG = 2;
export const EXCLUDE_CLIPPED = 3;
/** Rejected by the robust test of rejection.ts (set by fitStar, never by the engine). */
export const EXCLUDE_REJECTED = 4;

export const STATUS_OK = 0;
export const STATUS_FEW_BANDS = 1;
export const STATUS_NO_CONVERGENCE = 2;

/** One-sided 95 % Δχ² for the Rayleigh–Jeans lower bound: 1.645² (normal quantile; common practice). */
export const LOWER_BOUND_DCHI2 = 2.705543;
/** Reduced χ² above which `chi2_high` is raised. */
export const CHI2_HIGH = 5;
export const OUTLIER_SIGMA = 3;
export const MAX_CLIPPED = 2;
/** A solution this close to ln T_min (a quarter of a table node) is at the grid's cool edge. */
export const COOL_EDGE_LN_T = 0.25 * LN_T_STEP;
/** Newton stops once the next step in ln T is below this (T to 1e-6 relative, far below any error). */
const NEWTON_TOL = 1e-6;

export interface EngineSettings {
  fitAv: boolean;
  avMinMag: number;
  avMaxMag: number;
  clip: boolean;
  /** Extra fractional Teff error added in quadrature to the reported one (0 = off). */
  modelErrorFraction: number;
  /** A_V-fitting solver: 'profile' (default, fast) or 'lm' (plain 3-parameter LM, the fallback; for tests). */
  avSolver?: 'profile' | 'lm';
}

export class FitEngine {
  readonly maxBands: number;
  // ---- inputs (in add order until run() partitions them: fitted detections, fitted limits, others)
  n = 0;
  nDet = 0;
  nFit = 0;
  readonly band: Int32Array;
  readonly y: Float64Array;
  readonly sigma: Float64Array;
  readonly w: Float64Array;
  readonly invSigma: Float64Array;
  /** band·N_T + GHOST: the offset of the band's first interior node in a plane's arrays. */
  readonly offT: Int32Array;
  readonly upper: Uint8Array;
  readonly exclude: Uint8Array;
  /** Position of each slot in add order (so callers can map residuals back). */
  readonly order: Int32Array;
  // ---- scratch, per slot
  readonly phi: Float64Array;
  readonly dphi: Float64Array;
  readonly d2phi: Float64Array;
  readonly dphiA: Float64Array;
  readonly active: Uint8Array;
  readonly residual: Float64Array;
  /** Profile χ² at the coarse nodes of the last coarseSearch() (engine-internal, read by the A_V solver). */
  readonly coarseChi2: Float64Array;
  private readonly offC: Int32Array;
  private readonly wyC: Float64Array;
  private readonly wA = new Float64Array(4);
  private readonly dwA = new Float64Array(4);
  private planes: Plane[] = [];
  private singlePlane = true;
  private readonly avSolver: AvSolver;
  // ---- outputs
  status = STATUS_OK;
  flags = 0;
  u = 0;
  s = 0;
  avMag = 0;
  chi2 = 0;
  dof = 0;
  chi2Red = NaN;
  /** Formal covariance of (u = ln T, ln s, A_V); A_V rows are 0 when A_V is fixed or at a bound. */
  readonly cov = new Float64Array(9);
  avFree = false;
  teffLowerK = NaN;
  irExcessSigma = NaN;
  nClipped = 0;
  iterations = 0;
  readonly derived: Derived;

  /** Evaluate every coarse node (≈ 20 % steps) instead of every other one; the photosphere engines do. */
  denseCoarse = false;

  constructor(
    readonly tables: FitTables,
    maxBands = 64,
  ) {
    this.maxBands = maxBands;
    this.band = new Int32Array(maxBands);
    this.y = new Float64Array(maxBands);
    this.sigma = new Float64Array(maxBands);
    this.w = new Float64Array(maxBands);
    this.invSigma = new Float64Array(maxBands);
    this.offT = new Int32Array(maxBands);
    this.upper = new Uint8Array(maxBands);
    this.exclude = new Uint8Array(maxBands);
    this.order = new Int32Array(maxBands);
    this.phi = new Float64Array(maxBands);
    this.dphi = new Float64Array(maxBands);
    this.d2phi = new Float64Array(maxBands);
    this.dphiA = new Float64Array(maxBands);
    this.active = new Uint8Array(maxBands);
    this.residual = new Float64Array(maxBands);
    this.coarseChi2 = new Float64Array(N_COARSE);
    this.offC = new Int32Array(maxBands);
    this.wyC = new Float64Array(maxBands);
    this.derived = {
      teffK: NaN, teffErrFormalK: NaN, teffErrK: NaN, thetaMas: NaN, thetaErrMas: NaN, fbolCgs: NaN,
      fbolErrCgs: NaN, radiusRsun: NaN, radiusErrRsun: NaN, lumLsun: NaN, lumErrLsun: NaN, avErrMag: NaN,
      errScale: 1, corrTeffTheta: NaN, plxFlags: 0,
    };
    this.avSolver = new AvSolver(this);
  }

  begin(): void {
    this.n = 0;
  }

  /** sigmaCgs must already include the systematic floor. Returns false when the star has too many bands. */
  add(bandIndex: number, fluxCgs: number, sigmaCgs: number, isUpperLimit: boolean, excludeReason: number): boolean {
    const k = this.n;
    if (k >= this.maxBands) return false;
    this.band[k] = bandIndex;
    this.offT[k] = bandIndex * N_T + GHOST;
    this.y[k] = fluxCgs;
    this.sigma[k] = sigmaCgs;
    const inv = 1 / sigmaCgs;
    this.invSigma[k] = inv;
    this.w[k] = inv * inv;
    this.upper[k] = isUpperLimit ? 1 : 0;
    this.exclude[k] = excludeReason;
    this.order[k] = k;
    this.n = k + 1;
    return true;
  }

  private swap(a: number, b: number): void {
    if (a === b) return;
    let t: number;
    t = this.band[a]; this.band[a] = this.band[b]; this.band[b] = t;
    t = this.offT[a]; this.offT[a] = this.offT[b]; this.offT[b] = t;
    t = this.y[a]; this.y[a] = this.y[b]; this.y[b] = t;
    t = this.sigma[a]; this.sigma[a] = this.sigma[b]; this.sigma[b] = t;
    t = this.w[a]; this.w[a] = this.w[b]; this.w[b] = t;
    t = this.invSigma[a]; this.invSigma[a] = this.invSigma[b]; this.invSigma[b] = t;
    t = this.upper[a]; this.upper[a] = this.upper[b]; this.upper[b] = t;
    t = this.exclude[a]; this.exclude[a] = this.exclude[b]; this.exclude[b] = t;
    t = this.order[a]; this.order[a] = this.order[b]; this.order[b] = t;
  }

  /** Fitted detections first, then fitted upper limits, then excluded bands. */
  private partition(): void {
    let p = 0;
    for (let k = 0; k < this.n; k++) if (this.exclude[k] === EXCLUDE_NONE && this.upper[k] === 0) this.swap(k, p++);
    this.nDet = p;
    for (let k = p; k < this.n; k++) if (this.exclude[k] === EXCLUDE_NONE && this.upper[k] === 1) this.swap(k, p++);
    this.nFit = p;
  }

  /** Sets up the planes for an A_V value: one plane when A_V sits on a plane, else the four around it. */
  private usePlanes(avMag: number): void {
    const pk = planeOf(avMag);
    if (pk.exact) {
      this.singlePlane = true;
      if (this.planes.length !== 1) this.planes = [this.tables.plane(pk.k)];
      else if (this.planes[0].avMag !== pk.k * AV_STEP_MAG || !this.tables.planeReady(pk.k)) this.planes[0] = this.tables.plane(pk.k);
      return;
    }
    this.usePlanesFour(avMag);
  }

  /**
   * The four planes around an A_V value, interpolated (a free A_V always uses these, so dφ/dA_V exists
   * at plane nodes too). Engine-internal: called by usePlanes() and the A_V solver.
   */
  usePlanesFour(avMag: number): void {
    this.singlePlane = false;
    const k0 = avWeights(avMag, this.wA, this.dwA);
    if (this.planes.length !== 4) this.planes = [this.planes[0], this.planes[0], this.planes[0], this.planes[0]];
    for (let q = 0; q < 4; q++) {
      const k = k0 - 1 + q;
      const cur = this.planes[q];
      if (cur === undefined || cur.avMag !== k * AV_STEP_MAG || !this.tables.planeReady(k)) this.planes[q] = this.tables.plane(k);
    }
  }

  /**
   * φ, dφ/du and d²φ/du² (and dφ/dA_V when planes are interpolated) for slots [0, count) at u,
   * with the A_V weights already set by usePlanes(). Engine-internal (the A_V solver calls it too).
   */
  evalModel(u: number, count: number): void {
    this.evalModelRange(u, 0, count);
  }

  private evalModelRange(u: number, from: number, to: number): void {
    let x = (u - LN_T_MIN) / LN_T_STEP;
    if (x < 0) x = 0;
    else if (x > N_INTERVALS) x = N_INTERVALS;
    let i = Math.floor(x);
    if (i >= N_INTERVALS) i = N_INTERVALS - 1;
    const t = x - i;
    const h = LN_T_STEP;
    const t2 = t * t;
    const t3 = t2 * t;
    const h00 = 2 * t3 - 3 * t2 + 1;
    const h10 = (t3 - 2 * t2 + t) * h;
    const h01 = -2 * t3 + 3 * t2;
    const h11 = (t3 - t2) * h;
    const g00 = (6 * t2 - 6 * t) / h;
    const g10 = 3 * t2 - 4 * t + 1;
    const g01 = -g00;
    const g11 = 3 * t2 - 2 * t;
    const q00 = (12 * t - 6) / (h * h);
    const q10 = (6 * t - 4) / h;
    const q01 = -q00;
    const q11 = (6 * t - 2) / h;
    const offT = this.offT;
    const phi = this.phi;
    const dphi = this.dphi;
    const d2phi = this.d2phi;
    if (this.singlePlane) {
      const L = this.planes[0].lnPhi;
      const D = this.planes[0].dLnPhi;
      for (let k = from; k < to; k++) {
        const o = offT[k] + i;
        const y0 = L[o];
        const y1 = L[o + 1];
        const m0 = D[o];
        const m1 = D[o + 1];
        const lv = h00 * y0 + h10 * m0 + h01 * y1 + h11 * m1;
        const l1 = g00 * y0 + g10 * m0 + g01 * y1 + g11 * m1;
        const l2 = q00 * y0 + q10 * m0 + q01 * y1 + q11 * m1;
        const p = Math.exp(lv);
        phi[k] = p;
        dphi[k] = p * l1;
        d2phi[k] = p * (l2 + l1 * l1);
      }
      return;
    }
    const wA = this.wA;
    const dwA = this.dwA;
    const dphiA = this.dphiA;
    const P0 = this.planes[0], P1 = this.planes[1], P2 = this.planes[2], P3 = this.planes[3];
    const w0 = wA[0], w1 = wA[1], w2 = wA[2], w3 = wA[3];
    const e0 = dwA[0], e1 = dwA[1], e2 = dwA[2], e3 = dwA[3];
    const L0 = P0.lnPhi, D0 = P0.dLnPhi, L1 = P1.lnPhi, D1 = P1.dLnPhi;
    const L2 = P2.lnPhi, D2 = P2.dLnPhi, L3 = P3.lnPhi, D3 = P3.dLnPhi;
    for (let k = from; k < to; k++) {
      const o = offT[k] + i;
      // The same Hermite basis in every plane: combine the planes' node data first (linear in them).
      const y0 = w0 * L0[o] + w1 * L1[o] + w2 * L2[o] + w3 * L3[o];
      const y1 = w0 * L0[o + 1] + w1 * L1[o + 1] + w2 * L2[o + 1] + w3 * L3[o + 1];
      const m0 = w0 * D0[o] + w1 * D1[o] + w2 * D2[o] + w3 * D3[o];
      const m1 = w0 * D0[o + 1] + w1 * D1[o + 1] + w2 * D2[o + 1] + w3 * D3[o + 1];
      const ay0 = e0 * L0[o] + e1 * L1[o] + e2 * L2[o] + e3 * L3[o];
      const ay1 = e0 * L0[o + 1] + e1 * L1[o + 1] + e2 * L2[o + 1] + e3 * L3[o + 1];
      const am0 = e0 * D0[o] + e1 * D1[o] + e2 * D2[o] + e3 * D3[o];
      const am1 = e0 * D0[o + 1] + e1 * D1[o + 1] + e2 * D2[o + 1] + e3 * D3[o + 1];
      const lv = h00 * y0 + h10 * m0 + h01 * y1 + h11 * m1;
      const l1 = g00 * y0 + g10 * m0 + g01 * y1 + g11 * m1;
      const l2 = q00 * y0 + q10 * m0 + q01 * y1 + q11 * m1;
      const la = h00 * ay0 + h10 * am0 + h01 * ay1 + h11 * am1;
      const p = Math.exp(lv);
      phi[k] = p;
      dphi[k] = p * l1;
      d2phi[k] = p * (l2 + l1 * l1);
      dphiA[k] = p * la;
    }
  }

  /** Closed-form s for the current φ with the censored limits (active set grown until stable). */
  private solveScale(): number {
    const nDet = this.nDet;
    const nFit = this.nFit;
    const y = this.y, w = this.w, phi = this.phi, active = this.active;
    let A = 0;
    let B = 0;
    for (let k = 0; k < nDet; k++) {
      const wp = w[k] * phi[k];
      A += wp * y[k];
      B += wp * phi[k];
    }
    let s = A / B;
    if (nFit === nDet) return s;
    for (let k = nDet; k < nFit; k++) active[k] = 0;
    // Adding a violated limit only lowers s, so the active set grows monotonically: ≤ nUL rounds.
    for (let round = 0; round <= nFit - nDet; round++) {
      let changed = false;
      for (let k = nDet; k < nFit; k++) {
        if (active[k] === 0 && s * phi[k] > y[k]) {
          active[k] = 1;
          const wp = w[k] * phi[k];
          A += wp * y[k];
          B += wp * phi[k];
          changed = true;
        }
      }
      if (!changed) break;
      s = A / B;
    }
    return s;
  }

  // Profile quantities at the last profileAt() call.
  private gradU = 0;
  private hessU = 0;

  // profileAtFast and profileAtFast4 below are the same Hermite profile loop, written twice on purpose.
  // Kept apart because (1) the one-plane loop is what nearly every star runs (A_V fixed on a plane node,
  // no upper limits) and reads 4 table values per band where the four-plane loop reads 16 and also forms
  // dφ/dA_V; (2) only the one-plane loop can take φ from the plane's tabulated node values and replace
  // Math.exp by the short node-relative Taylor series, since an interpolated A_V has no tabulated φ.
  // A shared loop (a per-band branch, or weights (1, 0, 0, 0) on four copies of one plane) does the
  // four-plane work in the common case; `npm run bench -- --only core` shows it. A change to the sums or
  // the profile Hessian must be made in both; the tests in this folder run both (fixed-A_V mock and
  // benchmark stars; the A_V fit against ml-levenberg-marquardt in fit.quality.test.ts).
  /**
   * profileAt for one plane and no upper limits (the common catalogue case) in a single pass: the sums
   * Σwyφ, Σwφ², Σwyφ', Σwφφ', Σwφ'², Σwyφ'', Σwφφ'' give s*, χ², dχ²/du and the profile Hessian.
   * χ² = Σwy² − s·Σwyφ loses digits to cancellation on near-perfect fits; run() recomputes the reported
   * χ² from the residuals.
   */
  private profileAtFast(u: number): number {
    let x = (u - LN_T_MIN) / LN_T_STEP;
    if (x < 0) x = 0;
    else if (x > N_INTERVALS) x = N_INTERVALS;
    let i = Math.floor(x);
    if (i >= N_INTERVALS) i = N_INTERVALS - 1;
    const t = x - i;
    const h = LN_T_STEP;
    const t2 = t * t;
    const t3 = t2 * t;
    const h00 = 2 * t3 - 3 * t2 + 1;
    const h10 = (t3 - 2 * t2 + t) * h;
    const h01 = -2 * t3 + 3 * t2;
    const h11 = (t3 - t2) * h;
    const g00 = (6 * t2 - 6 * t) / h;
    const g10 = 3 * t2 - 4 * t + 1;
    const g11 = 3 * t2 - 2 * t;
    const q00 = (12 * t - 6) / (h * h);
    const q10 = (6 * t - 4) / h;
    const q11 = (6 * t - 2) / h;
    const L = this.planes[0].lnPhi;
    const D = this.planes[0].dLnPhi;
    const PN = this.planes[0].phi;
    const offT = this.offT, y = this.y, w = this.w, phi = this.phi, dphi = this.dphi;
    const n = this.nDet;
    let syy = 0, swyp = 0, swpp = 0, swyp1 = 0, swpp1 = 0, swp1p1 = 0, swyp2 = 0, swpp2 = 0;
    for (let k = 0; k < n; k++) {
      const o = offT[k] + i;
      const y0 = L[o];
      const y1 = L[o + 1];
      const m0 = D[o];
      const m1 = D[o + 1];
      const lv = h00 * y0 + h10 * m0 + h01 * y1 + h11 * m1;
      const l1 = g00 * (y0 - y1) + g10 * m0 + g11 * m1;
      const l2 = q00 * (y0 - y1) + q10 * m0 + q11 * m1;
      // φ = φ_node · e^(ln φ − ln φ_node): near a node the exponent is small and a degree-9 Taylor
      // polynomial (error < 3e-13 for |d| ≤ 0.25) is cheaper than Math.exp.
      const d = lv - y0;
      let p: number;
      if (d < 0.25 && d > -0.25) {
        let e = 1 + d / 9;
        e = 1 + (d / 8) * e;
        e = 1 + (d / 7) * e;
        e = 1 + (d / 6) * e;
        e = 1 + (d / 5) * e;
        e = 1 + (d / 4) * e;
        e = 1 + (d / 3) * e;
        e = 1 + (d / 2) * e;
        p = PN[o] * (1 + d * e);
      } else p = Math.exp(lv);
      const p1 = p * l1;
      const p2 = p * (l2 + l1 * l1);
      phi[k] = p;
      dphi[k] = p1;
      const wk = w[k];
      const wy = wk * y[k];
      const wp = wk * p;
      syy += wy * y[k];
      swyp += wy * p;
      swpp += wp * p;
      swyp1 += wy * p1;
      swpp1 += wp * p1;
      swp1p1 += wk * p1 * p1;
      swyp2 += wy * p2;
      swpp2 += wp * p2;
    }
    const s = swyp / swpp;
    this.s = s;
    // r = y − sφ: Σw r² = Σwy² − sΣwyφ at s*; g = −2sΣw r φ'; Huu, Hus, Hss as in profileAt.
    this.gradU = -2 * s * (swyp1 - s * swpp1);
    const huu = s * s * swp1p1 - s * swyp2 + s * s * swpp2;
    const hus = 2 * s * swpp1 - swyp1;
    this.hessU = 2 * (huu - (hus * hus) / swpp);
    return syy - s * swyp;
  }

  /** profileAtFast with A_V interpolated between four planes (also fills dφ/dA_V for the A_V fit). */
  private profileAtFast4(u: number): number {
    let x = (u - LN_T_MIN) / LN_T_STEP;
    if (x < 0) x = 0;
    else if (x > N_INTERVALS) x = N_INTERVALS;
    let i = Math.floor(x);
    if (i >= N_INTERVALS) i = N_INTERVALS - 1;
    const t = x - i;
    const h = LN_T_STEP;
    const t2 = t * t;
    const t3 = t2 * t;
    const h00 = 2 * t3 - 3 * t2 + 1;
    const h10 = (t3 - 2 * t2 + t) * h;
    const h01 = -2 * t3 + 3 * t2;
    const h11 = (t3 - t2) * h;
    const g00 = (6 * t2 - 6 * t) / h;
    const g10 = 3 * t2 - 4 * t + 1;
    const g11 = 3 * t2 - 2 * t;
    const q00 = (12 * t - 6) / (h * h);
    const q10 = (6 * t - 4) / h;
    const q11 = (6 * t - 2) / h;
    const P0 = this.planes[0], P1 = this.planes[1], P2 = this.planes[2], P3 = this.planes[3];
    const L0 = P0.lnPhi, D0 = P0.dLnPhi, L1 = P1.lnPhi, D1 = P1.dLnPhi;
    const L2 = P2.lnPhi, D2 = P2.dLnPhi, L3 = P3.lnPhi, D3 = P3.dLnPhi;
    const wA = this.wA, dwA = this.dwA;
    const w0 = wA[0], w1 = wA[1], w2 = wA[2], w3 = wA[3];
    const e0 = dwA[0], e1 = dwA[1], e2 = dwA[2], e3 = dwA[3];
    const offT = this.offT, y = this.y, w = this.w, phi = this.phi, dphi = this.dphi, dphiA = this.dphiA;
    const n = this.nDet;
    let syy = 0, swyp = 0, swpp = 0, swyp1 = 0, swpp1 = 0, swp1p1 = 0, swyp2 = 0, swpp2 = 0;
    for (let k = 0; k < n; k++) {
      const o = offT[k] + i;
      const y0 = w0 * L0[o] + w1 * L1[o] + w2 * L2[o] + w3 * L3[o];
      const y1 = w0 * L0[o + 1] + w1 * L1[o + 1] + w2 * L2[o + 1] + w3 * L3[o + 1];
      const m0 = w0 * D0[o] + w1 * D1[o] + w2 * D2[o] + w3 * D3[o];
      const m1 = w0 * D0[o + 1] + w1 * D1[o + 1] + w2 * D2[o + 1] + w3 * D3[o + 1];
      const ay0 = e0 * L0[o] + e1 * L1[o] + e2 * L2[o] + e3 * L3[o];
      const ay1 = e0 * L0[o + 1] + e1 * L1[o + 1] + e2 * L2[o + 1] + e3 * L3[o + 1];
      const am0 = e0 * D0[o] + e1 * D1[o] + e2 * D2[o] + e3 * D3[o];
      const am1 = e0 * D0[o + 1] + e1 * D1[o + 1] + e2 * D2[o + 1] + e3 * D3[o + 1];
      const lv = h00 * y0 + h10 * m0 + h01 * y1 + h11 * m1;
      const l1 = g00 * (y0 - y1) + g10 * m0 + g11 * m1;
      const l2 = q00 * (y0 - y1) + q10 * m0 + q11 * m1;
      const p = Math.exp(lv);
      const p1 = p * l1;
      const p2 = p * (l2 + l1 * l1);
      phi[k] = p;
      dphi[k] = p1;
      dphiA[k] = p * (h00 * ay0 + h10 * am0 + h01 * ay1 + h11 * am1);
      const wk = w[k];
      const wy = wk * y[k];
      const wp = wk * p;
      syy += wy * y[k];
      swyp += wy * p;
      swpp += wp * p;
      swyp1 += wy * p1;
      swpp1 += wp * p1;
      swp1p1 += wk * p1 * p1;
      swyp2 += wy * p2;
      swpp2 += wp * p2;
    }
    const s = swyp / swpp;
    this.s = s;
    // r = y − sφ: Σw r² = Σwy² − sΣwyφ at s*; g = −2sΣw r φ'; Huu, Hus, Hss as in profileAt.
    this.gradU = -2 * s * (swyp1 - s * swpp1);
    const huu = s * s * swp1p1 - s * swyp2 + s * s * swpp2;
    const hus = 2 * s * swpp1 - swyp1;
    this.hessU = 2 * (huu - (hus * hus) / swpp);
    return syy - s * swyp;
  }

  /** Profile χ²(u) at fixed A_V, with s* and dχ²/du, d²χ²/du² (profile Hessian) stored. */
  private profileAt(u: number): number {
    if (this.nFit === this.nDet) return this.singlePlane ? this.profileAtFast(u) : this.profileAtFast4(u);
    this.evalModel(u, this.nFit);
    const s = this.solveScale();
    this.s = s;
    const nDet = this.nDet;
    const nFit = this.nFit;
    const y = this.y, w = this.w, phi = this.phi, dphi = this.dphi, d2phi = this.d2phi, active = this.active;
    let chi2 = 0, g = 0, huu = 0, hus = 0, hss = 0;
    for (let k = 0; k < nFit; k++) {
      if (k >= nDet && active[k] === 0) continue;
      const wk = w[k];
      const r = y[k] - s * phi[k];
      const sd = s * dphi[k];
      chi2 += wk * r * r;
      g -= wk * r * sd;
      huu += wk * (sd * sd - r * s * d2phi[k]);
      hus += wk * (s * phi[k] * dphi[k] - r * dphi[k]);
      hss += wk * phi[k] * phi[k];
    }
    this.gradU = 2 * g;
    this.hessU = 2 * (huu - (hus * hus) / hss);
    return chi2;
  }

  private coarseSyy = 0;

  /** Profile χ² at coarse node c of plane pc (s in closed form; violated limits added, not re-solved). */
  private coarseNode(pc: Float64Array, c: number): number {
    const nDet = this.nDet;
    const nFit = this.nFit;
    const off = this.offC, wy = this.wyC, w = this.w, y = this.y;
    let A = 0;
    let B = 0;
    for (let k = 0; k < nDet; k++) {
      const p = pc[off[k] + c];
      A += wy[k] * p;
      B += w[k] * p * p;
    }
    if (!(A > 0)) return Infinity; // s ≤ 0 is not a star
    let v = this.coarseSyy - (A * A) / B;
    if (nFit > nDet) {
      const s = A / B;
      for (let k = nDet; k < nFit; k++) {
        const m = s * pc[off[k] + c];
        if (m > y[k]) v += w[k] * (m - y[k]) * (m - y[k]);
      }
    }
    return v;
  }

  /** coarseNode for two nodes in one pass over the bands; writes coarseChi2[c0], coarseChi2[c1]. */
  private coarsePair(pc: Float64Array, c0: number, c1: number): void {
    const nDet = this.nDet;
    const chi = this.coarseChi2;
    if (this.nFit > nDet) {
      // Limits need s per node: the single-node path handles them.
      chi[c0] = this.coarseNode(pc, c0);
      chi[c1] = this.coarseNode(pc, c1);
      return;
    }
    const off = this.offC, wy = this.wyC, w = this.w;
    let A0 = 0, B0 = 0, A1 = 0, B1 = 0;
    for (let k = 0; k < nDet; k++) {
      const o = off[k];
      const p0 = pc[o + c0];
      const p1 = pc[o + c1];
      const wk = w[k];
      const wyk = wy[k];
      A0 += wyk * p0;
      B0 += wk * p0 * p0;
      A1 += wyk * p1;
      B1 += wk * p1 * p1;
    }
    chi[c0] = A0 > 0 ? this.coarseSyy - (A0 * A0) / B0 : Infinity;
    chi[c1] = A1 > 0 ? this.coarseSyy - (A1 * A1) / B1 : Infinity;
  }

  /**
   * Coarse ln T search in one plane (exact node values); returns the best coarse index. Every other
   * coarse node (≈ 40 % steps in T) plus the hot edge: the profile of a blackbody is smooth on that
   * scale; the parabola through the best and its evaluated neighbours, a walk on the fine nodes and
   * the bracketed Newton finish the job. coarseChi2 holds NaN for nodes not evaluated.
   */
  coarseSearch(plane: Plane): number {
    const nDet = this.nDet;
    const nFit = this.nFit;
    const band = this.band, y = this.y, w = this.w, off = this.offC, wy = this.wyC;
    let syy = 0;
    for (let k = 0; k < nFit; k++) {
      off[k] = band[k] * N_COARSE;
      wy[k] = w[k] * y[k];
      if (k < nDet) syy += wy[k] * y[k];
    }
    this.coarseSyy = syy;
    const pc = plane.phiCoarse;
    const chi = this.coarseChi2;
    chi.fill(NaN);
    let best = 0;
    let bestChi = Infinity;
    const last = N_COARSE - 1;
    // Even nodes two at a time (independent sums keep the FPU busy), then the hot edge.
    for (let c = 0; c <= last; c += 4) {
      const c2 = c + 2 <= last ? c + 2 : -1;
      if (c2 >= 0) this.coarsePair(pc, c, c2);
      else chi[c] = this.coarseNode(pc, c);
    }
    if (this.denseCoarse) {
      // The photosphere's corrections bend the profile on shorter scales than a blackbody's: odd nodes too.
      for (let c = 1; c <= last; c += 4) {
        const c2 = c + 2 <= last ? c + 2 : -1;
        if (c2 >= 0) this.coarsePair(pc, c, c2);
        else chi[c] = this.coarseNode(pc, c);
      }
    }
    if (chi[last] !== chi[last]) chi[last] = this.coarseNode(pc, last);
    for (let c = 0; c <= last; c++) {
      const v = chi[c];
      if (v < bestChi) {
        bestChi = v;
        best = c;
      }
    }
    return best;
  }

  /** Profile χ² at interior fine node j (0 = T_min) from node values; limits as in coarseNode. */
  private fineNode(phiFine: Float64Array, j: number): number {
    const nDet = this.nDet;
    const nFit = this.nFit;
    const off = this.offT, wy = this.wyC, w = this.w, y = this.y;
    let A = 0;
    let B = 0;
    for (let k = 0; k < nDet; k++) {
      const p = phiFine[off[k] + j];
      A += wy[k] * p;
      B += w[k] * p * p;
    }
    if (!(A > 0)) return Infinity;
    let v = this.coarseSyy - (A * A) / B;
    if (nFit > nDet) {
      const s = A / B;
      for (let k = nDet; k < nFit; k++) {
        const m = s * phiFine[off[k] + j];
        if (m > y[k]) v += w[k] * (m - y[k]) * (m - y[k]);
      }
    }
    return v;
  }

  /**
   * Walks the fine nodes from the one nearest u downhill (a few steps at most) and returns the vertex of
   * the parabola through the lowest node and its neighbours.
   */
  fineStart(plane: Plane, u: number): number {
    const phiFine = plane.phi;
    let j = Math.round((u - LN_T_MIN) / LN_T_STEP);
    if (j < 1) j = 1;
    if (j > N_INTERVALS - 1) j = N_INTERVALS - 1;
    let fm: number, f0: number, fp: number;
    if (this.nFit === this.nDet) {
      // Three neighbouring nodes in one pass over the bands.
      const off = this.offT, wy = this.wyC, w = this.w;
      let Am = 0, Bm = 0, A0 = 0, B0 = 0, Ap = 0, Bp = 0;
      for (let k = 0; k < this.nDet; k++) {
        const o = off[k] + j;
        const pm = phiFine[o - 1];
        const p0 = phiFine[o];
        const pp = phiFine[o + 1];
        const wk = w[k];
        const wyk = wy[k];
        Am += wyk * pm;
        Bm += wk * pm * pm;
        A0 += wyk * p0;
        B0 += wk * p0 * p0;
        Ap += wyk * pp;
        Bp += wk * pp * pp;
      }
      const syy = this.coarseSyy;
      fm = Am > 0 ? syy - (Am * Am) / Bm : Infinity;
      f0 = A0 > 0 ? syy - (A0 * A0) / B0 : Infinity;
      fp = Ap > 0 ? syy - (Ap * Ap) / Bp : Infinity;
    } else {
      fm = this.fineNode(phiFine, j - 1);
      f0 = this.fineNode(phiFine, j);
      fp = this.fineNode(phiFine, j + 1);
    }
    for (let steps = 0; steps < COARSE_STRIDE; steps++) {
      if (fm < f0 && j > 1) {
        j--;
        fp = f0;
        f0 = fm;
        fm = this.fineNode(phiFine, j - 1);
      } else if (fp < f0 && j < N_INTERVALS - 1) {
        j++;
        fm = f0;
        f0 = fp;
        fp = this.fineNode(phiFine, j + 1);
      } else break;
    }
    const uj = LN_T_MIN + j * LN_T_STEP;
    const den = fm - 2 * f0 + fp;
    if (!(den > 0) || !Number.isFinite(den)) return Number.isFinite(f0) ? uj : u;
    let d = (0.5 * (fm - fp)) / den;
    if (d > 1) d = 1;
    else if (d < -1) d = -1;
    return uj + d * LN_T_STEP;
  }

  /**
   * Safeguarded Newton on g = dχ²/du = 0 of the profile at the current planes, from u. Sets this.u,
   * this.s, this.chi2 and leaves the scratch state of the solution; returns χ².
   */
  newtonU(u0: number, stride: number): number {
    let u = u0;
    let lo = u - stride;
    let loSure = false;
    if (lo <= LN_T_MIN) {
      lo = LN_T_MIN;
      loSure = true;
    }
    let hi = u + stride;
    let hiSure = false;
    if (hi >= LN_T_MAX) {
      hi = LN_T_MAX;
      hiSure = true;
    }
    let chi2 = this.profileAt(u);
    let it = 0;
    for (; it < 100; it++) {
      const g = this.gradU;
      const hcur = this.hessU;
      if (g === 0) break;
      if (g < 0 && u >= hi) {
        if (hiSure) break;
        lo = u;
        loSure = true;
        hi = Math.min(LN_T_MAX, u + stride);
        hiSure = hi >= LN_T_MAX;
      } else if (g > 0 && u <= lo) {
        if (loSure) break;
        hi = u;
        hiSure = true;
        lo = Math.max(LN_T_MIN, u - stride);
        loSure = lo <= LN_T_MIN;
      } else if (g > 0) {
        hi = u;
        hiSure = true;
      } else {
        lo = u;
        loSure = true;
      }
      let next = hcur > 0 ? u - g / hcur : NaN;
      if (Math.abs(next - u) < NEWTON_TOL) break; // converged; the state of profileAt(u) is kept
      if (!(next > lo && next < hi)) {
        if (g < 0) next = hiSure ? 0.5 * (u + hi) : hi;
        else next = loSure ? 0.5 * (u + lo) : lo;
      }
      const step = Math.abs(next - u);
      u = next;
      chi2 = this.profileAt(u);
      if (step < NEWTON_TOL || hi - lo < NEWTON_TOL) break;
    }
    this.iterations += it;
    this.u = u;
    this.chi2 = chi2;
    return chi2;
  }

  /** Fixed A_V: coarse search then safeguarded Newton on dχ²/du = 0. */
  private fitFixed(avMag: number): boolean {
    this.usePlanes(avMag);
    this.avMag = avMag;
    // The coarse search reads the nearest plane's node values; off-plane A_V only shifts the start.
    const coarsePlane = this.singlePlane ? this.planes[0] : this.planes[this.wA[1] >= this.wA[2] ? 1 : 2];
    const c = this.coarseSearch(coarsePlane);
    if (this.coarseChi2[c] === Infinity) return false;
    const uc = LN_T_MIN + c * COARSE_STRIDE * LN_T_STEP;
    const stride = COARSE_STRIDE * LN_T_STEP;
    // Safeguarded Newton on g = dχ²/du: [lo, hi] brackets the minimum once both ends are "sure"
    // (slope seen pointing inward, or a grid edge); an unsure end is widened by one coarse step when
    // the iterate reaches it still descending (the coarse search may be slightly off for off-plane A_V).
    // Start at the vertex of the parabola through the three coarse values around the minimum, then
    // refine it on the fine nodes (node values, no exp) so Newton starts within ~1e-3 in ln T.
    let u = uc;
    {
      const chi = this.coarseChi2;
      const cl = c - 2;
      const cr = c + 2 <= N_COARSE - 1 ? c + 2 : N_COARSE - 1;
      if (cl >= 0 && cr > c) {
        // Parabola through three nodes at ln T offsets −2·stride, 0, (cr − c)·stride.
        const fl = chi[cl], f0 = chi[c], fr = chi[cr];
        const xl = -2, xr = cr - c;
        const dl = (fl - f0) / xl, dr = (fr - f0) / xr;
        const curv = (dr - dl) / (xr - xl);
        if (curv > 0 && Number.isFinite(curv)) {
          let d = -(dl - curv * xl) / (2 * curv); // vertex of f0 + b·x + curv·x², b = dl − curv·xl
          if (d < xl) d = xl;
          if (d > xr) d = xr;
          u = uc + d * stride;
        }
      }
    }
    u = this.fineStart(coarsePlane, u);
    const chi2 = this.newtonU(u, stride);
    u = this.u;
    if (!(this.s > 0) || !Number.isFinite(chi2)) return false;
    // Fisher matrix JᵀWJ of (u, ln s): J_u = sφ', J_lns = sφ.
    const nDet = this.nDet, nFit = this.nFit;
    const w = this.w, phi = this.phi, dphi = this.dphi, active = this.active, s = this.s;
    let fuu = 0, fus = 0, fss = 0;
    let nActive = 0;
    for (let k = 0; k < nFit; k++) {
      if (k >= nDet) {
        if (active[k] === 0) continue;
        nActive++;
      }
      const a = s * dphi[k];
      const b = s * phi[k];
      fuu += w[k] * a * a;
      fus += w[k] * a * b;
      fss += w[k] * b * b;
    }
    if (nActive > 0) this.flags |= FLAG_BITS.upper_limit_active;
    const det = fuu * fss - fus * fus;
    const cov = this.cov;
    cov.fill(0);
    cov[0] = fss / det;
    cov[1] = cov[3] = -fus / det;
    cov[4] = fuu / det;
    this.avFree = false;
    this.dof = this.nDet - 2;
    return true;
  }

  /** Profile χ² at u for fixed A_V (planes already set), used by the lower-bound search. */
  private profileChi2(u: number): number {
    return this.profileAt(u);
  }

  /**
   * Fit the loaded star. Returns the status; on success every output field is set.
   * avMag is the fixed A_V (ignored when settings.fitAv).
   */
  run(settings: EngineSettings, avMag: number, parallaxMas: number, parallaxErrMas: number): number {
    this.flags = 0;
    this.iterations = 0;
    this.nClipped = 0;
    this.teffLowerK = NaN;
    this.irExcessSigma = NaN;
    this.chi2Red = NaN;
    this.partition();
    const minDet = settings.fitAv ? 3 : 2;
    if (this.nDet < minDet) {
      this.status = STATUS_FEW_BANDS;
      return this.status;
    }
    for (;;) {
      const ok = settings.fitAv ? this.avSolver.fit(settings.avMinMag, settings.avMaxMag, settings.avSolver ?? 'profile') : this.fitFixed(avMag);
      if (!ok) {
        this.status = STATUS_NO_CONVERGENCE;
        return this.status;
      }
      this.residuals();
      this.chi2 = this.residualChi2();
      if (!settings.clip || this.nClipped >= MAX_CLIPPED || this.nDet - 1 < minDet) break;
      // Drop the worst fitted detection when it is an outlier, then refit.
      let worst = -1;
      let worstAbs = OUTLIER_SIGMA;
      for (let k = 0; k < this.nDet; k++) {
        const r = Math.abs(this.residual[k]);
        if (r > worstAbs) {
          worstAbs = r;
          worst = k;
        }
      }
      if (worst < 0) break;
      this.exclude[worst] = EXCLUDE_CLIPPED;
      this.nClipped++;
      this.flags |= FLAG_BITS.clipped;
      this.partition();
    }
    // No degrees of freedom: as many detections as parameters (upper limits do not count).
    if (this.dof <= 0) this.flags |= FLAG_BITS.no_dof;
    this.dof = Math.max(this.dof, 0);
    this.chi2Red = this.dof > 0 ? this.chi2 / this.dof : NaN;
    if (this.chi2Red > CHI2_HIGH) this.flags |= FLAG_BITS.chi2_high;
    for (let k = 0; k < this.nFit; k++) {
      if (Math.abs(this.residual[k]) > OUTLIER_SIGMA && (k < this.nDet || this.active[k] === 1)) {
        this.flags |= FLAG_BITS.outlier;
        break;
      }
    }
    for (let k = this.nFit; k < this.n; k++) {
      if (this.exclude[k] === EXCLUDE_LONG && this.upper[k] === 0) {
        const r = this.residual[k];
        if (!(r <= this.irExcessSigma)) this.irExcessSigma = r;
      }
    }
    if (this.irExcessSigma > OUTLIER_SIGMA) this.flags |= FLAG_BITS.ir_excess;
    const scale = this.chi2Red > 1 ? Math.sqrt(this.chi2Red) : 1;
    // Temperature edges.
    const sigmaU = Math.sqrt(this.cov[0]) * scale;
    // Cool edge: Newton stops within its bracket, not on the edge itself, so a star cooler than the grid
    // ends a fraction of a node above ln T_min (a test at 1e-9 missed it, and the hot-edge test then
    // called it a lower bound). Within a quarter node (0.6 % in T) of the edge the value is the edge's.
    if (this.u <= LN_T_MIN + COOL_EDGE_LN_T) this.flags |= FLAG_BITS.temp_cool_edge;
    else this.checkHotEdge(settings, scale, sigmaU);
    this.lastScale = scale;
    this.lastPlx = parallaxMas;
    this.lastPlxErr = parallaxErrMas;
    const mef = settings.modelErrorFraction;
    this.modelVarLnT = mef > 0 ? mef * mef : 0;
    this.beta = mef > 0 ? this.scaleSlope() : 0;
    deriveInto(this.derived, this.u, this.s, this.cov, this.avFree, scale, this.modelVarLnT, this.beta, parallaxMas, parallaxErrMas);
    this.flags |= this.derived.plxFlags;
    if (settings.modelErrorFraction > 0) this.flags |= FLAG_BITS.model_error_added;
    this.status = STATUS_OK;
    return this.status;
  }

  private lastScale = 1;
  private lastPlx = NaN;
  private lastPlxErr = NaN;
  /** The model term σ_m² in ln T in the derived values, and β = d(ln s*)/d(ln T) used to propagate it. */
  modelVarLnT = 0;
  beta = 0;

  /**
   * β = d(ln s*)/d(ln T) of the closed-form scale s* = Σwyφ/Σwφ² at the solution (fitted detections):
   * Σwyφ'/Σwyφ − 2Σwφφ'/Σwφ². φ and φ' of the fitted slots are those of the solution after run().
   */
  scaleSlope(): number {
    const y = this.y, w = this.w, phi = this.phi, dphi = this.dphi;
    let a = 0, a1 = 0, b = 0, b1 = 0;
    for (let k = 0; k < this.nDet; k++) {
      const wp = w[k] * phi[k];
      a += wp * y[k];
      a1 += w[k] * y[k] * dphi[k];
      b += wp * phi[k];
      b1 += wp * dphi[k];
    }
    return a1 / a - (2 * b1) / b;
  }

  /** Recomputes the derived values of the last run with a model term σ_m² in ln T (replacing any before). */
  deriveWithModelTerm(modelVarLnT: number): void {
    this.modelVarLnT = modelVarLnT;
    this.beta = modelVarLnT > 0 ? this.scaleSlope() : 0;
    deriveInto(this.derived, this.u, this.s, this.cov, this.avFree, this.lastScale, this.modelVarLnT, this.beta, this.lastPlx, this.lastPlxErr);
  }

  /** χ² of the solution from the residuals (detections, and limits the model exceeds). */
  private residualChi2(): number {
    const res = this.residual;
    let chi2 = 0;
    for (let k = 0; k < this.nFit; k++) {
      const r = res[k];
      if (k >= this.nDet && r >= 0) continue;
      chi2 += r * r;
    }
    return chi2;
  }

  /** Residuals (y − sφ)/σ for every band at the solution (excluded ones included). */
  private residuals(): void {
    // The planes are still those of the solution (fixed: usePlanes; free: the last chi2Full), and φ of
    // the fitted bands is that of the solution: only the excluded bands need evaluating.
    if (this.n > this.nFit) this.evalModelRange(this.u, this.nFit, this.n);
    const s = this.s;
    const y = this.y, phi = this.phi, inv = this.invSigma, res = this.residual;
    for (let k = 0; k < this.n; k++) res[k] = (y[k] - s * phi[k]) * inv[k];
  }

  /**
   * Rayleigh–Jeans tail: when χ² at the hot edge of the grid is within the one-sided 95 % Δχ² of the
   * minimum, no upper limit on T exists; report the lower bound where Δχ² reaches that level instead.
   */
  private checkHotEdge(settings: EngineSettings, scale: number, sigmaU: number): void {
    const thr = LOWER_BOUND_DCHI2 * scale * scale;
    if (settings.fitAv) {
      // Degenerate (T, A_V) valley: use the linearised interval of ln T.
      if (this.u + 1.645 * sigmaU >= LN_T_MAX) {
        this.flags |= FLAG_BITS.temp_lower_bound;
        this.teffLowerK = Math.exp(Math.max(LN_T_MIN, this.u - 1.645 * sigmaU));
      }
      return;
    }
    const chiMin = this.chi2;
    // Cheap screen with the coarse profile (exact for on-plane A_V, close otherwise).
    if (this.coarseChi2[N_COARSE - 1] - chiMin > 4 * thr + 1) return;
    const uBest = this.u;
    const sBest = this.s;
    this.usePlanes(this.avMag);
    const chiEdge = this.profileChi2(LN_T_MAX);
    if (chiEdge - chiMin < thr) {
      this.flags |= FLAG_BITS.temp_lower_bound;
      // Bisection for Δχ² = thr below the best fit (the profile falls monotonically towards it).
      let lo = LN_T_MIN;
      let hi = uBest;
      if (this.profileChi2(lo) - chiMin < thr) {
        this.teffLowerK = Math.exp(LN_T_MIN);
      } else {
        for (let i = 0; i < 60 && hi - lo > 1e-9; i++) {
          const mid = 0.5 * (lo + hi);
          if (this.profileChi2(mid) - chiMin > thr) lo = mid;
          else hi = mid;
        }
        this.teffLowerK = Math.exp(0.5 * (lo + hi));
      }
    }
    // Restore the solution's scratch state.
    this.profileAt(uBest);
    this.s = sBest;
  }
}
