// POST /api/admin/bands/preview {fileName, content, wavelengthUnit, convention}: reads a curve file
// and returns the parsed curve with its pivot wavelength. Nothing is saved (admins).
import type { APIRoute } from 'astro';
import { requireAdmin } from '#web/guards';
import { handle, json, readJsonBody } from '#web/http';
import { previewCurve } from '#server/band-library';

export const POST: APIRoute = handle(async ({ locals, request }) => {
  requireAdmin(locals);
  return json({ curve: previewCurve(await readJsonBody(request)) });
});
