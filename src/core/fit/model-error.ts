// Placeholder replaced below once measured on the benchmark stars.
export const BLACKBODY_MODEL_ERROR_FRACTION = NaN;
