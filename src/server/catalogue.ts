// The catalogue of a campaign: each star's current result (fit_results.is_current, kept by a
// trigger: its newest successful fit, else its newest failure) with its review status. Pages are
// read by keyset on (sort value, fit id) through the partial indexes of drizzle/0005, so a page
// costs the same on page 1 and page 20 000. Missing values (no parallax → no radius) sort last in
// both directions. The same filter drives the table, the diagrams and the downloads.
// One module per step, in src/server/catalogue/: filter.ts (what a query may ask for), page.ts (the
// SQL planner and keyset cursors), summary.ts (totals, cached per catalogue stamp), diagrams.ts.
// Reading the request URL is the web layer's (src/web/catalogue-params.ts).
export { CATALOGUE_SORTS, CATALOGUE_STATUSES } from '../contracts/catalogue';
export type { CatalogueDiagrams, CataloguePage, CatalogueRowView, CatalogueSort, CatalogueStatus, DensityGrid, DiagramPoint } from '../contracts/catalogue';
export { catalogueFilterFromQuery, catalogueFilterInput, cataloguePageInput, DEFAULT_PAGE_SIZE, describeFilter, FLAG_CODES, filterToParams, MAX_PAGE_SIZE, type CatalogueFilter, type CataloguePageRequest } from './catalogue/filter';
export { cataloguePage, catalogueTuning, filterSql, prepared, STARS_THEN_RESULTS } from './catalogue/page';
export { catalogueCount, catalogueSummaryStats, catalogueVersion } from './catalogue/summary';
export { catalogueDiagrams, DIAGRAM_POINT_LIMIT } from './catalogue/diagrams';
