// Robust rejection of bands that disagree with the others (decision 0027), on the residuals of the
// calibrated photosphere fit.
//
// The test is the mean-shift outlier test of least squares (common practice; e.g. Cook & Weisberg 1982,
// "Residuals and Influence in Regression", from memory): leaving a set S of k bands out of the fit is
// the same as giving each of them a free offset, so the drop in χ², Δχ² = χ²(all) − χ²(without S),
// follows χ² with k degrees of freedom when the bands of S are fine. Δχ² is divided by the reduced
// χ² of the fit without S when that exceeds 1 (the errors scaled up as the fit's own errors are),
// so a star whose photometry is merely noisier than its errors does not lose bands.
//
// The sets tried are every single band and every pair of bands next to each other in wavelength (one
// catalogue's bands sit side by side: a wrong cross-match or a saturated detector moves them together,
// and a pair hides itself from single-band tests). Every set tried is one test, so the threshold is
// Bonferroni-corrected: the set with the smallest tail probability p is rejected when p · K < α, K the
// number of sets tried, α the false-rejection rate per star (REJECT_FALSE_RATE) when the errors are
// right. The test runs at most twice, and never takes out more than two bands or leaves fewer than the
// fitted parameters plus one. It only runs when the fit shows something to find: a band beyond 3σ or a
// χ² whose tail probability is below 5 %; a clean star costs nothing.

import type { FitEngine } from './engine';
import { EXCLUDE_NONE, OUTLIER_SIGMA, STATUS_OK } from './engine';

/** α: the share of stars with correct errors that would lose a band by chance (at most; Bonferroni). */
export const REJECT_FALSE_RATE = 0.001;
/** The rejection test runs only when the fit's χ² has a tail probability below this (or a band is beyond 3σ). */
export const REJECT_SCREEN_P = 0.05;
/** At most this many bands are rejected per star. */
export const MAX_REJECTED = 2;

export interface RejectionEntry {
  bandKey: string;
  pivotAngstrom: number;
  flux: number;
  sigma: number;
  upper: boolean;
  exclude: number;
}

/** One rejected set of bands, with the numbers of its test. */
export interface RejectedSet {
  bands: string[];
  /** χ²(all) − χ²(without the set), before and after dividing by the reduced χ² of the fit without it. */
  deltaChi2: number;
  statistic: number;
  /** log10 of the tail probability of the statistic (χ² with as many degrees of freedom as bands). */
  log10P: number;
  /** Sets tried in this round (the Bonferroni factor K). */
  tried: number;
  /** Each band's residual in σ against the fit made without the set. */
  residualSigma: Record<string, number>;
}

const LN10 = Math.LN10;

/** ln erfc(x) for x ≥ 0 (Chebyshev fit of Numerical Recipes, relative error < 1.2e-7 everywhere). */
export function lnErfc(x: number): number {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const lnv =
    Math.log(t) -
    z * z -
    1.26551223 +
    t * (1.00002368 + t * (0.37409191 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277))))))));
  return x >= 0 ? lnv : Math.log(2 - Math.exp(lnv));
}

/** ln P(χ²_k ≥ x) for k = 1, 2 (closed forms), and by the Wilson–Hilferty approximation otherwise. */
export function lnChi2Tail(x: number, k: number): number {
  if (!(x > 0)) return 0;
  if (k === 1) return lnErfc(Math.sqrt(x / 2));
  if (k === 2) return -x / 2;
  const z = (Math.cbrt(x / k) - (1 - 2 / (9 * k))) / Math.sqrt(2 / (9 * k));
  return lnErfc(z / Math.SQRT2) - Math.LN2;
}

/**
 * Runs the test on a loaded and fitted engine. `refit(excludedEntryIndices)` must reload the engine with
 * those entries out and fit it (returning the status); `fitted` tells which entries are fitted
 * detections. Returns the entry indices rejected with the numbers of each test, and leaves the engine
 * in an undefined state (the caller fits the final band set again).
 */
export function findRejections(
  engine: FitEngine,
  entries: RejectionEntry[],
  nParams: number,
  refit: (out: number[]) => number,
  falseRate = REJECT_FALSE_RATE,
): { indices: number[]; sets: RejectedSet[] } {
  const rejected: number[] = [];
  const sets: RejectedSet[] = [];
  // Engine state of the fit with every band: the caller has just run it.
  let chi2All = engine.chi2;
  for (let round = 0; round < MAX_REJECTED; round++) {
    if (!needsTest(engine)) break;
    // Fitted detections in wavelength order.
    const det: number[] = [];
    for (let i = 0; i < entries.length; i++) if (entries[i].exclude === EXCLUDE_NONE && !entries[i].upper && !rejected.includes(i)) det.push(i);
    det.sort((a, b) => entries[a].pivotAngstrom - entries[b].pivotAngstrom);
    const room = MAX_REJECTED - rejected.length;
    const candidates: number[][] = [];
    for (const i of det) candidates.push([i]);
    if (room >= 2) for (let j = 0; j + 1 < det.length; j++) candidates.push([det[j], det[j + 1]]);
    const usable = candidates.filter((c) => det.length - c.length >= nParams + 1);
    if (usable.length === 0) break;
    let best: { set: number[]; lnP: number; dchi2: number; stat: number; res: Record<string, number> } | null = null;
    for (const set of usable) {
      if (refit([...rejected, ...set]) !== STATUS_OK) continue;
      const dchi2 = chi2All - engine.chi2;
      const scale = engine.dof > 0 ? Math.max(1, engine.chi2 / engine.dof) : 1;
      const stat = dchi2 / scale;
      const lnP = lnChi2Tail(stat, set.length);
      if (best === null || lnP < best.lnP) {
        const res: Record<string, number> = {};
        for (let k = 0; k < engine.n; k++) if (set.includes(engine.order[k])) res[entries[engine.order[k]].bandKey] = engine.residual[k];
        best = { set, lnP, dchi2, stat, res };
      }
    }
    if (best === null || best.lnP + Math.log(usable.length) >= Math.log(falseRate)) break;
    rejected.push(...best.set);
    sets.push({
      bands: best.set.map((i) => entries[i].bandKey),
      deltaChi2: best.dchi2,
      statistic: best.stat,
      log10P: best.lnP / LN10,
      tried: usable.length,
      residualSigma: best.res,
    });
    if (rejected.length >= MAX_REJECTED) break;
    // The fit without the rejected bands is the new reference of the next round.
    if (refit(rejected) !== STATUS_OK) break;
    chi2All = engine.chi2;
  }
  return { indices: rejected, sets };
}

/** Whether the fit shows anything to find: a fitted detection beyond 3σ, or an unlikely χ². */
function needsTest(engine: FitEngine): boolean {
  for (let k = 0; k < engine.nDet; k++) if (Math.abs(engine.residual[k]) > OUTLIER_SIGMA) return true;
  return engine.dof > 0 && lnChi2Tail(engine.chi2, engine.dof) < Math.log(REJECT_SCREEN_P);
}

/** A plain-words reason for one rejected band (stored with the excluded list). */
export function rejectionDetail(set: RejectedSet, band: string, falseRate = REJECT_FALSE_RATE): string {
  const r = set.residualSigma[band];
  const side = r < 0 ? 'below' : 'above';
  const others = set.bands.filter((b) => b !== band);
  const p = set.log10P < -300 ? '< 1e-300' : `= ${formatP(set.log10P)}`;
  return (
    `inconsistent with the other bands: ${Math.abs(r).toFixed(1)}σ ${side} the fit made without ${others.length ? `it and ${others.join(', ')}` : 'it'}` +
    ` (Δχ² = ${set.deltaChi2.toFixed(1)} for ${set.bands.length} band${set.bands.length > 1 ? 's' : ''}, p ${p}; threshold ${falseRate}/${set.tried} sets tried)`
  );
}

function formatP(log10P: number): string {
  const e = Math.floor(log10P);
  const m = 10 ** (log10P - e);
  return `${m.toFixed(1)}e${e}`;
}
