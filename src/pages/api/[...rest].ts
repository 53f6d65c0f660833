// Unknown API paths answer in JSON too, so scripts never have to parse an HTML 404 page.
import type { APIRoute } from 'astro';
import { json } from '../../web/http';

export const ALL: APIRoute = ({ url }) =>
  json({ error: { code: 'not_found', message: `No API endpoint at ${url.pathname}.` } }, 404);
