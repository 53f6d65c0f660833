// The fitted-A_V solver of the fit engine: variable projection over A_V with the fast 1-D profile fit in
// ln T at each A_V (the engine's hot path), and a bounded 3-parameter Levenberg–Marquardt as its fallback.
// It works on the engine's slots and scratch (one AvSolver per FitEngine, so it allocates nothing per
// star); the engine calls fit() from run() when A_V is fitted. The method is described in README.md.

import { AV_STEP_MAG, COARSE_STRIDE, LN_T_MAX, LN_T_MIN, LN_T_STEP } from './tables';
import { FLAG_BITS } from './flags';
import { invert3, solve2, solve3 } from './linear-algebra';
import type { FitEngine } from './engine';

/** A_V spacing of the coarse (ln T, A_V) grid when A_V is fitted, mag: the profile Newton in A_V finds
 * the same minima from 2-mag steps as from 1-mag steps (checked on 5000 bench stars: equal mean χ²). */
const COARSE_AV_STEP_MAG = 2;
/** The A_V iteration stops once its step is below this, mag (errors of A_V are ≳ 0.01 mag). */
const AV_TOL_MAG = 1e-5;

export class AvSolver {
  constructor(private readonly engine: FitEngine) {}

  private readonly jtj = new Float64Array(9);
  private readonly jtr = new Float64Array(3);
  private readonly step3 = new Float64Array(3);

  /** χ² at (u, ln s, A_V) with censored limits; leaves φ, dφ/du, dφ/dA in scratch. */
  private chi2Full(u: number, lnS: number, a: number): number {
    const e = this.engine;
    e.usePlanesFour(a);
    e.evalModel(u, e.nFit);
    const s = Math.exp(lnS);
    const y = e.y, w = e.w, phi = e.phi, active = e.active;
    let chi2 = 0;
    for (let k = 0; k < e.nFit; k++) {
      const r = y[k] - s * phi[k];
      if (k >= e.nDet) {
        active[k] = r < 0 ? 1 : 0;
        if (r >= 0) continue;
      }
      chi2 += w[k] * r * r;
    }
    return chi2;
  }

  /** JᵀWJ and JᵀWr at the state left by chi2Full. */
  private normalEquations(lnS: number): void {
    const e = this.engine;
    const s = Math.exp(lnS);
    const y = e.y, w = e.w, phi = e.phi, dphi = e.dphi, dphiA = e.dphiA, active = e.active;
    const m = this.jtj;
    const v = this.jtr;
    m.fill(0);
    v.fill(0);
    for (let k = 0; k < e.nFit; k++) {
      if (k >= e.nDet && active[k] === 0) continue;
      const wk = w[k];
      const r = y[k] - s * phi[k];
      const ju = s * dphi[k];
      const js = s * phi[k];
      const ja = s * dphiA[k];
      m[0] += wk * ju * ju;
      m[1] += wk * ju * js;
      m[2] += wk * ju * ja;
      m[4] += wk * js * js;
      m[5] += wk * js * ja;
      m[8] += wk * ja * ja;
      v[0] += wk * ju * r;
      v[1] += wk * js * r;
      v[2] += wk * ja * r;
    }
    m[3] = m[1];
    m[6] = m[2];
    m[7] = m[5];
  }

  /**
   * Fitted A_V: coarse grid over (ln T, A_V planes 2 mag apart), then Newton on the profile χ²_p(A_V) =
   * min over (ln T, s) — variable projection (Golub & Pereyra 1973): each A_V gets the fast 1-D fit in
   * ln T with s in closed form, and the A_V step uses the Gauss–Newton curvature of the profile, the
   * Schur complement M_aa − M_aθ M_θθ⁻¹ M_θa of JᵀWJ. This follows the curved T–A_V valley that makes a
   * plain 3-parameter LM zig-zag; the LM below remains as the fallback.
   */
  fit(avMin: number, avMax: number, solver: 'profile' | 'lm'): boolean {
    const e = this.engine;
    // Coarse grid: ln T nodes (≈ 20 % steps) × A_V planes COARSE_AV_STEP_MAG apart.
    let bestChi = Infinity;
    let bestC = 0;
    let bestK = 0;
    const kLo = Math.ceil(avMin / AV_STEP_MAG - 1e-9);
    const kHi = Math.floor(avMax / AV_STEP_MAG + 1e-9);
    const kStep = Math.max(1, Math.round(COARSE_AV_STEP_MAG / AV_STEP_MAG));
    for (let k = kLo; k <= kHi; k += kStep) {
      const c = e.coarseSearch(e.tables.plane(k));
      const v = e.coarseChi2[c];
      if (v < bestChi) {
        bestChi = v;
        bestC = c;
        bestK = k;
      }
    }
    if (bestChi === Infinity) return false;
    const bestPlane = e.tables.plane(bestK);
    // ln T on the best plane refined on the fine nodes. (Moving A_V off the plane without moving T along
    // the T–A_V valley would start LM far up its wall.)
    let u = e.fineStart(bestPlane, LN_T_MIN + bestC * COARSE_STRIDE * LN_T_STEP);
    let a = bestK * AV_STEP_MAG;
    a = Math.min(Math.max(a, avMin), avMax);
    const stride = COARSE_STRIDE * LN_T_STEP;
    e.usePlanesFour(a);
    let chi2 = e.newtonU(u, stride);
    u = e.u;
    if (!(e.s > 0)) return false;
    if (solver === 'lm') return this.fitLM(avMin, avMax, u, Math.log(e.s), a);
    const m = this.jtj, v = this.jtr;
    let lo = avMin;
    let hi = avMax;
    let loSure = a <= avMin;
    let hiSure = a >= avMax;
    let converged = false;
    for (let outer = 0; outer < 40; outer++) {
      this.normalEquations(Math.log(e.s));
      const det2 = m[0] * m[4] - m[1] * m[1];
      if (!(det2 > 0)) break;
      const x0 = (m[4] * m[2] - m[1] * m[5]) / det2;
      const x1 = (m[0] * m[5] - m[1] * m[2]) / det2;
      const y0 = (m[4] * v[0] - m[1] * v[1]) / det2;
      const y1 = (m[0] * v[1] - m[1] * v[0]) / det2;
      // gp = −½ dχ²_p/dA_V (positive: χ² falls as A_V grows); hp = ½ d²χ²_p/dA_V² (Gauss–Newton).
      const gp = v[2] - (m[2] * y0 + m[5] * y1);
      const hp = m[8] - (m[2] * x0 + m[5] * x1);
      if (gp > 0) {
        if (a >= avMax) {
          converged = true;
          break;
        }
        lo = a;
        loSure = true;
      } else {
        if (a <= avMin) {
          converged = true;
          break;
        }
        hi = a;
        hiSure = true;
      }
      let next = hp > 0 ? a + gp / hp : NaN;
      if (Math.abs(next - a) < AV_TOL_MAG) {
        converged = true;
        break;
      }
      if (!(next > lo && next < hi)) {
        if (gp > 0) next = hiSure ? 0.5 * (a + hi) : hi;
        else next = loSure ? 0.5 * (a + lo) : lo;
      }
      // Follow the valley: the (ln T, ln s) optimum moves by −M_θθ⁻¹ M_θa per unit A_V.
      let uStart = u - x0 * (next - a);
      if (uStart < LN_T_MIN) uStart = LN_T_MIN;
      if (uStart > LN_T_MAX) uStart = LN_T_MAX;
      const step = Math.abs(next - a);
      a = next;
      if (a <= avMin) loSure = true;
      if (a >= avMax) hiSure = true;
      e.usePlanesFour(a);
      chi2 = e.newtonU(uStart, stride);
      u = e.u;
      if (!(e.s > 0)) return false;
      if (step < AV_TOL_MAG || hi - lo < AV_TOL_MAG) {
        converged = true;
        break;
      }
    }
    if (!converged) return this.fitLM(avMin, avMax, u, Math.log(e.s), a);
    this.normalEquations(Math.log(e.s));
    return this.finish(a, avMin, avMax, chi2);
  }

  /** Bounded Levenberg–Marquardt over (ln T, ln s, A_V) from a start: the fallback of fit(). */
  private fitLM(avMin: number, avMax: number, u0: number, lnS0: number, a0: number): boolean {
    const e = this.engine;
    let u = u0;
    let lnS = lnS0;
    let a = a0;
    let chi2 = this.chi2Full(u, lnS, a);
    let lambda = 1e-3;
    const m = this.jtj, v = this.jtr, d = this.step3;
    let it = 0;
    let converged = false;
    for (; it < 100; it++) {
      this.normalEquations(lnS);
      let accepted = false;
      for (let tries = 0; tries < 12; tries++) {
        // (JᵀWJ + λ·diag(JᵀWJ)) δ = JᵀWr  (Marquardt 1963 scaling).
        if (!solve3(m, v, lambda, d)) {
          lambda *= 10;
          continue;
        }
        let na = a + d[2];
        if (na < avMin || na > avMax) {
          // Bound reached: put A_V on it and re-solve (ln T, ln s) for that A_V change (projected step),
          // instead of clipping, which leaves a non-descent step that LM would keep rejecting.
          na = na < avMin ? avMin : avMax;
          const dA = na - a;
          if (!solve2(m, v[0] - m[2] * dA, v[1] - m[5] * dA, lambda, d)) {
            lambda *= 10;
            continue;
          }
          d[2] = dA;
        }
        let nu = u + d[0];
        const nl = lnS + d[1];
        if (nu < LN_T_MIN) nu = LN_T_MIN;
        if (nu > LN_T_MAX) nu = LN_T_MAX;
        const nchi = this.chi2Full(nu, nl, na);
        if (nchi <= chi2) {
          const du = Math.abs(nu - u), dl = Math.abs(nl - lnS), da = Math.abs(na - a);
          const gain = chi2 - nchi;
          u = nu;
          lnS = nl;
          a = na;
          chi2 = nchi;
          lambda = Math.max(lambda * 0.2, 1e-9);
          accepted = true;
          // Converged when the step is far below any error (1e-7 in ln T and ln s, 1e-6 mag) or χ² stalls.
          if ((du < 1e-7 && dl < 1e-7 && da < 1e-6) || gain <= 1e-10 * chi2) converged = true;
          break;
        }
        lambda *= 8;
      }
      if (!accepted || converged) break;
    }
    e.iterations = it;
    // Final state and covariance.
    chi2 = this.chi2Full(u, lnS, a);
    this.normalEquations(lnS);
    e.u = u;
    e.s = Math.exp(lnS);
    return this.finish(a, avMin, avMax, chi2);
  }

  /** Solution bookkeeping and covariance for a fitted A_V; JᵀWJ must be in jtj. */
  private finish(a: number, avMin: number, avMax: number, chi2: number): boolean {
    const e = this.engine;
    const m = this.jtj;
    e.avMag = a;
    e.chi2 = chi2;
    if (!Number.isFinite(chi2) || !(e.s > 0)) return false;
    let nActive = 0;
    for (let k = e.nDet; k < e.nFit; k++) nActive += e.active[k];
    if (nActive > 0) e.flags |= FLAG_BITS.upper_limit_active;
    const atBound = a <= avMin + 1e-9 || a >= avMax - 1e-9;
    const cov = e.cov;
    cov.fill(0);
    if (atBound) {
      e.flags |= FLAG_BITS.av_at_bound;
      const det = m[0] * m[4] - m[1] * m[1];
      cov[0] = m[4] / det;
      cov[1] = cov[3] = -m[1] / det;
      cov[4] = m[0] / det;
      e.avFree = false;
    } else {
      if (!invert3(m, cov)) return false;
      e.avFree = true;
    }
    e.dof = e.nDet - 3;
    return true;
  }
}
