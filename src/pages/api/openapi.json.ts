// GET /api/openapi.json: the OpenAPI 3.1 description of the public API (no sign-in needed).
import type { APIRoute } from 'astro';
import { handle, json } from '../../web/http';
import { openApiDocument } from '../../server/openapi';

export const GET: APIRoute = handle(({ locals }) => json(openApiDocument(locals.app.env.baseUrl)));
