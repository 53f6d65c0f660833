// The distance a fit uses for R and L (decision 0028), and the asymmetric R and L intervals it gives.
//   1. A given distance (input columns distance_pc, distance_lo_pc, distance_hi_pc) wins: the fit
//      uses ϖ = 1000/d mas with σ_ϖ/ϖ = σ(ln d) = (ln d_hi − ln d_lo)/2 for its linear errors, and the
//      intervals below use the given ends as they are.
//   2. Otherwise the parallax, corrected ϖ − Z with the Gaia DR3 zero-point Z when its origin is
//      Gaia DR3 (never for Hipparcos or an unknown origin); d = 1000/ϖ.
// Intervals (68 %): ln R = ln θ + ln d + const and ln L = ln F_bol + 2 ln d + const, so with the fit's
// σ(ln θ) and σ(ln F_bol) and the distance's own ends δ− = ln(d/d_lo), δ+ = ln(d_hi/d):
//   R_lo = R exp(−√(σ²(ln θ) + δ−²)),  R_hi = R exp(+√(σ²(ln θ) + δ+²)),
//   L_lo = L exp(−√(σ²(ln F_bol) + 4δ−²)), L_hi = L exp(+√(σ²(ln F_bol) + 4δ+²)).
// For a parallax the ends are 1000/(ϖ ± σ_ϖ) (no upper end once σ_ϖ ≥ ϖ): at ϖ/σ = 3 they differ by
// a factor 2, where the linear ±σ is symmetric.

export type DistanceSource = 'input_distance' | 'gaia_dr3_parallax' | 'hipparcos_parallax' | 'parallax';

export interface DistanceUsed {
  pc: number;
  /** Lower and upper end of the 68 % interval, pc (null: none given, or unbounded). */
  loPc: number | null;
  hiPc: number | null;
  source: DistanceSource;
  /** The parallax used (after any zero-point), mas; null for a given distance. */
  parallaxMas: number | null;
  /** The zero-point Z subtracted (ϖ − Z), mas; null when none was applied. */
  zeroPointMas: number | null;
}

export interface DistanceInput {
  parallaxMas?: number | null;
  parallaxErrMas?: number | null;
  parallaxOrigin?: 'gaia_dr3' | 'hipparcos' | 'other' | null;
  distancePc?: number | null;
  distanceLoPc?: number | null;
  distanceHiPc?: number | null;
}

function finite(v: number | null | undefined): v is number {
  return typeof v === 'number' && Number.isFinite(v);
}

/** The parallax (and its error) the engine is given, and what it stands for. */
export function resolveDistance(star: DistanceInput, gaiaZeroPointMas: number): { parallaxMas: number; parallaxErrMas: number; used: DistanceUsed | null } {
  const d = star.distancePc;
  if (finite(d) && d > 0) {
    const lo = finite(star.distanceLoPc) && star.distanceLoPc > 0 && star.distanceLoPc <= d ? star.distanceLoPc : null;
    const hi = finite(star.distanceHiPc) && star.distanceHiPc >= d ? star.distanceHiPc : null;
    const sides = [lo !== null ? Math.log(d / lo) : NaN, hi !== null ? Math.log(hi / d) : NaN].filter(Number.isFinite);
    const sigmaLnD = sides.length === 0 ? 0 : sides.reduce((a, b) => a + b, 0) / sides.length;
    const plx = 1000 / d;
    return { parallaxMas: plx, parallaxErrMas: plx * sigmaLnD, used: { pc: d, loPc: lo, hiPc: hi, source: 'input_distance', parallaxMas: null, zeroPointMas: null } };
  }
  const raw = star.parallaxMas;
  const err = finite(star.parallaxErrMas) ? star.parallaxErrMas : NaN;
  if (!finite(raw)) return { parallaxMas: NaN, parallaxErrMas: err, used: null };
  const gaia = star.parallaxOrigin === 'gaia_dr3';
  const z = gaia && gaiaZeroPointMas !== 0 ? gaiaZeroPointMas : null;
  const plx = z === null ? raw : raw - z;
  const source: DistanceSource = gaia ? 'gaia_dr3_parallax' : star.parallaxOrigin === 'hipparcos' ? 'hipparcos_parallax' : 'parallax';
  if (!(plx > 0)) return { parallaxMas: plx, parallaxErrMas: err, used: null };
  const e = err > 0 ? err : 0;
  const used: DistanceUsed = {
    pc: 1000 / plx,
    loPc: e > 0 ? 1000 / (plx + e) : null,
    hiPc: e > 0 && plx > e ? 1000 / (plx - e) : null,
    source,
    parallaxMas: plx,
    zeroPointMas: z,
  };
  return { parallaxMas: plx, parallaxErrMas: err, used };
}

export interface Interval68 {
  lo: number | null;
  hi: number | null;
}

/** The asymmetric R and L intervals from the fit's σ(ln θ), σ(ln F_bol) and the distance's ends. */
export function asymmetricIntervals(
  used: DistanceUsed,
  radiusRsun: number,
  lumLsun: number,
  sigmaLnTheta: number,
  sigmaLnFbol: number,
): { radiusRsun: Interval68; lumLsun: Interval68 } {
  const down = used.loPc !== null ? Math.log(used.pc / used.loPc) : null;
  const up = used.hiPc !== null ? Math.log(used.hiPc / used.pc) : null;
  const st = Number.isFinite(sigmaLnTheta) ? sigmaLnTheta : 0;
  const sf = Number.isFinite(sigmaLnFbol) ? sigmaLnFbol : 0;
  return {
    radiusRsun: { lo: down === null ? null : radiusRsun * Math.exp(-Math.hypot(st, down)), hi: up === null ? null : radiusRsun * Math.exp(Math.hypot(st, up)) },
    lumLsun: { lo: down === null ? null : lumLsun * Math.exp(-Math.hypot(sf, 2 * down)), hi: up === null ? null : lumLsun * Math.exp(Math.hypot(sf, 2 * up)) },
  };
}
