// The small dense linear algebra of the fit engine: 2×2 and 3×3 symmetric systems solved in closed form
// (cofactors), allocation-free, on row-major Float64Arrays.

/** Solve (M + λ·diag M) x = v for symmetric 3×3 M; false when singular. */
export function solve3(M: Float64Array, v: Float64Array, lambda: number, x: Float64Array): boolean {
  const a00 = M[0] * (1 + lambda), a01 = M[1], a02 = M[2];
  const a11 = M[4] * (1 + lambda), a12 = M[5];
  const a22 = M[8] * (1 + lambda);
  const c00 = a11 * a22 - a12 * a12;
  const c01 = a02 * a12 - a01 * a22;
  const c02 = a01 * a12 - a02 * a11;
  const det = a00 * c00 + a01 * c01 + a02 * c02;
  if (!(Math.abs(det) > 0) || !Number.isFinite(det)) return false;
  const c11 = a00 * a22 - a02 * a02;
  const c12 = a01 * a02 - a00 * a12;
  const c22 = a00 * a11 - a01 * a01;
  x[0] = (c00 * v[0] + c01 * v[1] + c02 * v[2]) / det;
  x[1] = (c01 * v[0] + c11 * v[1] + c12 * v[2]) / det;
  x[2] = (c02 * v[0] + c12 * v[1] + c22 * v[2]) / det;
  return true;
}

/** Solve the damped 2×2 (ln T, ln s) block of M for right-hand side (r0, r1); x[0], x[1]. */
export function solve2(M: Float64Array, r0: number, r1: number, lambda: number, x: Float64Array): boolean {
  const a00 = M[0] * (1 + lambda), a01 = M[1], a11 = M[4] * (1 + lambda);
  const det = a00 * a11 - a01 * a01;
  if (!(Math.abs(det) > 0) || !Number.isFinite(det)) return false;
  x[0] = (a11 * r0 - a01 * r1) / det;
  x[1] = (a00 * r1 - a01 * r0) / det;
  return true;
}

/** Inverse of a symmetric 3×3 matrix into out (row-major); false when singular. */
export function invert3(M: Float64Array, out: Float64Array): boolean {
  const a00 = M[0], a01 = M[1], a02 = M[2], a11 = M[4], a12 = M[5], a22 = M[8];
  const c00 = a11 * a22 - a12 * a12;
  const c01 = a02 * a12 - a01 * a22;
  const c02 = a01 * a12 - a02 * a11;
  const det = a00 * c00 + a01 * c01 + a02 * c02;
  if (!(Math.abs(det) > 0) || !Number.isFinite(det)) return false;
  out[0] = c00 / det;
  out[1] = out[3] = c01 / det;
  out[2] = out[6] = c02 / det;
  out[4] = (a00 * a22 - a02 * a02) / det;
  out[5] = out[7] = (a01 * a02 - a00 * a12) / det;
  out[8] = (a00 * a11 - a01 * a01) / det;
  return true;
}

