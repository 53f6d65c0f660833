// Shapes of the review API's JSON (star sheet, queue, decisions), shared by the server that builds
// them and the islands that draw them. Import-free so browser code can use it.

export interface SheetMeasurement {
  id: number;
  bandKey: string;
  bandLabel: string | null;
  pivotUm: number | null;
  source: string;
  upload: { id: string; name: string } | null;
  mag: number | null;
  magErr: number | null;
  fnuJy: number | null;
  fnuErrJy: number | null;
  upperLimit: boolean;
  quality: string | null;
  /** Set when this value did not reach the newest fit (another value in the band won, it was set aside, or it could not be converted). */
  notUsedReason: string | null;
  /** The newest fit used this value ('used'), did not ('not_used', see notUsedReason); null: no fit yet. */
  inNewestFit: 'used' | 'not_used' | null;
  /** Set aside: kept on record, not used in fits from then on. */
  setAside: { at: string; by: string | null; reason: string | null } | null;
  /** Set aside or used again since the newest fit: the change takes effect when the star is fitted again. */
  changedSinceFit: boolean;
  /** Measured on a FITS image: what its header said about the observation (the pointing is the frame's, not the star's). */
  image: { filter: string | null; dateObs: string | null; exptimeS: number | null; airmass: number | null; pointingRaDeg: number | null; pointingDecDeg: number | null } | null;
}

/** One band of the newest fit, ready to draw. Fluxes are band-mean F_λ (erg s⁻¹ cm⁻² Å⁻¹). */
export interface SheetBand {
  key: string;
  label: string;
  pivotAngstrom: number;
  pivotUm: number;
  observedFluxCgs: number;
  /** Measurement error alone. */
  errCgs: number;
  /** With the systematic floor added in quadrature: the σ of the residual. */
  sigmaCgs: number;
  upperLimit: boolean;
  modelFluxCgs: number | null;
  residualSigma: number | null;
  /** λ·F_λ at the pivot, erg s⁻¹ cm⁻². */
  observedLambdaFlux: number;
  sigmaLambdaFlux: number;
  modelLambdaFlux: number | null;
  /** The pure Planck fit's band mean, λ·F_λ (null when the fit used no photosphere model: then it is modelLambdaFlux). */
  planckModelLambdaFlux: number | null;
  /** 'fitted', 'excluded' (did not count), 'upper_limit'. */
  role: 'fitted' | 'excluded' | 'upper_limit';
  /** More than 3σ from the curve. */
  outlier: boolean;
  /** Plain words for why the band is drawn differently, or null. */
  note: string | null;
}

export interface SheetFit {
  id: number;
  batchId: string;
  batchCreatedAt: string;
  batchStartedBy: { id: string; name: string } | null;
  createdAt: string;
  ok: boolean;
  failureReason: string | null;
  reviewStatus: string;
  teffK: number | null;
  teffErrK: number | null;
  teffErrFormalK: number | null;
  teffLowerK: number | null;
  thetaMas: number | null;
  thetaErrMas: number | null;
  radiusRsun: number | null;
  radiusErrRsun: number | null;
  lumLsun: number | null;
  lumErrLsun: number | null;
  fbolCgs: number | null;
  fbolErrCgs: number | null;
  avMag: number | null;
  avErrMag: number | null;
  avFitted: boolean;
  chi2: number | null;
  chi2Red: number | null;
  nBands: number | null;
  bandsUsed: string[];
  irExcessSigma: number | null;
  flags: { code: string; explanation: string }[];
  law: string | null;
  rv: number | null;
  floorFraction: number | null;
  bandLibraryVersion: string;
  softwareVersion: string;
  /** The pure Planck (blackbody colour) fit, always made beside the model; equal to teff_* without a model. */
  tbbK: number | null;
  tbbErrK: number | null;
  tbbErrFormalK: number | null;
  tbbLowerK: number | null;
  tbbChi2Red: number | null;
  /** The temperature model and its version, e.g. "Kiln photosphere kp-1"; null: Planck only. */
  model: string | null;
  lumClass: string | null;
  lumClassSource: string | null;
  fehDex: number | null;
}

export interface StarSheet {
  campaign: { id: string; name: string; fourEyes: boolean };
  star: { id: number; starKey: string; raDeg: number | null; decDeg: number | null; parallaxMas: number | null; parallaxErrMas: number | null; avMag: number | null };
  measurements: SheetMeasurement[];
  /** Values the input rules left out at import (quality letter, saturation, a catalogue flag, the BP/RP excess), with why. */
  leftOut: { bandKey: string; source: string; reason: string; detail: string; uploadName: string | null }[];
  fit: SheetFit | null;
  bands: SheetBand[];
  /**
   * The Planck fit's curve s · π B_λ(T_bb) · 10^(−0.4 A_V k(λ)) at log-spaced wavelengths, as λF_λ
   * (with a photosphere model, that model's fit is drawn as its band means, which have no curve).
   */
  curve: { wavelengthUm: number[]; lambdaFlux: number[]; teffK: number; note: string } | null;
  earlierFits: { id: number; batchId: string; createdAt: string; ok: boolean; teffK: number | null; teffLowerK: number | null; chi2Red: number | null; reviewStatus: string }[];
  history: DecisionView[];
  /** What the re-fit that made the current fit did with the earlier decision (null: it found none). */
  carryover: CarryoverView | null;
}

export interface QueueItem {
  fitResultId: number;
  starId: number;
  starKey: string;
  batchId: string;
  batchStartedById: string | null;
  teffK: number | null;
  teffErrK: number | null;
  teffLowerK: number | null;
  tbbK: number | null;
  thetaMas: number | null;
  radiusRsun: number | null;
  chi2Red: number | null;
  nBands: number | null;
  flags: string[];
  createdAt: string;
  /** Set when a re-fit sent this fit back to the queue instead of carrying the earlier decision over. */
  returned: CarryoverView | null;
}

export interface QueuePage {
  items: QueueItem[];
  /** Pending fits matching the filter, all pages together; given with the first page only (null on later pages). */
  total: number | null;
  /** Pass back as `cursor` for the next page; null on the last page. */
  nextCursor: string | null;
}

export interface DecisionView {
  id: number;
  fitResultId: number;
  batchId: string;
  decision: 'accepted' | 'flagged';
  reason: string | null;
  reasonLabel: string;
  comment: string;
  reviewer: { id: string; name: string } | null;
  createdAt: string;
  bulk: boolean;
  bulkFilter: Record<string, unknown> | null;
  supersededAt: string | null;
  /** 'changed': a later decision on the same fit; 'refit': the star was fitted again. */
  supersededReason: string | null;
  /** Set when a re-fit carried this decision over from the one on the star's earlier fit. */
  carriedOver: CarryoverView | null;
  /** The campaign's four-eyes rule was switched off when this decision was made. */
  fourEyesOff: boolean;
}

/**
 * What a re-fit did with a review decision (decision record 0016): carried it over to the new fit,
 * or returned the new fit to the queue. Reason codes: options, bands, flags, teff, theta, four_eyes.
 */
export interface CarryoverView {
  outcome: 'carried' | 'returned';
  reasons: string[];
  fromFitResultId: number;
  fromDecisionId: number;
  /** The decision on the earlier fit (accepted or flagged). */
  decision: 'accepted' | 'flagged';
  old: { teffK: number | null; teffErrK: number | null; thetaMas: number | null; thetaErrMas: number | null; flags: string[] };
  new: { teffK: number | null; teffErrK: number | null; thetaMas: number | null; thetaErrMas: number | null; flags: string[] };
  /** Plain words for the page: what changed and why the decision did or did not carry over. */
  text: string;
}

/** The agreement a carried-over decision needs, in units of the smaller of the two fits' σ. */
export const CARRYOVER_TOLERANCE_SIGMA = 0.25;

const CARRYOVER_REASON_WORDS: Record<string, string> = {
  options: 'the fit options differ',
  bands: 'a different set of bands was fitted',
  flags: 'the flags changed',
  teff: `Teff moved by ${CARRYOVER_TOLERANCE_SIGMA}σ or more`,
  theta: `θ moved by ${CARRYOVER_TOLERANCE_SIGMA}σ or more`,
  four_eyes: 'the reviewer started the re-fit, and the four-eyes rule is on',
};

export function carryoverReasonWords(code: string): string {
  return CARRYOVER_REASON_WORDS[code] ?? code;
}

function fmt(v: number | null, digits: number): string {
  return v === null ? '—' : v.toFixed(digits);
}

/** "Teff 5801 → 5803 K (0.05σ), θ 0.412 → 0.411 mas (0.02σ)" — the old and new values side by side. */
export function describeCarryover(c: Omit<CarryoverView, 'text'>): string {
  const sigmas = (a: number | null, b: number | null, ea: number | null, eb: number | null) => {
    if (a === null || b === null || !ea || !eb) return '';
    return ` (${(Math.abs(b - a) / Math.min(ea, eb)).toFixed(2)}σ)`;
  };
  const values = `Teff ${fmt(c.old.teffK, 0)} → ${fmt(c.new.teffK, 0)} K${sigmas(c.old.teffK, c.new.teffK, c.old.teffErrK, c.new.teffErrK)}, θ ${fmt(c.old.thetaMas, 4)} → ${fmt(c.new.thetaMas, 4)} mas${sigmas(c.old.thetaMas, c.new.thetaMas, c.old.thetaErrMas, c.new.thetaErrMas)}`;
  const flags = c.old.flags.join(' ') === c.new.flags.join(' ') ? '' : `; flags ${c.old.flags.join(' ') || 'none'} → ${c.new.flags.join(' ') || 'none'}`;
  if (c.outcome === 'carried') return `Carried over from the earlier fit after a re-fit: ${values}${flags}.`;
  return `Back for review after a re-fit (the earlier fit was ${c.decision}): ${c.reasons.map(carryoverReasonWords).join('; ')}. ${values}${flags}.`;
}

export interface BulkOutcome {
  decided: number;
  /** Matching fits left alone because the four-eyes rule keeps the caller from accepting them. */
  skippedFourEyes: number;
  decisionIds: number[];
}

export interface ReviewSettings {
  fourEyes: boolean;
  /** Why the rule was last switched (always given when it was switched off). */
  reason: string;
  updatedBy: { id: string; name: string } | null;
  updatedAt: string | null;
}
