// Uniform cubic B-splines in x = ln T: the form of the photosphere correction ln c_b(T) (decision 0022).
// Coefficients c_0 … c_{m+2} on m intervals of width h starting at x0; on interval i with t ∈ [0, 1)
// the curve is Σ_q c_{i+q} B_q(t) with the standard uniform cubic weights (C² everywhere).

export interface UniformSpline {
  x0: number;
  h: number;
  /** m + 3 coefficients for m intervals. */
  coef: readonly number[];
}

/** The four basis weights at t ∈ [0, 1] (sum 1). */
export function bsplineWeights(t: number, out: Float64Array): void {
  const u = 1 - t;
  const t2 = t * t;
  const t3 = t2 * t;
  out[0] = (u * u * u) / 6;
  out[1] = (3 * t3 - 6 * t2 + 4) / 6;
  out[2] = (-3 * t3 + 3 * t2 + 3 * t + 1) / 6;
  out[3] = t3 / 6;
}

/** Interval index (clamped to the spline's span) and position in it. */
export function bsplineLocate(x0: number, h: number, intervals: number, x: number): { i: number; t: number } {
  let z = (x - x0) / h;
  if (z < 0) z = 0;
  if (z > intervals) z = intervals;
  let i = Math.floor(z);
  if (i >= intervals) i = intervals - 1;
  return { i, t: z - i };
}

const W = new Float64Array(4);

/** Value of the spline at x (x is clamped to the span; callers handle the range themselves). */
export function bsplineValue(s: UniformSpline, x: number): number {
  const intervals = s.coef.length - 3;
  const { i, t } = bsplineLocate(s.x0, s.h, intervals, x);
  bsplineWeights(t, W);
  return W[0] * s.coef[i] + W[1] * s.coef[i + 1] + W[2] * s.coef[i + 2] + W[3] * s.coef[i + 3];
}
