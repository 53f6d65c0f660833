// The catalogue's request parameters (GET /api/campaigns/:id/catalogue, …/count, …/diagrams, the
// downloads and the catalogue page) read from the URL and handed to the use cases as plain objects.
import { catalogueFilterInput, cataloguePageInput, type CatalogueFilter, type CataloguePageRequest } from '#server/catalogue';

const paramsObject = (params: URLSearchParams) => Object.fromEntries([...params.entries()]);

export function parseCatalogueFilter(params: URLSearchParams): CatalogueFilter {
  return catalogueFilterInput(paramsObject(params));
}

export function parseCataloguePageRequest(params: URLSearchParams): CataloguePageRequest {
  return cataloguePageInput(paramsObject(params));
}
