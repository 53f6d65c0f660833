// The empirical photosphere model (decision 0022): data, evaluation and the calibration builder.
import file from './photosphere-v1.json';
import type { PhotosphereData } from './model';

export * from './model';
export { bsplineValue, type UniformSpline } from './bspline';

let cached: PhotosphereData | null = null;

/** The committed model (photosphere-v1.json, built by scripts/photosphere/build.ts), checked once. */
export function defaultPhotosphere(): PhotosphereData {
  if (cached) return cached;
  const d = file as unknown as PhotosphereData;
  if (d.format !== 'starkiln-photosphere' || d.formatVersion !== 1 || !d.classes?.dwarf || !d.classes?.giant) {
    throw new Error('photosphere-v1.json: unknown format; rebuild it with npx tsx scripts/photosphere/build.ts');
  }
  cached = d;
  return d;
}
export { bandStanding, effectiveModelVersion, modelStanding, type BandStanding } from './standing';
