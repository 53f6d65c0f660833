// The photosphere model in effect with the current band library, for the admin page: its version,
// what it was built with and from, and how each calibrated band stands (decision 0026).
import { bandStanding, defaultPhotosphere, effectiveModelVersion } from '../core/photosphere';
import type { AppDatabase } from '../db/client';
import type { ModelBandView, PhotosphereModelView } from '../contracts/photosphere';
import { getCurrentLibrary } from './band-library';

const kOf = (lnT: number) => Math.round(Math.exp(lnT));

export function photosphereModelView(db: AppDatabase): PhotosphereModelView {
  const data = defaultPhotosphere();
  const library = getCurrentLibrary(db);
  const bands: ModelBandView[] = Object.keys(data.bandVersions).map((key) => {
    const s = bandStanding(data, library, key);
    const dwarf = data.classes.dwarf.bands[key];
    const giant = data.classes.giant.bands[key];
    return {
      key,
      state: s.state,
      zeroPointShiftPercent: s.state === 'zero-point-changed' ? (Math.exp(s.lnShift) - 1) * 100 : null,
      spansK: {
        dwarf: (dwarf?.spans ?? []).map(([lo, hi]) => [kOf(lo), kOf(hi)] as [number, number]),
        giant: (giant?.spans ?? []).map(([lo, hi]) => [kOf(lo), kOf(hi)] as [number, number]),
      },
      scatter: (dwarf?.scatter ?? []).map((b) => ({ teffMinK: b.teffMinK, teffMaxK: b.teffMaxK, percent: b.sigma * 100, measured: b.measured, n: b.n })),
      nCalibrators: (dwarf?.nCalibrators ?? 0) + (giant?.nCalibrators ?? 0),
    };
  });
  const provenance = data.provenance as { sources?: string[]; limits?: string };
  return {
    name: data.name,
    versionInEffect: effectiveModelVersion(data, library),
    builtVersion: data.version,
    builtWithLibrary: data.bandLibraryVersion,
    currentLibrary: library.version,
    fitForm: data.fitForm,
    sources: provenance.sources ?? [],
    limits: provenance.limits ?? '',
    uncalibratedScatterPercent: data.uncalibratedScatter * 100,
    fehLimitDex: data.fehLimitDex,
    giantRadiusRsun: data.giantRadiusRsun,
    classRangesK: {
      dwarf: [data.classes.dwarf.teffMinK, data.classes.dwarf.teffMaxK],
      giant: [data.classes.giant.teffMinK, data.classes.giant.teffMaxK],
    },
    bands,
  };
}
