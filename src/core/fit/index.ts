// The fit engine: see fit-star.ts for the public API and README.md for the method and its limits.
export * from './fit-star';
export * from './flags';
export * from './derived';
export { FitTables, TEFF_MIN_K, TEFF_MAX_K, type BandMeanFn } from './grid';
export { FitEngine, type EngineSettings } from './engine';
export { BLACKBODY_MODEL_ERROR_FRACTION } from './model-error';
