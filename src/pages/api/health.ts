// GET /api/health: app version and whether the database is reachable and fully migrated.
import type { APIRoute } from 'astro';
import { json } from '../../web/http';
import { checkHealth } from '../../server/health';

export const GET: APIRoute = ({ locals }) => {
  const report = checkHealth(() => locals.app.db);
  return json(report, report.database.reachable && report.database.migrated ? 200 : 503);
};
