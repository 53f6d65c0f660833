// The OpenAPI 3.1 description of Starkiln's public JSON API, served at GET /api/openapi.json.
// Written from the route files under src/pages/api (each file's first comment says what it does);
// tests/api-tokens.test.ts checks that every route file with a public method is described here.
// Scripts authenticate with a personal API token as a bearer token; the browser uses its session.
import { CATALOGUE_SORTS, CATALOGUE_STATUSES, FLAG_CODES, MAX_PAGE_SIZE } from './catalogue';
import { EXPORT_FORMAT_NAMES } from './exports';
import { appVersion } from './health';

type Json = Record<string, unknown>;

const ref = (name: string) => ({ $ref: `#/components/schemas/${name}` });
const jsonBody = (schema: Json, description = 'OK') => ({ description, content: { 'application/json': { schema } } });
const errors = {
  '400': { $ref: '#/components/responses/BadRequest' },
  '401': { $ref: '#/components/responses/Unauthenticated' },
  '403': { $ref: '#/components/responses/Forbidden' },
  '404': { $ref: '#/components/responses/NotFound' },
};
const pathParam = (name: string, description: string) => ({ name, in: 'path', required: true, schema: { type: 'string' }, description });
const campaignId = pathParam('id', 'Campaign id.');
const q = (name: string, schema: Json, description: string) => ({ name, in: 'query', required: false, schema, description });

const filterParams = [
  q('status', { type: 'string', examples: ['accepted', 'accepted,flagged', 'all'] }, `Review states, comma-separated: ${CATALOGUE_STATUSES.join(', ')}; or all (the default).`),
  q('teffMin', { type: 'number' }, 'Lowest Teff in K.'),
  q('teffMax', { type: 'number' }, 'Highest Teff in K.'),
  q('chi2Max', { type: 'number' }, 'Largest reduced χ².'),
  q('flag', { type: 'string', enum: FLAG_CODES }, 'Rows with this quality flag (see the flag list in any download header).'),
  q('flagAbsent', { type: 'string', enum: ['1', '0'] }, 'With flag: rows without it instead.'),
  q('q', { type: 'string' }, 'Star ids starting with this text (case-sensitive).'),
];

function op(summary: string, description: string, responses: Json, extra: Json = {}): Json {
  return { summary, description, responses: { ...responses, ...errors }, ...extra };
}

export function openApiDocument(baseUrl?: string): Json {
  return {
    openapi: '3.1.0',
    info: {
      title: 'Starkiln API',
      version: appVersion(),
      description:
        'Effective temperatures, angular diameters, radii and luminosities from multi-band photometry: campaigns, batches of fits, stars, review, the catalogue and its downloads. ' +
        'Every answer is JSON except the downloads; errors are {error: {code, message, field?}}. Scripts send a personal API token (made on /account/tokens) as `Authorization: Bearer sk_…`; ' +
        'they act with the roles of the token’s owner and need no cookie or Origin header.',
    },
    servers: baseUrl ? [{ url: baseUrl }] : [],
    security: [{ bearerToken: [] }, { sessionCookie: [] }],
    tags: ['health', 'campaigns', 'batches', 'stars', 'review', 'catalogue', 'downloads', 'releases', 'tokens', 'admin'].map((name) => ({ name })),
    paths: {
      '/api/health': { get: { ...op('Service health', 'App version and whether the database is reachable and migrated. No sign-in needed.', { '200': jsonBody(ref('Health')) }), tags: ['health'], security: [] } },
      '/api/sign-up': { post: { ...op('Create an account', 'From an invitation (or when sign-up is open); signs in. Used by the sign-up page.', { '201': jsonBody({ type: 'object' }, 'Created') }, { requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['name', 'email', 'password'], properties: { name: { type: 'string' }, email: { type: 'string' }, password: { type: 'string' }, invitation: { type: 'string' } } } } } } }), tags: ['campaigns'], security: [] } },
      '/api/me': { get: { ...op('Who am I', 'The signed-in person (or the owner of the token).', { '200': jsonBody({ type: 'object' }) }), tags: ['campaigns'] } },
      '/api/campaigns': {
        get: { ...op('Your campaigns', 'Campaigns you are a member of, with your roles.', { '200': jsonBody({ type: 'object', properties: { campaigns: { type: 'array', items: { type: 'object' } } } }) }), tags: ['campaigns'] },
        post: { ...op('Create a campaign', 'Members and admins; you become its analyst.', { '201': jsonBody({ type: 'object' }, 'Created') }, { requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['name'], properties: { name: { type: 'string' }, description: { type: 'string' } } } } } } }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}': { get: { ...op('One campaign', 'The campaign with its members (members and admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/members': {
        get: { ...op('Members', 'Any member or admin.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['campaigns'] },
        post: { ...op('Add a member', 'Add someone by e-mail with roles, or invite an unknown address (analysts and admins).', { '201': jsonBody({ type: 'object' }, 'Added or invited') }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['email', 'roles'], properties: { email: { type: 'string' }, roles: { type: 'array', items: { type: 'string', enum: ['analyst', 'reviewer', 'collaborator'] } } } } } } } }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}/members/{userId}': {
        put: { ...op('Change a member’s roles', 'Replace the roles (analysts and admins); a guest stays a collaborator; the last analyst keeps the role (409).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('userId', 'Account id.')], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', properties: { roles: { type: 'array', items: { type: 'string' } } } } } } } }), tags: ['campaigns'] },
        delete: { ...op('Remove a member', 'Their earlier work stays attributed to them (analysts and admins); the last analyst cannot be removed (409).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('userId', 'Account id.')] }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}/invitations/{invitationId}': { delete: { ...op('Revoke an invitation', 'An open invitation stops working (analysts and admins). Open invitations are listed in the campaign overview.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('invitationId', 'Invitation id.')] }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/measurements/use': { post: { ...op('Set values aside or use them again', 'A value set aside stays on record but no later fit uses it; name the values (measurementIds) or an upload (uploadId); a reason is required to set aside (analysts and admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['use'], properties: { measurementIds: { type: 'array', items: { type: 'integer' } }, uploadId: { type: 'string' }, use: { type: 'boolean' }, reason: { type: 'string' } } } } } } }), tags: ['stars'] } },
      '/api/campaigns/{id}/archive': { post: { ...op('Archive or restore a campaign', 'Archived campaigns keep everything, are listed apart and take no imports or batches (analysts and admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', properties: { archived: { type: 'boolean' } } } } } } }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/releases/{releaseId}': { get: { ...op('One release', 'What a frozen release holds: rows, versions, provenance, files with SHA-256 (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('releaseId', 'Release id.')] }), tags: ['catalogue'] } },
      '/api/campaigns/{id}/releases/{releaseId}/files/{format}': { get: { ...op('A release file', 'The bytes written at release time (csv, ecsv, votable, fits or json); the SHA-256 is the ETag and Repr-Digest (any member).', { '200': { description: 'The file' } }, { parameters: [campaignId, pathParam('releaseId', 'Release id.'), pathParam('format', 'csv, ecsv, votable, fits or json.')] }), tags: ['catalogue'] } },
      '/api/campaigns/{id}/releases/{releaseId}/compare/{otherId}': { get: { ...op('Compare two releases', 'Stars added, removed and changed (column by column) from this release to the other (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('releaseId', 'Release id.'), pathParam('otherId', 'The other release id.')] }), tags: ['catalogue'] } },
      '/api/campaigns/{id}/uploads': {
        get: { ...op('Recent uploads', 'Analysts; admins may look.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['campaigns'] },
        post: { ...op('Upload a photometry table', 'multipart/form-data with one file (CSV, TSV, VOTable, FITS table or FITS image header); the format is detected from the content (analysts).', { '201': jsonBody({ type: 'object' }, 'Stored') }, { parameters: [campaignId], requestBody: { required: true, content: { 'multipart/form-data': { schema: { type: 'object', properties: { file: { type: 'string', format: 'binary' } } } } } } }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}/uploads/{uploadId}': {
        get: { ...op('One upload', 'Columns, preview, detected mapping and report (analysts).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('uploadId', 'Upload id.')] }), tags: ['campaigns'] },
        delete: { ...op('Withdraw an upload', 'Removes the file, the values its import brought in and the stars left with no value and no fit, in one transaction (analysts, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('uploadId', 'Upload id.')] }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}/uploads/{uploadId}/check': { post: { ...op('Check an upload', 'Queues the check of every row for a column mapping; writes no stars. 202 with the job; its report comes with the finished job (analysts).', { '202': jsonBody({ type: 'object' }, 'Job queued (or answered from the stored check)') }, { parameters: [campaignId, pathParam('uploadId', 'Upload id.')], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object' } } } } }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/uploads/{uploadId}/import': { post: { ...op('Import an upload', 'Queues the import (one transaction). 202 with the job; the finished job has the counts, or its refusal: 422 with the report when there are problems and importValidRows is false (analysts).', { '202': jsonBody({ type: 'object' }, 'Job queued') }, { parameters: [campaignId, pathParam('uploadId', 'Upload id.')], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object' } } } } }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/uploads/{uploadId}/jobs/{jobId}': { get: { ...op('An intake job', 'Reading, check or import of an upload: state, rows read so far, and when finished the summary or the refusal with its report (analysts; admins may look).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('uploadId', 'Upload id.'), pathParam('jobId', 'Job id.')] }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/mapping-presets': {
        get: { ...op('Saved column mappings', 'Analysts; admins may look.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['campaigns'] },
        post: { ...op('Save a column mapping', 'The same name replaces (analysts).', { '201': jsonBody({ type: 'object' }, 'Saved') }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object' } } } } }), tags: ['campaigns'] },
      },
      '/api/campaigns/{id}/mapping-presets/{presetId}': { delete: { ...op('Delete a saved mapping', 'Analysts.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('presetId', 'Preset id.')] }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/batches': {
        get: { ...op('Batches', 'The campaign’s batches with their progress (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['batches'] },
        post: { ...op('Start a batch', 'Fit every star of the campaign, or the listed starKeys, with the given options (analysts).', { '201': jsonBody({ type: 'object' }, 'Started') }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', properties: { options: { type: 'object', properties: { law: { type: 'string', enum: ['f99', 'ccm89', 'od94'] }, rv: { type: 'number' }, avMode: { type: 'string', enum: ['fixed', 'fitted'] }, avMag: { type: 'number' }, avMaxMag: { type: 'number' }, floorFraction: { type: 'number' }, excludeBands: { type: 'array', items: { type: 'string' } }, clip: { type: 'boolean', description: 'sequential clipping of the worst band; only used with reject false or planckOnly' }, reject: { type: 'boolean', description: 'robust rejection of one or two bands inconsistent with the others (default true), each with its reason' }, includeLongBands: { type: 'boolean' }, planckOnly: { type: 'boolean', description: 'fit a blackbody only (teff_* = tbb_*); default false: the Kiln photosphere, with the Planck fit beside it' }, lumClass: { type: 'string', enum: ['auto', 'dwarf', 'giant'], description: 'class for stars without their own lum_class; auto: from the parallax radius' } } }, starKeys: { type: 'array', items: { type: 'string' } } } } } } } }), tags: ['batches'] },
      },
      '/api/batches/{batchId}/progress': { get: { ...op('Batch progress', 'Counts, rate and time left (any member of its campaign).', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('batchId', 'Batch id.')] }), tags: ['batches'] } },
      '/api/batches/{batchId}/failures': { get: { ...op('Batch failures', 'Stars that could not be fitted, with reasons, and jobs waiting for another try.', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('batchId', 'Batch id.'), q('limit', { type: 'integer' }, 'Page size.'), q('offset', { type: 'integer' }, 'Rows to skip.')] }), tags: ['batches'] } },
      '/api/batches/{batchId}/cancel': { post: { ...op('Cancel a batch', 'Removes its waiting jobs (those stars get no result from it); jobs a worker holds finish. No e-mail. Analysts of its campaign, admins.', { '200': jsonBody({ type: 'object' }), '409': { $ref: '#/components/responses/Conflict' } }, { parameters: [pathParam('batchId', 'Batch id.')] }), tags: ['batches'] } },
      '/api/campaigns/{id}/stars': { get: { ...op('Stars of a campaign', 'In order of star id, keyset-paged: pass nextAfter as after (or prevBefore as before) for the next (previous) page. Each star with its measurement count and current fit (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, q('q', { type: 'string' }, 'Star ids starting with this (case-sensitive).'), q('after', { type: 'string' }, 'Stars after this star id.'), q('before', { type: 'string' }, 'Stars before this star id.'), q('limit', { type: 'integer', minimum: 1, maximum: 500 }, 'Page size (default 100).')] }), tags: ['campaigns'] } },
      '/api/campaigns/{id}/stars/{starId}': { get: { ...op('Star sheet', 'Measurements, the newest fit with residuals and the fitted curve, earlier fits and review history (any member). starId is the numeric id or the star’s key.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, pathParam('starId', 'Star id or key.')] }), tags: ['stars'] } },
      '/api/campaigns/{id}/review-queue': { get: { ...op('Review queue', 'Fits waiting for review, paged (reviewers, analysts, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, q('cursor', { type: 'string' }, 'From a previous page.'), q('limit', { type: 'integer' }, 'Page size.')] }), tags: ['review'] } },
      '/api/campaigns/{id}/review/bulk': { post: { ...op('Decide on many fits', 'One decision on every pending fit matching a filter (reviewers, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object' } } } } }), tags: ['review'] } },
      '/api/campaigns/{id}/review/settings': {
        get: { ...op('Review rules', 'Whether the four-eyes rule is on (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['review'] },
        post: { ...op('Change review rules', 'Switch the four-eyes rule: analysts and reviewers of the campaign, admins; not a guest account, nor whoever started a batch whose fits wait for review; switching off needs a reason.', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', properties: { fourEyes: { type: 'boolean' }, reason: { type: 'string' } } } } } } }), tags: ['review'] },
      },
      '/api/campaigns/{id}/review/audit': { get: { ...op('Review audit trail', 'Every decision with who and when, supersessions by re-fit, bulk actions with their filter, rule changes and notices sent, newest first (reviewers, analysts, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId, q('limit', { type: 'integer', minimum: 1, maximum: 500, default: 100 }, 'How many events.')] }), tags: ['review'] } },
      '/api/fits/{fitId}/decision': { post: { ...op('Decide on one fit', 'accepted or flagged with a reason and comment (reviewers, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('fitId', 'Fit id.')], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['decision'], properties: { decision: { type: 'string', enum: ['accepted', 'flagged'] }, reason: { type: 'string' }, comment: { type: 'string' } } } } } } }), tags: ['review'] } },
      '/api/fits/{fitId}/history': { get: { ...op('Review history of a fit', 'Every decision, superseded ones included (any member).', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('fitId', 'Fit id.')] }), tags: ['review'] } },
      '/api/campaigns/{id}/catalogue': {
        get: {
          ...op(
            'A page of the catalogue',
            'Each star’s current fit (its newest successful fit, else its newest failure) with its review status, sorted and filtered, paged by cursor. Rows without a value in the sort column come last.',
            { '200': jsonBody(ref('CataloguePage')) },
            {
              parameters: [
                campaignId,
                q('sort', { type: 'string', enum: [...CATALOGUE_SORTS], default: 'teff_k' }, 'Sort column.'),
                q('dir', { type: 'string', enum: ['asc', 'desc'], default: 'asc' }, 'Sort direction.'),
                q('limit', { type: 'integer', minimum: 1, maximum: MAX_PAGE_SIZE, default: 50 }, 'Rows per page.'),
                q('after', { type: 'string' }, 'nextCursor of the previous page.'),
                q('before', { type: 'string' }, 'prevCursor of the next page.'),
                ...filterParams,
              ],
            },
          ),
          tags: ['catalogue'],
        },
      },
      '/api/campaigns/{id}/catalogue/count': { get: { ...op('How many rows a filter leaves', 'Counted once per filter and kept until a result of the campaign is written, re-reviewed or replaced; a repeat is answered from that.', { '200': jsonBody({ type: 'object', properties: { total: { type: 'integer' }, campaignTotal: { type: 'integer' } } }) }, { parameters: [campaignId, ...filterParams] }), tags: ['catalogue'] } },
      '/api/campaigns/{id}/catalogue/diagrams': { get: { ...op('Temperature–luminosity diagram and Teff histogram', 'Points (each with its star) up to 20 000, else a 2-D histogram on Teff × log L (counts[j][i] for log L bin j, Teff bin i). Kept per filter until the campaign\'s results change.', { '200': jsonBody({
        type: 'object',
        properties: {
          placed: { type: 'integer', description: 'rows with both Teff and a luminosity' },
          withoutLum: { type: 'integer', description: 'rows with a Teff but no luminosity (no usable parallax)' },
          points: { type: ['array', 'null'], items: { type: 'object', properties: { starId: { type: 'integer' }, starKey: { type: 'string' }, teffK: { type: 'number' }, lumLsun: { type: 'number' }, reviewStatus: { type: 'string' } } } },
          density: { type: ['object', 'null'], properties: { teffEdgesK: { type: 'array', items: { type: 'number' } }, logLumEdges: { type: 'array', items: { type: 'number' } }, counts: { type: 'array', items: { type: 'array', items: { type: 'integer' } } } } },
          histogram: { type: 'object', properties: { edgesK: { type: 'array', items: { type: 'number' } }, counts: { type: 'array', items: { type: 'integer' } } } },
        },
      }) }, { parameters: [campaignId, ...filterParams] }), tags: ['catalogue'] } },
      '/api/campaigns/{id}/downloads/{format}': {
        get: {
          ...op(
            'Download the catalogue',
            'The filtered catalogue, streamed, with its provenance (software and band library versions, zero-points, constants, extinction law and options, date, campaign). Use status=accepted for the accepted catalogue.',
            {
              '200': {
                description: 'The file',
                headers: { 'Content-Disposition': { schema: { type: 'string' }, description: 'attachment; filename="…"' } },
                content: { 'text/csv': { schema: { type: 'string' } }, 'application/x-votable+xml': { schema: { type: 'string' } }, 'application/fits': { schema: { type: 'string', format: 'binary' } }, 'application/json': { schema: { type: 'object' } } },
              },
            },
            { parameters: [campaignId, { name: 'format', in: 'path', required: true, schema: { type: 'string', enum: EXPORT_FORMAT_NAMES } }, ...filterParams] },
          ),
          tags: ['downloads'],
        },
      },
      '/api/campaigns/{id}/releases': {
        get: { ...op('Catalogue releases', 'Any member.', { '200': jsonBody({ type: 'object', properties: { releases: { type: 'array', items: ref('Release') } } }) }, { parameters: [campaignId] }), tags: ['releases'] },
        post: { ...op('Release the catalogue', 'Records the release and e-mails every collaborator once (analysts, admins).', { '201': jsonBody({ type: 'object', properties: { release: ref('Release') } }, 'Released'), '409': { $ref: '#/components/responses/Conflict' } }, { parameters: [campaignId], requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['title'], properties: { title: { type: 'string' }, note: { type: 'string' }, query: { type: 'string', description: 'Catalogue filter as a query string; default status=accepted.' } } } } } } }), tags: ['releases'] },
      },
      '/api/tokens': {
        get: { ...op('Your API tokens', 'Never their secrets.', { '200': jsonBody({ type: 'object', properties: { tokens: { type: 'array', items: ref('Token') } } }) }), tags: ['tokens'] },
        post: { ...op('Make an API token', 'Only from a signed-in session. The answer holds the secret; it is not shown again.', { '201': jsonBody({ type: 'object', properties: { token: ref('Token'), secret: { type: 'string', examples: ['sk_…'] } } }, 'Made') }, { requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['name'], properties: { name: { type: 'string' }, expiresInDays: { type: ['integer', 'null'] } } } } } } }), tags: ['tokens'] },
      },
      '/api/tokens/{tokenId}': { delete: { ...op('Revoke an API token', 'One of your own.', { '200': jsonBody({ type: 'object', properties: { token: ref('Token') } }) }, { parameters: [pathParam('tokenId', 'Token id.')] }), tags: ['tokens'] } },
      '/api/admin/users': { get: { ...op('Every account', 'Admins only.', { '200': jsonBody({ type: 'object' }) }), tags: ['admin'] } },
      '/api/admin/outbox': { get: { ...op('The e-mail outbox', 'Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [q('to', { type: 'string' }, 'Recipient.'), q('limit', { type: 'integer' }, 'Page size.'), q('offset', { type: 'integer' }, 'Rows to skip.')] }), tags: ['admin'] } },
      '/api/admin/bands': {
        get: { ...op('The band library', 'The current band library version and its bands (pivot, systems, zero-points). Any signed-in person.', { '200': jsonBody({ type: 'object' }) }), tags: ['admin'] },
        post: { ...op('Add a band', 'From a curve file given as text ({band, curve: {fileName, content, wavelengthUnit: angstrom|nm|um, convention: photon|energy}, reason}); makes a new band library version. Admins only.', { '201': jsonBody({ type: 'object' }, 'Added'), '409': { $ref: '#/components/responses/Conflict' } }, { requestBody: { required: true, content: { 'application/json': { schema: { type: 'object', required: ['band', 'curve', 'reason'] } } } } }), tags: ['admin'] },
      },
      '/api/admin/bands/preview': { post: { ...op('Read a curve file', 'Parses {fileName, content, wavelengthUnit, convention} and returns the curve with its pivot wavelength; nothing is saved. Admins only.', { '200': jsonBody({ type: 'object' }) }), tags: ['admin'] } },
      '/api/admin/bands/versions': { get: { ...op('Band library versions', 'Newest first. Any signed-in person.', { '200': jsonBody({ type: 'object' }) }, { parameters: [q('limit', { type: 'integer' }, 'Page size.'), q('offset', { type: 'integer' }, 'Rows to skip.')] }), tags: ['admin'] } },
      '/api/admin/bands/{key}': { get: { ...op('One band', 'Its curve and numbers in the current (or the given) version, and the versions in which it changed. Any signed-in person.', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('key', 'Band key (case-sensitive).'), q('version', { type: 'string' }, 'Band library version label.')] }), tags: ['admin'] } },
      '/api/admin/bands/{key}/zero-point': { post: { ...op('Set a zero-point', '{zeroPoint: {fLambdaCgs | fnuJy, relErr, catalogueOffsetMag?, isophotalWavelengthAngstrom?, source}, reason}; makes a new band library version. Fits that used the old numbers become stale. Admins only.', { '201': jsonBody({ type: 'object' }, 'Saved') }, { parameters: [pathParam('key', 'Band key.')] }), tags: ['admin'] } },
      '/api/admin/people': {
        get: { ...op('People', 'Accounts with kind, campaign roles, sessions and tokens. Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [q('q', { type: 'string' }, 'Name or e-mail contains.'), q('limit', { type: 'integer' }, 'Page size.'), q('offset', { type: 'integer' }, 'Rows to skip.')] }), tags: ['admin'] },
        post: { ...op('Invite someone', '{campaignId, email, roles}: an invitation e-mail through the outbox, or membership at once for a known account. Admins only.', { '201': jsonBody({ type: 'object' }, 'Invited') }), tags: ['admin'] },
      },
      '/api/admin/people/{userId}/kind': { post: { ...op('Set an account kind', '{kind: admin|member|guest}. Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('userId', 'Account id.')] }), tags: ['admin'] } },
      '/api/admin/people/{userId}/deactivate': { post: { ...op('Deactivate an account', '{reason}: ends its sessions, refuses its API tokens and sign-in. Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('userId', 'Account id.')] }), tags: ['admin'] } },
      '/api/admin/people/{userId}/reactivate': { post: { ...op('Reactivate an account', 'Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [pathParam('userId', 'Account id.')] }), tags: ['admin'] } },
      '/api/admin/audit': { get: { ...op('The audit log', 'Who did what and when, newest first (keyset-paged with before=<id>). Admins only.', { '200': jsonBody({ type: 'object' }) }, { parameters: [q('scope', { type: 'string', enum: ['admin', 'all'] }, 'Admin actions (default) or everything.'), q('action', { type: 'string' }, 'Action prefix.'), q('actor', { type: 'string' }, 'Account id.'), q('before', { type: 'integer' }, 'Entries older than this id.'), q('limit', { type: 'integer' }, 'Page size.')] }), tags: ['admin'] } },
      '/api/campaigns/{id}/refit-stale': {
        get: { ...op('Stale fits', 'Current fits that used a band changed in the current band library version (any member, admins).', { '200': jsonBody({ type: 'object' }) }, { parameters: [campaignId] }), tags: ['batches'] },
        post: { ...op('Re-fit stale stars', 'New batches on the current band library version with the options of the batches that made the stale fits (analysts).', { '201': jsonBody({ type: 'object' }, 'Started'), '409': { $ref: '#/components/responses/Conflict' } }, { parameters: [campaignId] }), tags: ['batches'] },
      },
      '/api/openapi.json': { get: { summary: 'This description', responses: { '200': jsonBody({ type: 'object' }) }, security: [], tags: ['health'] } },
    },
    components: {
      securitySchemes: {
        bearerToken: { type: 'http', scheme: 'bearer', description: 'A personal API token (sk_…) made on /account/tokens.' },
        sessionCookie: { type: 'apiKey', in: 'cookie', name: 'better-auth.session_token', description: 'The browser session after signing in.' },
      },
      responses: {
        BadRequest: jsonBody(ref('Error'), 'The input is not valid; field names the parameter.'),
        Unauthenticated: jsonBody(ref('Error'), 'No session and no valid token (unknown, revoked or expired tokens say which).'),
        Forbidden: jsonBody(ref('Error'), 'Signed in, but without the role this needs.'),
        NotFound: jsonBody(ref('Error'), 'No such thing, or not yours.'),
        Conflict: jsonBody(ref('Error'), 'The request clashes with the current state.'),
      },
      schemas: {
        Error: { type: 'object', required: ['error'], properties: { error: { type: 'object', required: ['code', 'message'], properties: { code: { type: 'string' }, message: { type: 'string' }, field: { type: 'string' } } } } },
        Health: { type: 'object', properties: { status: { type: 'string', enum: ['ok', 'degraded'] }, version: { type: 'string' }, database: { type: 'object' } } },
        CatalogueRow: {
          type: 'object',
          properties: Object.fromEntries(
            [
              ['fitId', 'integer'], ['starId', 'integer'], ['starKey', 'string'], ['raDeg', 'number'], ['decDeg', 'number'], ['ok', 'boolean'], ['teffK', 'number'], ['teffErrK', 'number'], ['teffLowerK', 'number'],
              ['thetaMas', 'number'], ['radiusRsun', 'number'], ['radiusErrRsun', 'number'], ['lumLsun', 'number'], ['lumErrLsun', 'number'], ['avMag', 'number'], ['chi2Red', 'number'], ['nBands', 'integer'],
              ['flags', 'string'], ['reviewStatus', 'string'], ['batchId', 'string'],
            ].map(([k, t]) => [k, { type: t === 'string' || t === 'boolean' ? t : [t, 'null'] }]),
          ),
        },
        CataloguePage: { type: 'object', properties: { rows: { type: 'array', items: ref('CatalogueRow') }, nextCursor: { type: ['string', 'null'] }, prevCursor: { type: ['string', 'null'] } } },
        Release: { type: 'object', properties: { id: { type: 'string' }, title: { type: 'string' }, note: { type: 'string' }, query: { type: 'string' }, selection: { type: 'string' }, rowCount: { type: 'integer' }, bandLibraryVersion: { type: 'string' }, softwareVersion: { type: 'string' }, createdAt: { type: 'string', format: 'date-time' }, notified: { type: 'integer' } } },
        Token: { type: 'object', properties: { id: { type: 'string' }, name: { type: 'string' }, prefix: { type: 'string' }, createdAt: { type: 'string' }, lastUsedAt: { type: ['string', 'null'] }, expiresAt: { type: ['string', 'null'] }, revokedAt: { type: ['string', 'null'] }, status: { type: 'string', enum: ['active', 'revoked', 'expired'] } } },
      },
    },
  };
}
