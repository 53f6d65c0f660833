// Quality flags of a fit: short codes of our own, each with a one-line explanation that the README,
// the star sheet and the provenance header list. The hot path keeps them as bits; fitStar turns the
// bits into codes in the order of FLAG_ORDER.

export const FLAG_BITS = {
  outlier: 1 << 0,
  clipped: 1 << 1,
  ir_excess: 1 << 2,
  temp_lower_bound: 1 << 3,
  temp_cool_edge: 1 << 4,
  plx_weak: 1 << 5,
  plx_nonpositive: 1 << 6,
  plx_missing: 1 << 7,
  chi2_high: 1 << 8,
  av_at_bound: 1 << 9,
  upper_limit_active: 1 << 10,
  model_error_added: 1 << 11,
  class_assumed: 1 << 12,
  feh_far: 1 << 13,
  outside_calibration: 1 << 14,
  band_uncalibrated: 1 << 15,
  no_dof: 1 << 16,
  rejected: 1 << 17,
  // Set from the input (Gaia RUWE, src/core/input/survey-rules.ts), not by the engine; a high bit
  // keeps clear of the engine's own flags.
  possible_companion: 1 << 24,
} as const;

export type FlagCode = keyof typeof FLAG_BITS;

/** One plain-words line per flag (shown in the UI, README and every export's provenance). */
export const FLAG_EXPLANATIONS: Record<FlagCode | 'few_bands' | 'no_convergence', string> = {
  outlier: 'At least one band lies more than 3σ from the fitted curve.',
  rejected: 'One or two bands disagree with the others beyond what their errors allow (a test of the calibrated fit with and without them) and were left out; the excluded list gives each one\'s reason.',
  clipped: 'The worst band (at most two) was dropped and the star refitted; see the excluded list.',
  ir_excess: 'A band beyond ~5 µm (a diagnostic, not a fit input) lies more than 3σ above the curve: possible dust or a companion.',
  temp_lower_bound: 'The photometry sits on the Rayleigh–Jeans tail: only a lower bound on Teff is given (one-sided 95 %), no value.',
  temp_cool_edge: 'The best fit lies at the cool edge of the temperature grid (1500 K); the value is not reliable.',
  plx_weak: 'Parallax is less than 5 times its error: radius and luminosity are shown but 1/parallax is biased.',
  plx_nonpositive: 'Parallax is zero or negative: no radius or luminosity.',
  plx_missing: 'No parallax given: no radius or luminosity.',
  chi2_high: 'Reduced χ² above 5: the model (the calibrated photosphere, or the blackbody of a Planck-only fit) describes this photometry poorly; errors were scaled up by the square root of the reduced χ².',
  av_at_bound: 'The fitted A_V reached a bound of its allowed range; its error is not given.',
  upper_limit_active: 'An upper limit constrained the fit (the curve would otherwise exceed it).',
  model_error_added: 'The blackbody model-error term was added to the Teff error of a Planck-only fit (see the fit README).',
  class_assumed: 'The luminosity class (dwarf or giant) was not found from a parallax or given for the star: the batch setting (default dwarf) was assumed.',
  feh_far: 'The star\'s [Fe/H] lies more than 0.5 dex from solar: the photosphere is calibrated on near-solar stars.',
  outside_calibration: 'The temperature lies outside the range the photosphere is calibrated on for this class: the Teff error was widened to the Planck-vs-model difference.',
  band_uncalibrated: 'At least one fitted band has no calibration for this class and temperature: the Planck value was used there with an assumed 10 % scatter.',
  no_dof: 'As many fitted bands as fitted parameters (Teff and θ, and A_V when fitted): the curve passes through every band, so χ² says nothing and the errors are not checked by the data.',
  possible_companion: 'Gaia RUWE above 1.4 (on a star fainter than G 6, where RUWE is reliable): possibly a binary, so the photometry may be the light of two stars.',
  few_bands: 'Too few usable detections for the fit (at least 2, or 3 when A_V is fitted).',
  no_convergence: 'The fit did not converge to a finite result.',
};

/** Order in which codes are listed. */
export const FLAG_ORDER: FlagCode[] = [
  'temp_lower_bound',
  'temp_cool_edge',
  'no_dof',
  'outlier',
  'rejected',
  'clipped',
  'ir_excess',
  'chi2_high',
  'upper_limit_active',
  'av_at_bound',
  'plx_nonpositive',
  'plx_weak',
  'plx_missing',
  'model_error_added',
  'class_assumed',
  'feh_far',
  'outside_calibration',
  'band_uncalibrated',
  'possible_companion',
];

export function flagCodes(bits: number): FlagCode[] {
  const codes: FlagCode[] = [];
  if (bits === 0) return codes;
  for (const code of FLAG_ORDER) if (bits & FLAG_BITS[code]) codes.push(code);
  return codes;
}
