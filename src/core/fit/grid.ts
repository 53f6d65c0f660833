// Band-mean tables φ_i(T, A_V) for the fit (docs/science.md, "The science" §5).
//
// Why tables: a fit evaluates the model hundreds of times, and one band mean is an integral over a
// passband curve (hundreds of nodes). Tabulating ln φ on a ln T grid once per (band set, law, R_V,
// band-library version) makes a fit cost about a microsecond.
//
// Layout and accuracy:
// - ln T nodes u_j with step ≈ 0.024 from ln 1500 K to ln 60 000 K, plus GHOST nodes beyond each end so
//   the 6th-order central difference for d ln φ / du is available at every interior node.
// - Within a plane (one A_V value), ln φ is interpolated with cubic Hermite in u. On the Wien side
//   ln φ ≈ const − x with x = hc/λkT = a·e^(−u), whose derivatives of every order are ≈ x (≤ 70 for a
//   far-UV band at 1500 K), so the Hermite error h⁴/384·|f''''| stays below ~1e-7 (tested < 1e-5).
//   Interpolating φ itself would need ~1000 nodes for the same accuracy (|φ''''/φ| ≈ x⁴).
// - Across A_V, planes sit at A_V = k·AV_STEP_MAG (k may be negative); ln φ is nearly linear in A_V
//   (exactly so for a narrow band), so 4-point Lagrange interpolation on ln φ keeps < 1e-5 (tested).
//   Planes are built lazily: a fit with A_V = 0 touches one plane.
// All hot data live in Float64Array, band-major (band b, node j → b·nT + j), grown when bands are added.

/** Band mean ⟨F_λ⟩ for scale s = 1 (erg s⁻¹ cm⁻² Å⁻¹), the quantity the fit multiplies by s. */
export type BandMeanFn = (bandKey: string, teffK: number, avMag: number) => number;

export const TEFF_MIN_K = 1500;
export const TEFF_MAX_K = 60000;
export const LN_T_MIN = Math.log(TEFF_MIN_K);
export const LN_T_MAX = Math.log(TEFF_MAX_K);
/** Interior intervals of the fine ln T grid (step ≈ 0.0243). */
export const N_INTERVALS = 152;
export const LN_T_STEP = (LN_T_MAX - LN_T_MIN) / N_INTERVALS;
export const GHOST = 3;
/** Nodes per band and plane, ghosts included. */
export const N_T = N_INTERVALS + 1 + 2 * GHOST;
/** The coarse search uses every COARSE_STRIDE-th interior node (≈ 20 % steps in T). */
export const COARSE_STRIDE = 8;
export const N_COARSE = N_INTERVALS / COARSE_STRIDE + 1;
/** Spacing of the A_V planes, mag. */
export const AV_STEP_MAG = 0.25;

/** ln T of fine node j (ghosts included: node GHOST is T_min). */
export function nodeLnT(j: number): number {
  return LN_T_MIN + (j - GHOST) * LN_T_STEP;
}

/** One A_V plane: ln φ, d ln φ/du and φ at every node, and φ at the coarse nodes, for every band. */
export interface Plane {
  avMag: number;
  /** Bands filled so far (bands are appended; a plane may lag behind the table and be filled on demand). */
  filled: number;
  lnPhi: Float64Array;
  dLnPhi: Float64Array;
  phiCoarse: Float64Array;
  /** φ = exp(ln φ) at every node (lets the start of Newton refine on node values without exp). */
  phi: Float64Array;
}

/**
 * Tables for a growing set of bands. Not thread-safe by design: each worker builds its own (cheap).
 */
export class FitTables {
  readonly bandKeys: string[] = [];
  private readonly index = new Map<string, number>();
  private capacity = 0;
  private readonly planes = new Map<number, Plane>();
  /** Number of band-mean evaluations done so far (for diagnostics and tests). */
  evaluations = 0;

  constructor(private readonly bandMean: BandMeanFn) {}

  /** Index of a band, adding it (and growing every plane) when new. */
  bandIndex(key: string): number {
    const found = this.index.get(key);
    if (found !== undefined) return found;
    const idx = this.bandKeys.length;
    this.bandKeys.push(key);
    this.index.set(key, idx);
    if (idx >= this.capacity) this.grow(Math.max(8, this.capacity * 2));
    return idx;
  }

  getBandIndex(key: string): number | undefined {
    return this.index.get(key);
  }

  get bandCount(): number {
    return this.bandKeys.length;
  }

  private grow(newCapacity: number): void {
    for (const plane of this.planes.values()) {
      const lnPhi = new Float64Array(newCapacity * N_T);
      lnPhi.set(plane.lnPhi);
      const dLnPhi = new Float64Array(newCapacity * N_T);
      dLnPhi.set(plane.dLnPhi);
      const phiCoarse = new Float64Array(newCapacity * N_COARSE);
      phiCoarse.set(plane.phiCoarse);
      plane.lnPhi = lnPhi;
      plane.dLnPhi = dLnPhi;
      plane.phiCoarse = phiCoarse;
      const phi = new Float64Array(newCapacity * N_T);
      phi.set(plane.phi);
      plane.phi = phi;
    }
    this.capacity = newCapacity;
  }

  /** Plane k (A_V = k·AV_STEP_MAG), built or completed for all current bands. */
  plane(k: number): Plane {
    let plane = this.planes.get(k);
    if (!plane) {
      plane = {
        avMag: k * AV_STEP_MAG,
        filled: 0,
        lnPhi: new Float64Array(this.capacity * N_T),
        dLnPhi: new Float64Array(this.capacity * N_T),
        phiCoarse: new Float64Array(this.capacity * N_COARSE),
        phi: new Float64Array(this.capacity * N_T),
      };
      this.planes.set(k, plane);
    }
    while (plane.filled < this.bandKeys.length) {
      this.fill(plane, plane.filled);
      plane.filled++;
    }
    return plane;
  }

  /** Whether plane k exists and covers every band (lets hot paths skip the call). */
  planeReady(k: number): boolean {
    const plane = this.planes.get(k);
    return plane !== undefined && plane.filled === this.bandKeys.length;
  }

  private fill(plane: Plane, b: number): void {
    const key = this.bandKeys[b];
    const base = b * N_T;
    const ln = plane.lnPhi;
    for (let j = 0; j < N_T; j++) {
      const v = this.bandMean(key, Math.exp(nodeLnT(j)), plane.avMag);
      this.evaluations++;
      if (!(v > 0) || !Number.isFinite(v)) {
        throw new Error(`band mean of ${key} at T = ${Math.exp(nodeLnT(j)).toFixed(1)} K, A_V = ${plane.avMag} is ${v}; the fit needs a positive finite value`);
      }
      ln[base + j] = Math.log(v);
    }
    // 6th-order central difference (Fornberg 1988 weights), exact for polynomials up to degree 6.
    const inv = 1 / (60 * LN_T_STEP);
    const d = plane.dLnPhi;
    for (let j = GHOST; j < N_T - GHOST; j++) {
      const o = base + j;
      d[o] = (-ln[o - 3] + 9 * ln[o - 2] - 45 * ln[o - 1] + 45 * ln[o + 1] - 9 * ln[o + 2] + ln[o + 3]) * inv;
    }
    const cb = b * N_COARSE;
    for (let c = 0; c < N_COARSE; c++) plane.phiCoarse[cb + c] = Math.exp(ln[base + GHOST + c * COARSE_STRIDE]);
    for (let j = 0; j < N_T; j++) plane.phi[base + j] = Math.exp(ln[base + j]);
  }
}

/** Nearest plane index of an A_V value and whether it lies on the plane exactly (within 1e-12 mag). */
export function planeOf(avMag: number): { k: number; exact: boolean } {
  const x = avMag / AV_STEP_MAG;
  const k = Math.round(x);
  return { k, exact: Math.abs(x - k) < 1e-12 };
}

/**
 * Cubic-Hermite interpolation of ln φ (and its u-derivatives) for one band in one plane.
 * Returns ln φ; writes d ln φ/du and d² ln φ/du² into out[0], out[1] when out is given.
 * u is clamped to the interior grid. Used by tests and slow paths; the hot loops inline the same maths.
 */
export function interpLnPhi(plane: Plane, b: number, u: number, out?: Float64Array): number {
  let x = (u - LN_T_MIN) / LN_T_STEP;
  if (x < 0) x = 0;
  if (x > N_INTERVALS) x = N_INTERVALS;
  let i = Math.floor(x);
  if (i >= N_INTERVALS) i = N_INTERVALS - 1;
  const t = x - i;
  const o = b * N_T + GHOST + i;
  const h = LN_T_STEP;
  const y0 = plane.lnPhi[o];
  const y1 = plane.lnPhi[o + 1];
  const m0 = plane.dLnPhi[o] * h;
  const m1 = plane.dLnPhi[o + 1] * h;
  const t2 = t * t;
  const t3 = t2 * t;
  const val = (2 * t3 - 3 * t2 + 1) * y0 + (t3 - 2 * t2 + t) * m0 + (-2 * t3 + 3 * t2) * y1 + (t3 - t2) * m1;
  if (out) {
    out[0] = ((6 * t2 - 6 * t) * y0 + (3 * t2 - 4 * t + 1) * m0 + (-6 * t2 + 6 * t) * y1 + (3 * t2 - 2 * t) * m1) / h;
    out[1] = ((12 * t - 6) * y0 + (6 * t - 4) * m0 + (-12 * t + 6) * y1 + (6 * t - 2) * m1) / (h * h);
  }
  return val;
}

/**
 * 4-point Lagrange weights (and their derivative w.r.t. A_V) for an A_V value between planes.
 * Planes k0−1 … k0+2 with k0 = floor(A_V / step); writes w[0..3] and dw[0..3]; returns k0.
 */
export function avWeights(avMag: number, w: Float64Array, dw: Float64Array): number {
  const x = avMag / AV_STEP_MAG;
  const k0 = Math.floor(x);
  const t = x - k0;
  // Nodes at −1, 0, 1, 2 (in plane units, relative to k0).
  const a = t + 1;
  const b = t;
  const c = t - 1;
  const d = t - 2;
  w[0] = -(b * c * d) / 6;
  w[1] = (a * c * d) / 2;
  w[2] = -(a * b * d) / 2;
  w[3] = (a * b * c) / 6;
  const inv = 1 / AV_STEP_MAG;
  dw[0] = (-(c * d + b * d + b * c) / 6) * inv;
  dw[1] = ((c * d + a * d + a * c) / 2) * inv;
  dw[2] = (-(b * d + a * d + a * b) / 2) * inv;
  dw[3] = ((b * c + a * c + a * b) / 6) * inv;
  return k0;
}

/**
 * ln φ of band b at (u, A_V) through the tables, with d/du and d/dA_V in out[0], out[1].
 * Exact-plane A_V values use that plane alone (what a fixed A_V = 0 fit sees).
 */
export function lnPhiAt(tables: FitTables, b: number, u: number, avMag: number, out?: Float64Array): number {
  const p = planeOf(avMag);
  const tmp = new Float64Array(2);
  if (p.exact) {
    const v = interpLnPhi(tables.plane(p.k), b, u, tmp);
    if (out) {
      out[0] = tmp[0];
      out[1] = NaN;
    }
    return v;
  }
  const w = new Float64Array(4);
  const dw = new Float64Array(4);
  const k0 = avWeights(avMag, w, dw);
  let v = 0;
  let du = 0;
  let da = 0;
  for (let q = 0; q < 4; q++) {
    const lv = interpLnPhi(tables.plane(k0 - 1 + q), b, u, tmp);
    v += w[q] * lv;
    du += w[q] * tmp[0];
    da += dw[q] * lv;
  }
  if (out) {
    out[0] = du;
    out[1] = da;
  }
  return v;
}
