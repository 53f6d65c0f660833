// The starter band library: the bands Starkiln knows out of the box, derived from published curves
// by scripts/references/derive_bands.ts (see fixtures/README.md and LICENSES/ for sources).
import type { Band } from '../types';
import { validateCurve } from '../passband';
import starterFile from './starter-library.json';

/** A versioned set of bands, looked up by case-sensitive key. */
export interface BandLibrary {
  /** Stored with every fit so results stay reproducible (glossary: band library version). */
  version: string;
  bands: Readonly<Record<string, Band>>;
  /** Licence texts of the curve sources, by source name. */
  sourceLicences?: Readonly<Record<string, string>>;
}

/** Keys of the starter bands in their documented order (docs/science.md, "Interfaces"). */
export const STARTER_BAND_KEYS = [
  'U', 'B', 'V', 'R', 'I',
  'J', 'H', 'Ks',
  'G', 'BP', 'RP',
  'u', 'g', 'r', 'i', 'z',
  'W1', 'W2', 'W3', 'W4',
  'BT', 'VT', 'Hp',
  'FUV', 'NUV',
] as const;

interface StarterFile {
  format: string;
  formatVersion: number;
  version: string;
  sourceLicences: Record<string, string>;
  bands: Band[];
}

let starter: BandLibrary | null = null;

function freezeBand(b: Band): Band {
  Object.freeze(b.wavelengthAngstrom);
  Object.freeze(b.response);
  if (b.zeroPoint) Object.freeze(b.zeroPoint);
  return Object.freeze(b);
}

/** The starter band library (parsed and checked once; the objects are frozen and shared). */
export function starterBandLibrary(): BandLibrary {
  if (starter) return starter;
  const file = starterFile as unknown as StarterFile;
  if (file.format !== 'starkiln-band-library' || file.formatVersion !== 1) {
    throw new Error('starter-library.json: unknown format; regenerate it with scripts/references/derive_bands.ts');
  }
  const bands: Record<string, Band> = {};
  for (const b of file.bands) {
    if (bands[b.key]) throw new Error(`starter band library: band ${b.key} appears twice`);
    validateCurve(b);
    bands[b.key] = freezeBand(b);
  }
  starter = Object.freeze({
    version: file.version,
    bands: Object.freeze(bands),
    sourceLicences: Object.freeze({ ...file.sourceLicences }),
  });
  return starter;
}

/** The band with this key, or null. Keys are case-sensitive (`u` is SDSS, `U` is Bessell). */
export function getBand(library: BandLibrary, key: string): Band | null {
  return Object.prototype.hasOwnProperty.call(library.bands, key) ? library.bands[key] : null;
}

/** The band with this key; throws a clear error naming the known keys when it is missing. */
export function requireBand(library: BandLibrary, key: string): Band {
  const band = getBand(library, key);
  if (!band) {
    throw new Error(
      `unknown band "${key}" in band library ${library.version}; known bands: ${Object.keys(library.bands).join(' ')}`,
    );
  }
  return band;
}
