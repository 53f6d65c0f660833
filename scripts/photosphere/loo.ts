// Building the photosphere model from calibrators, and fitting calibrators with models that leave them
// out (leave-one-out, or blocks of neighbouring spectral types), so no star is ever fitted with a
// correction built from itself. Shared by build.ts (the committed model and its accuracy) and the tests.
import { starterBandLibrary, type BandLibrary } from '../../src/core/bands';
import { fitStar, prepareFitModel, type FitResult } from '../../src/core/fit';
import { calibrate, DEFAULT_CALIB_SETTINGS, median, robustSigma, type CalibPoint, type CalibSettings } from '../../src/core/photosphere/calibrate';
import type { LumClass, PhotosphereData, TeffTermBin } from '../../src/core/photosphere/model';
import { BENCHMARK_CITATION, SEQUENCE_CITATION, type Calibrator } from './calibrators';

export const MODEL_NAME = 'Kiln photosphere';
export const MODEL_VERSION = 'kp-1';

/** Bands the model calibrates when data allow (U, ugriz, GALEX, Tycho/Hipparcos and W4 are never calibrated). */
export const CALIBRATED_BAND_KEYS = ['B', 'V', 'R', 'I', 'G', 'BP', 'RP', 'J', 'H', 'Ks', 'W1', 'W2', 'W3'];

export const FIT_FORM =
  'ln c_b(T) = uniform cubic B-spline in ln T from 2300 to 16 000 K (knot step 0.03), fitted per band by weighted least squares with a second-difference penalty (λ = 0.3 × mean weight; P-spline, Eilers & Marx 1996) on d = ln(F_obs/F_blackbody) at the reference Teff and angular diameter; giants: the dwarf curve plus a0 + a1 (ln T − x0) fitted on benchmark giants (ridge 1/0.5² on a1), Gaia bands only. Beyond a band\'s calibrated span ln c is held at the edge and tapered to 0 (Planck) over 0.1 in ln T. λ and the knot step were chosen once, globally, by the leave-one-out residuals of the mean sequence.';

export const CALIB_SETTINGS: CalibSettings = { ...DEFAULT_CALIB_SETTINGS, knotStep: 0.03, lambda: 0.3 };

/** Teff term bin edges (K) per class. */
const TEFF_BINS: Record<LumClass, number[]> = { dwarf: [2300, 3900, 5200, 6500, 10000, 16000], giant: [3700, 5100] };
/** Assumed calibration term where only the mean sequence calibrates a bin (no star-to-star scatter). */
export const SEQUENCE_ONLY_TEFF_TERM = 0.02;

export function baseData(library: BandLibrary = starterBandLibrary()): Omit<PhotosphereData, 'classes'> {
  const bandVersions: Record<string, number> = {};
  for (const k of CALIBRATED_BAND_KEYS) bandVersions[k] = library.bands[k].version;
  return {
    format: 'starkiln-photosphere',
    formatVersion: 1,
    name: MODEL_NAME,
    version: MODEL_VERSION,
    bandLibraryVersion: library.version,
    bandVersions,
    uncalibratedScatter: 0.1,
    fehLimitDex: 0.5,
    giantRadiusRsun: 3.5,
    fitForm: FIT_FORM,
    provenance: {
      sources: [SEQUENCE_CITATION, BENCHMARK_CITATION],
      licences: {
        'dwarf-sequence': 'Derived from the mean dwarf sequence table (E. Mamajek, public repository emamajek/SpectralType); cite Pecaut & Mamajek 2013. The file\'s own header and notes give its caveats.',
        benchmark: 'Derived from gbs_v3_dev_half.fits, MIT License, Copyright (c) 2024 Sven Buder: "Permission is hereby granted, free of charge, to any person obtaining a copy of this software and associated documentation files (the \\"Software\\"), to deal in the Software without restriction … The above copyright notice and this permission notice shall be included in all copies or substantial portions of the Software." (full text in LICENSES/gbs_v3-MIT.txt).',
      },
      gaiaDr2:
        'The sequence\'s Gaia colours are DR2: measured through the revised DR2 curves (gaiadr2-*) with ZP_AB − ZP_Vega = 0.1020, 0.0318, 0.3534 (G, BP, RP; Evans et al. 2018, from memory); the ratio found is used for the DR3 bands of the same key.',
      selection:
        'Sequence: every dwarf type from 2300 to 16 000 K (0.02 mag per magnitude, as ../shared/tools/dwarf_sequence_csv.py). Benchmark: |[Fe/H]| ≤ 0.5 only; Gaia DR3 G/BP/RP always, 2MASS only with quality letter A, WISE never (saturated); log g < 3.5 → giant, else dwarf (subgiants with the dwarfs).',
      limits:
        'The sequence is a mean (no star-to-star scatter) and lacks W1−W2 from K6V to M4.5V and W1−W3 below K5V; most benchmark stars are saturated in 2MASS (few quality-A bands) and all in WISE, so giants are calibrated in the Gaia bands only and dwarfs outside 3900–6500 K by the mean sequence alone.',
    },
  };
}

export function buildData(points: CalibPoint[], library?: BandLibrary, teffTerm?: Record<LumClass, TeffTermBin[]>): PhotosphereData {
  const base = baseData(library);
  const pts = points.filter((p) => CALIBRATED_BAND_KEYS.includes(p.band));
  const out = calibrate(pts, base, CALIB_SETTINGS);
  if (teffTerm) {
    out.classes.dwarf.teffTerm = teffTerm.dwarf;
    out.classes.giant.teffTerm = teffTerm.giant;
  }
  return { ...base, classes: out.classes };
}

export interface LooFit {
  cal: Calibrator;
  result: FitResult | null;
  /** ln(T_fit / T_ref) of the calibrated fit, and of the Planck fit. */
  dLnT: number;
  dLnTbb: number;
  /** σ(ln T) of the fit before any calibration term; σ of the reference. */
  sigmaFit: number;
  sigmaRef: number;
}

/** Fits a calibrator with model data (built without it) and its known class. */
export function fitCalibrator(data: PhotosphereData, cal: Calibrator, library = starterBandLibrary()): LooFit {
  const model = prepareFitModel(library, {}, data);
  const r = fitStar(model, { id: cal.star, bandFluxes: cal.inputFluxes, parallaxMas: cal.parallaxMas, parallaxErrMas: cal.parallaxErrMas, lumClass: cal.cls, fehDex: cal.fehDex });
  if (!r.ok || r.teffK === null || r.planck.teffK === null) return { cal, result: null, dLnT: NaN, dLnTbb: NaN, sigmaFit: NaN, sigmaRef: NaN };
  const sigmaTot = (r.teffErrK ?? NaN) / r.teffK;
  const sigmaFit = Math.sqrt(Math.max(0, sigmaTot * sigmaTot - r.teffModelTermLn * r.teffModelTermLn));
  return { cal, result: r, dLnT: Math.log(r.teffK / cal.teffK), dLnTbb: Math.log(r.planck.teffK / cal.teffK), sigmaFit, sigmaRef: cal.teffErrK / cal.teffK };
}

/**
 * Fits every calibrator in `targets` with a model built from `points` minus the stars `leaveOut(cal)`
 * names (default: the calibrator itself).
 */
export function leaveOutFits(points: CalibPoint[], targets: Calibrator[], leaveOut: (cal: Calibrator) => Set<string> = (c) => new Set([`${c.source}:${c.star}`]), teffTerm?: Record<LumClass, TeffTermBin[]>): LooFit[] {
  return targets.map((cal) => {
    const out = leaveOut(cal);
    const data = buildData(points.filter((p) => !out.has(p.star)), undefined, teffTerm);
    return fitCalibrator(data, cal);
  });
}

/** The calibration term per class and bin: what the band terms and reference errors leave unexplained. */
export function teffTermFrom(fits: LooFit[]): Record<LumClass, TeffTermBin[]> {
  const out: Record<LumClass, TeffTermBin[]> = { dwarf: [], giant: [] };
  for (const cls of ['dwarf', 'giant'] as const) {
    const edges = TEFF_BINS[cls];
    for (let i = 0; i + 1 < edges.length; i++) {
      const inBin = fits.filter((f) => f.result && f.cal.cls === cls && f.cal.teffK >= edges[i] && f.cal.teffK < edges[i + 1]);
      const stars = inBin.filter((f) => f.cal.source === 'benchmark' && f.cal.fehDex !== null && Math.abs(f.cal.fehDex) <= 0.5);
      let sigma: number;
      let measured: boolean;
      if (stars.length >= 5) {
        const rs = robustSigma(stars.map((f) => f.dLnT - median(stars.map((g) => g.dLnT))));
        const explained = median(stars.map((f) => f.sigmaFit ** 2 + f.sigmaRef ** 2));
        // Bias within the bin counts as model error too (the mean offset the corrections leave).
        const bias = median(stars.map((f) => f.dLnT));
        sigma = Math.sqrt(Math.max(0, rs * rs + bias * bias - explained));
        measured = true;
      } else {
        const seq = inBin.map((f) => f.dLnT);
        const rms = seq.length ? Math.sqrt(seq.reduce((s, x) => s + x * x, 0) / seq.length) : 0;
        sigma = Math.max(rms, SEQUENCE_ONLY_TEFF_TERM);
        measured = false;
      }
      out[cls].push({ teffMinK: edges[i], teffMaxK: edges[i + 1], sigmaLnT: Math.round(sigma * 1e4) / 1e4, n: inBin.length, measured });
    }
  }
  return out;
}
