// Interstellar extinction laws as A_λ/A_V, reproducing Debian's python3-extinction 0.4.6
// (K. Barbary's `extinction` package) number for number, including what it does outside each
// law's stated range: it keeps evaluating the infrared (and far-UV) forms instead of stopping.
// Verified against fixtures/extinction/*.json made by scripts/references/make_references.py.
import { bandQuadrature, type PassbandCurve } from './passband';
import type { Band, ExtinctionLawKey, ExtinctionSpec } from './types';

export interface ExtinctionLawInfo {
  key: ExtinctionLawKey;
  label: string;
  citation: string;
  /** Range over which the law is defined by its authors (Å); outside it the formula is extrapolated. */
  validMinAngstrom: number;
  validMaxAngstrom: number;
}

export const EXTINCTION_LAWS: Readonly<Record<ExtinctionLawKey, ExtinctionLawInfo>> = {
  f99: {
    key: 'f99',
    label: 'Fitzpatrick (1999)',
    citation:
      'Fitzpatrick, E. L. 1999, PASP, 111, 63; UV part Fitzpatrick & Massa 1990, ApJS, 72, 163; optical/IR spline anchors as in python3-extinction 0.4.6 (updated values from E. Fitzpatrick, as in the IDL routine FM_UNRED)',
    // python3-extinction documents the law as defined from 910 Å to 6 µm.
    validMinAngstrom: 910,
    validMaxAngstrom: 60000,
  },
  ccm89: {
    key: 'ccm89',
    label: 'Cardelli, Clayton & Mathis (1989)',
    citation: 'Cardelli, J. A., Clayton, G. C., & Mathis, J. S. 1989, ApJ, 345, 245',
    // The paper's formulas cover 0.3 ≤ x ≤ 10 µm⁻¹.
    validMinAngstrom: 1000,
    validMaxAngstrom: 1e4 / 0.3,
  },
  od94: {
    key: 'od94',
    label: "O'Donnell (1994)",
    citation:
      "O'Donnell, J. E. 1994, ApJ, 422, 158 (optical coefficients; infrared and UV as Cardelli, Clayton & Mathis 1989)",
    validMinAngstrom: 1000,
    validMaxAngstrom: 1e4 / 0.3,
  },
};

// ---------------------------------------------------------------------------------------------
// Cardelli, Clayton & Mathis (1989) and O'Donnell (1994): A_λ/A_V = a(x) + b(x)/R_V, x in µm⁻¹.

function ccmAB(x: number, od94: boolean, out: { a: number; b: number }): void {
  if (x < 1.1) {
    // Infrared power law (CCM89 eq. 2); python3-extinction applies it at every x < 1.1, also x < 0.3.
    const y = Math.pow(x, 1.61);
    out.a = 0.574 * y;
    out.b = -0.527 * y;
  } else if (x < 3.3) {
    const y = x - 1.82;
    if (od94) {
      // O'Donnell (1994) eq. 2
      out.a = ((((((((-0.505 * y + 1.647) * y - 0.827) * y - 1.718) * y + 1.137) * y + 0.701) * y - 0.609) * y + 0.104) * y) + 1.0;
      out.b = (((((((3.347 * y - 10.805) * y + 5.491) * y + 11.102) * y - 7.985) * y - 3.989) * y + 2.908) * y + 1.952) * y;
    } else {
      // CCM89 eq. 3
      out.a = (((((((0.32999 * y - 0.7753) * y + 0.01979) * y + 0.72085) * y - 0.02427) * y - 0.50447) * y + 0.17699) * y) + 1.0;
      out.b = ((((((-2.09002 * y + 5.3026) * y - 0.62251) * y - 5.38434) * y + 1.07233) * y + 2.28305) * y + 1.41338) * y;
    }
  } else if (x < 8) {
    // CCM89 eq. 4 (note the different bump centres, 4.67 in a and 4.62 in b)
    const ya = x - 4.67;
    const yb = x - 4.62;
    let a = 1.752 - 0.316 * x - 0.104 / (ya * ya + 0.341);
    let b = -3.09 + 1.825 * x + 1.206 / (yb * yb + 0.263);
    if (x > 5.9) {
      const y = x - 5.9;
      const y2 = y * y;
      const y3 = y2 * y;
      a += -0.04473 * y2 - 0.009779 * y3;
      b += 0.213 * y2 + 0.1207 * y3;
    }
    out.a = a;
    out.b = b;
  } else {
    // CCM89 eq. 5 (far UV)
    const y = x - 8;
    const y2 = y * y;
    const y3 = y2 * y;
    out.a = -0.07 * y3 + 0.137 * y2 - 0.628 * y - 1.073;
    out.b = 0.374 * y3 - 0.42 * y2 + 4.257 * y + 13.67;
  }
}

const scratch = { a: 0, b: 0 };

export function ccm89(wavelengthAngstrom: number, rv: number): number {
  ccmAB(1e4 / wavelengthAngstrom, false, scratch);
  return scratch.a + scratch.b / rv;
}

export function odonnell94(wavelengthAngstrom: number, rv: number): number {
  ccmAB(1e4 / wavelengthAngstrom, true, scratch);
  return scratch.a + scratch.b / rv;
}

// ---------------------------------------------------------------------------------------------
// Fitzpatrick (1999): FM90 form in the UV (λ < 2700 Å), natural cubic spline in x through
// anchor points in the optical and infrared (k = E(λ−V)/E(B−V)), with an anchor k = −R_V at x = 0.

const F99_X0 = 4.596;
const F99_GAMMA = 0.99;
const F99_C3 = 3.23;
const F99_C4 = 0.41;
const F99_C5 = 5.9;
const F99_XKNOTS = [0, 1e4 / 26500, 1e4 / 12200, 1e4 / 6000, 1e4 / 5470, 1e4 / 4670, 1e4 / 4110, 1e4 / 2700, 1e4 / 2600];
const F99_X_UV = 1e4 / 2700;

function f99UvK(x: number, rv: number): number {
  const c2 = -0.824 + 4.717 / rv;
  const c1 = 2.03 - 3.007 * c2;
  const x2 = x * x;
  const y = x2 - F99_X0 * F99_X0;
  const d = x2 / (y * y + x2 * F99_GAMMA * F99_GAMMA);
  let k = c1 + c2 * x + F99_C3 * d;
  if (x >= F99_C5) {
    const z = x - F99_C5;
    k += F99_C4 * (0.5392 * z * z + 0.05644 * z * z * z);
  }
  return k;
}

interface NaturalSpline {
  x: number[];
  y: number[];
  /** Second derivatives at the knots (0 at both ends: natural spline). */
  m: number[];
}

function naturalSpline(x: number[], y: number[]): NaturalSpline {
  const n = x.length;
  const m = new Array<number>(n).fill(0);
  // Tridiagonal system for the interior second derivatives (Thomas algorithm).
  const cp = new Array<number>(n).fill(0);
  const dp = new Array<number>(n).fill(0);
  for (let i = 1; i < n - 1; i++) {
    const hl = x[i] - x[i - 1];
    const hr = x[i + 1] - x[i];
    const a = hl / 6;
    const b = (hl + hr) / 3;
    const c = hr / 6;
    const d = (y[i + 1] - y[i]) / hr - (y[i] - y[i - 1]) / hl;
    const denom = b - a * cp[i - 1];
    cp[i] = c / denom;
    dp[i] = (d - a * dp[i - 1]) / denom;
  }
  for (let i = n - 2; i >= 1; i--) m[i] = dp[i] - cp[i] * m[i + 1];
  return { x, y, m };
}

function evalSpline(s: NaturalSpline, xv: number): number {
  const { x, y, m } = s;
  const n = x.length;
  let i = 0;
  // Few knots: a linear scan is cheapest. Outside the knots the end cubic is continued.
  while (i < n - 2 && xv > x[i + 1]) i++;
  const h = x[i + 1] - x[i];
  const a = (x[i + 1] - xv) / h;
  const b = (xv - x[i]) / h;
  return a * y[i] + b * y[i + 1] + ((a * a * a - a) * m[i] + (b * b * b - b) * m[i + 1]) * (h * h) / 6;
}

function f99Knots(rv: number): number[] {
  const rv2 = rv * rv;
  const k = [
    -rv,
    (0.26469 * rv) / 3.1 - rv,
    (0.82925 * rv) / 3.1 - rv,
    -0.422809 + 1.0027 * rv + 2.13572e-4 * rv2 - rv,
    -5.1354e-2 + 1.00216 * rv - 7.35778e-5 * rv2 - rv,
    0.700127 + 1.00184 * rv - 3.32598e-5 * rv2 - rv,
    1.19456 + 1.01707 * rv - 5.46959e-3 * rv2 + 7.97809e-4 * rv2 * rv - 4.45636e-5 * rv2 * rv2 - rv,
  ];
  for (let i = 7; i < 9; i++) k.push(f99UvK(F99_XKNOTS[i], rv));
  return k;
}

const f99Splines = new Map<number, NaturalSpline>();

function f99Spline(rv: number): NaturalSpline {
  let s = f99Splines.get(rv);
  if (!s) {
    s = naturalSpline(F99_XKNOTS, f99Knots(rv));
    if (f99Splines.size > 64) f99Splines.clear();
    f99Splines.set(rv, s);
  }
  return s;
}

export function fitzpatrick99(wavelengthAngstrom: number, rv: number): number {
  const x = 1e4 / wavelengthAngstrom;
  const k = x < F99_X_UV ? evalSpline(f99Spline(rv), x) : f99UvK(x, rv);
  return 1 + k / rv;
}

// ---------------------------------------------------------------------------------------------

function checkSpec(ext: ExtinctionSpec): void {
  if (!(ext.law in EXTINCTION_LAWS)) {
    throw new Error(`unknown extinction law "${String(ext.law)}" (use f99, ccm89 or od94)`);
  }
  if (!(Number.isFinite(ext.rv) && ext.rv > 0)) {
    throw new Error(`R_V must be a positive number, got ${ext.rv}`);
  }
}

/** A_λ/A_V of the chosen law at a wavelength in Å. */
export function extinctionRatio(wavelengthAngstrom: number, ext: ExtinctionSpec): number {
  checkSpec(ext);
  return extinctionFunction(ext)(wavelengthAngstrom);
}

/** The law as a function of λ (Å) for a fixed R_V: A_λ/A_V. */
export function extinctionFunction(ext: ExtinctionSpec): (wavelengthAngstrom: number) => number {
  checkSpec(ext);
  const rv = ext.rv;
  switch (ext.law) {
    case 'f99':
      return (w) => fitzpatrick99(w, rv);
    case 'ccm89':
      return (w) => ccm89(w, rv);
    case 'od94':
      return (w) => odonnell94(w, rv);
  }
}

/** Wavelength span where a band's response is non-zero (including the ramps to the zero nodes). */
export function bandSupportAngstrom(band: Pick<Band, 'wavelengthAngstrom' | 'response'>): [number, number] {
  const w = band.wavelengthAngstrom;
  const r = band.response;
  let lo = -1;
  let hi = -1;
  for (let i = 0; i < r.length; i++) {
    if (r[i] !== 0) {
      if (lo < 0) lo = i;
      hi = i;
    }
  }
  if (lo < 0) return [w[0], w[w.length - 1]];
  return [w[Math.max(0, lo - 1)], w[Math.min(w.length - 1, hi + 1)]];
}

/**
 * Whether the law is extrapolated anywhere in the band's curve, for the provenance of a fit:
 * 'red' past its long-wavelength limit, 'blue' short of its short-wavelength limit.
 */
export function lawExtrapolation(
  band: Pick<Band, 'wavelengthAngstrom' | 'response'>,
  law: ExtinctionLawKey,
): 'none' | 'red' | 'blue' | 'both' {
  const info = EXTINCTION_LAWS[law];
  const [lo, hi] = bandSupportAngstrom(band);
  const red = hi > info.validMaxAngstrom;
  const blue = lo < info.validMinAngstrom;
  return red && blue ? 'both' : red ? 'red' : blue ? 'blue' : 'none';
}

/** Keys of the bands whose curves reach past the law's defined range. */
export function extrapolatedBandKeys(bands: Iterable<Band>, law: ExtinctionLawKey): string[] {
  const keys: string[] = [];
  for (const b of bands) if (lawExtrapolation(b, law) !== 'none') keys.push(b.key);
  return keys;
}

/**
 * Fraction of the band's weight (∫R λ dλ or ∫S dλ) lying outside the law's defined range: how much
 * an extrapolated law can matter for this band.
 */
export function fractionOutsideLawRange(band: PassbandCurve, law: ExtinctionLawKey): number {
  const info = EXTINCTION_LAWS[law];
  const q = bandQuadrature(band);
  let out = 0;
  for (let i = 0; i < q.weight.length; i++) {
    const l = q.wavelengthAngstrom[i];
    if (l < info.validMinAngstrom || l > info.validMaxAngstrom) out += q.weight[i];
  }
  return out / q.weightSum;
}
