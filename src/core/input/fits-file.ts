// Starkiln's own FITS reader: headers of every HDU, binary tables (XTENSION = 'BINTABLE') decoded
// column by column, and per-observation metadata from image headers. Pure TypeScript over a
// Uint8Array so the browser, the server, the worker and the CLI share it.
//
// Reference: FITS Standard 4.0 (IAU FITS Working Group, 2018). Section numbers below refer to it.
// Tested against files written and read by astropy (fixtures/fits, scripts/references/make_fits_fixtures.py).
// The reader lives beside this file: fits-header.ts (cards), fits-hdus.ts (readFits, readFitsTable),
// fits-bintable.ts (binary-table decoder), fits-image.ts (image metadata).
export { FITS_BLOCK, FitsError, FitsHeader, type FitsCard, type FitsComplex, type FitsFile, type FitsHdu, type FitsValue, type HduKind, type ReadFitsOptions } from './fits-header';
export { readFits, readFitsTable, type ReadFitsTableOptions } from './fits-hdus';
export { FitsTable, type FitsCell, type FitsColumn, type FitsColumnType } from './fits-bintable';
export { parseAngle, readFitsImageHeader, ZERO_POINT_KEYWORDS, type FitsObservationMeta } from './fits-image';
