// Shapes of the catalogue API's JSON (GET /api/campaigns/:id/catalogue and …/diagrams) and its sort
// and status vocabularies: built by src/server/catalogue.ts, drawn by the catalogue islands.

export const CATALOGUE_SORTS = ['teff_k', 'lum_lsun', 'radius_rsun', 'chi2_red', 'star_key', 'review_status'] as const;
export type CatalogueSort = (typeof CATALOGUE_SORTS)[number];
/** Review states a current result can have (superseded fits are never current). */
export const CATALOGUE_STATUSES = ['pending', 'accepted', 'flagged'] as const;
export type CatalogueStatus = (typeof CATALOGUE_STATUSES)[number];
/** Download formats (GET /api/campaigns/:id/downloads/:format) and the name each is offered under. */
export const EXPORT_FORMAT_LABELS = { csv: 'CSV', ecsv: 'ECSV', votable: 'VOTable', fits: 'FITS table', json: 'JSON' } as const;
export type ExportFormat = keyof typeof EXPORT_FORMAT_LABELS;

export interface CatalogueRowView {
  fitId: number;
  starId: number;
  starKey: string;
  raDeg: number | null;
  decDeg: number | null;
  ok: boolean;
  teffK: number | null;
  teffErrK: number | null;
  teffLowerK: number | null;
  /** The pure Planck fit's (colour) temperature, beside the model's Teff. */
  tbbK: number | null;
  thetaMas: number | null;
  radiusRsun: number | null;
  radiusErrRsun: number | null;
  lumLsun: number | null;
  lumErrLsun: number | null;
  avMag: number | null;
  chi2Red: number | null;
  nBands: number | null;
  flags: string;
  reviewStatus: string;
  batchId: string;
  bandLibraryVersion: string;
  bandsUsed: string | null;
  /** A band this fit used changed in the current band library version (src/server/stale.ts). */
  stale: boolean;
}

export interface CataloguePage {
  rows: CatalogueRowView[];
  nextCursor: string | null;
  prevCursor: string | null;
}

export interface DiagramPoint {
  starId: number;
  starKey: string;
  teffK: number;
  lumLsun: number;
  reviewStatus: string;
}

export interface DensityGrid {
  /** Bin edges in Teff [K] (n+1) and log10(L/L☉) (m+1); counts[j][i] for log L bin j, Teff bin i. */
  teffEdgesK: number[];
  logLumEdges: number[];
  counts: number[][];
}

export interface CatalogueDiagrams {
  /** Rows with both Teff and L (the others cannot be placed on the diagram). */
  placed: number;
  /** Rows with a Teff but no luminosity (no or weak parallax). */
  withoutLum: number;
  points: DiagramPoint[] | null;
  density: DensityGrid | null;
  histogram: { edgesK: number[]; counts: number[] };
}
