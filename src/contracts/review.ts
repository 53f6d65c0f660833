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
  /** Set when this value did not reach the newest fit (another value in the band won, or it could not be converted). */
  notUsedReason: string | null;
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
}

export interface StarSheet {
  campaign: { id: string; name: string; fourEyes: boolean };
  star: { id: number; starKey: string; raDeg: number | null; decDeg: number | null; parallaxMas: number | null; parallaxErrMas: number | null; avMag: number | null };
  measurements: SheetMeasurement[];
  fit: SheetFit | null;
  bands: SheetBand[];
  /** The fitted curve s · π B_λ(T) · 10^(−0.4 A_V k(λ)) at log-spaced wavelengths, as λF_λ. */
  curve: { wavelengthUm: number[]; lambdaFlux: number[]; teffK: number; note: string } | null;
  earlierFits: { id: number; batchId: string; createdAt: string; ok: boolean; teffK: number | null; teffLowerK: number | null; chi2Red: number | null; reviewStatus: string }[];
  history: DecisionView[];
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
  thetaMas: number | null;
  radiusRsun: number | null;
  chi2Red: number | null;
  nBands: number | null;
  flags: string[];
  createdAt: string;
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
}

export interface BulkOutcome {
  decided: number;
  /** Matching fits left alone because the four-eyes rule keeps the caller from accepting them. */
  skippedFourEyes: number;
  decisionIds: number[];
}

export interface ReviewSettings {
  fourEyes: boolean;
}
