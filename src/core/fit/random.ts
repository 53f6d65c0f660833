// Fixed-seed pseudo-random numbers for Monte Carlo errors, mock stars and tests: results must be
// reproducible run to run, so nothing here reads a clock or Math.random.

/** mulberry32 (Tommy Ettinger, public domain): 32-bit state, uniform in [0, 1). */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviate by the Box–Muller transform (Box & Muller 1958). */
export function normalDeviate(rand: () => number): number {
  let u = rand();
  while (u <= 0) u = rand();
  const v = rand();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}
