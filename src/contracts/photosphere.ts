// The photosphere model as the admin page shows it (src/server/photosphere-model.ts builds it).

export type ModelBandState = 'as-calibrated' | 'zero-point-changed' | 'curve-changed' | 'not-in-library' | 'not-calibrated';

export interface ModelBandView {
  key: string;
  state: ModelBandState;
  /** Zero-point change since the calibration, in percent of the magnitude-0 flux (zero-point-changed only). */
  zeroPointShiftPercent: number | null;
  /** Calibrated temperature spans (K) per class; empty when the class has no calibrator in the band. */
  spansK: { dwarf: [number, number][]; giant: [number, number][] };
  /** Dwarf model scatter per temperature bin (percent of the band flux); measured = from leave-one-out residuals. */
  scatter: { teffMinK: number; teffMaxK: number; percent: number; measured: boolean; n: number }[];
  nCalibrators: number;
}

export interface PhotosphereModelView {
  name: string;
  /** The version a fit made now uses (the model's own, or model+library after a zero-point change). */
  versionInEffect: string;
  builtVersion: string;
  builtWithLibrary: string;
  currentLibrary: string;
  fitForm: string;
  sources: string[];
  limits: string;
  uncalibratedScatterPercent: number;
  fehLimitDex: number;
  giantRadiusRsun: number;
  classRangesK: { dwarf: [number, number]; giant: [number, number] };
  bands: ModelBandView[];
}
