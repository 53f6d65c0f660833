// Column mapping: which column of an input table holds the star id, position, parallax, A_V and
// each band's value, error or upper limit — detected from the column names (canonical names,
// catalogue-style names such as Vmag/e_Vmag, j_m/j_msigcom, w1mpro, phot_g_mean_flux), adjusted by
// the analyst, and then applied to every row with quality rules. One path for every input format:
// CSV/TSV, VOTable and FITS tables are all handed over as a `ColumnTable`.
// Pure: the intake (web), the worker and the CLI share it.
// The pieces live beside this file, one step each: column-table.ts (the shapes), column-names.ts
// (detection), check-mapping.ts, cells.ts (reading a cell), apply-mapping.ts, gaia-zero-points.ts.
export * from './column-table';
export { closestBandKey, detectMapping, matchBandColumn, mistypedBandColumn } from './column-names';
export { checkMapping } from './check-mapping';
export { previewRows, readCellNumber } from './cells';
export { applyMapping, type ApplyOptions } from './apply-mapping';
export { GAIA_VEGA_ZERO_POINT_MAG } from './gaia-zero-points';
