import { OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import type { RequestHandler } from 'express';
import { publicAccess } from '../auth/openapi.ts';
import { APP_VERSION } from '../config.ts';
import { problemTypeTable } from '../http/problem.ts';
import { z } from '../zod.ts';
import { registry } from './registry.ts';
// Imported for their side effect: every route module registers its paths on the shared registry.
import '../api/health.routes.ts';
import '../api/v1/router.ts';

type Document = ReturnType<OpenApiGeneratorV31['generateDocument']>;
let cached: Document | undefined;

const PROBLEM = { 'application/problem+json': { schema: { $ref: '#/components/schemas/Problem' } } };
const MALFORMED = { '400': 'The request is malformed or fails validation (field list in `errors`).' } as const;
const UNCOMPUTABLE = { '422': 'Well-formed input that cannot be computed or stored (the field and the reason are named).' } as const;
const WITH_BODY = {
  '413': 'The body exceeds the size limit.',
  '415': 'The body is not in a media type this operation takes (see its request body).',
} as const;
const DATABASE = { '503': 'The database is unreachable or too slow to answer; retry after `Retry-After` seconds.' } as const;
/** Every route refuses a declared body over the server's limit before reading it (server/http/body-size.ts). */
const DECLARED_TOO_LARGE = { '413': 'The request declares a body larger than the server accepts; it is refused before it is read.' } as const;

export const OPENAPI_PATH = '/api/v1/openapi.json';

registry.registerPath({
  method: 'get',
  path: OPENAPI_PATH,
  operationId: 'getOpenApiDocument',
  tags: ['Service'],
  summary: 'This OpenAPI 3.1 document',
  description: 'Generated from the same zod schemas that validate requests; `/docs` renders it for people.',
  security: publicAccess,
  responses: { 200: { description: 'The document.', content: { 'application/json': { schema: z.object({ openapi: z.string() }).passthrough() } } } },
});

/** Resource tags in the order /docs shows them, each with a line on what it holds. */
const TAGS = [
  { name: 'Calculations', description: 'Single calculations: `POST /api/v1/<name>`, the same name a batch item gives as its `op`. Each costs one unit.' },
  { name: 'Batch', description: 'Many calculations in one request, as JSON or streamed as NDJSON.' },
  { name: 'Cables', description: 'The generic cable catalog and the organisation\'s own cables.' },
  { name: 'Feed lines', description: 'Saved feed lines of ordered sections, and calculations through them.' },
  { name: 'Sweeps', description: 'Analyzer sweeps (Touchstone, CSV, JSON) analysed and stored.' },
  { name: 'Session', description: 'Console sign-in and password reset.' },
  { name: 'Keys', description: 'API keys: issue, limit, revoke.' },
  { name: 'Usage', description: 'Calculation units spent, by day.' },
  { name: 'Members', description: 'Members of the organisation and their roles.' },
  { name: 'Invitations', description: 'Invitations to join the organisation.' },
  { name: 'Organisation', description: 'The organisation\'s name and default limits.' },
  { name: 'Audit', description: 'Who changed what, and when.' },
  { name: 'Local mail', description: 'Mail captured by the local SMTP server (local mode only).' },
  { name: 'Service', description: 'Health checks and this document.' },
];

const DESCRIPTION = [
  'Feed-line mismatch arithmetic: SWR, return loss, reflection, lossy lines and referral of readings between the two ends of a line.',
  'SI units with the unit in the field name; complex values as `{ re, im }`; unbounded results (SWR of a total reflection, return loss of a perfect match) are `null`.',
  'The two ends of a line are the **input** (the transmitter end) and the **load** (the antenna end): answers report `atInput` and `atLoad`, and a reading moves `inputToLoad` or `loadToInput`.',
  '',
  'Every answer carries a `Request-Id` (your own `X-Request-Id`, when it is a short printable token, is echoed); quote it when you ask for support.',
  'Version 1 only grows: fields, operations and enum values may be added, nothing is renamed or removed; a retirement is announced with the `Deprecation` and `Sunset` header fields and in the changelog.',
  '',
  '**Safety.** High power and a high SWR put high voltages on feed lines, connectors and matching components, and the bare conductors of open-wire, window and twin lead can burn on contact; antennas expose people to RF fields; towers are dangerous places to work. ' +
    'Answers carry `cautions` where a computed figure crosses a usual limit: show them to the user. The figures are arithmetic on the numbers given and cannot see an installation: follow local electrical and building codes, the RF-exposure rules that apply, and licensed professional practice for tower work and high-power installations.',
  '',
  'Errors are RFC 9457 problem details (`application/problem+json`). 400 means the request does not fit the schema; 422 means well-formed values that cannot be computed. The problem types:',
  '',
  problemTypeTable(),
].join('\n');

/**
 * Every route validates its parameters, query and body with zod (server/http/validate.ts), so each
 * taking any can answer 400; a query or body out of range is 422 (a path parameter never is: see
 * apiErrorFromZod); a body can be too large or of the wrong type; and every API call may meet a
 * database that is down or too slow (503). The routes list what is particular to them and this
 * adds the rest, so the document does not leave out an answer the code gives.
 */
function withCommonAnswers(doc: Document): Document {
  for (const [path, item] of Object.entries(doc.paths ?? {})) {
    for (const method of ['get', 'put', 'post', 'patch', 'delete'] as const) {
      const op = item?.[method];
      if (!op) continue;
      const params = (op.parameters ?? []).flatMap((p) => ('in' in p ? [p.in] : []));
      const hasBody = op.requestBody !== undefined && 'content' in op.requestBody;
      const hasQuery = params.includes('query');
      const answers: Record<string, string> = {
        ...(hasBody || params.length > 0 ? MALFORMED : {}),
        ...(hasBody || hasQuery ? UNCOMPUTABLE : {}),
        ...(hasBody ? WITH_BODY : {}),
        ...(path.startsWith('/api/v1/') && path !== OPENAPI_PATH ? DATABASE : {}),
      };
      op.responses ??= {};
      for (const [status, description] of Object.entries(answers)) op.responses[status] ??= { description, content: PROBLEM };
      if (!Object.keys(op.responses).some((status) => status.startsWith('4'))) Object.assign(op.responses, { '413': { description: DECLARED_TOO_LARGE['413'], content: PROBLEM } });
    }
  }
  return doc;
}

/** The OpenAPI 3.1 document, generated from the same zod schemas that validate requests. */
export function openApiDocument() {
  cached ??= withCommonAnswers(new OpenApiGeneratorV31(registry.definitions).generateDocument({
    openapi: '3.1.0',
    info: {
      title: 'Gammaline API',
      version: APP_VERSION,
      description: DESCRIPTION,
      contact: { name: 'Gammaline support', email: 'support@gammaline.example' },
      license: { name: 'Proprietary: Gammaline terms of use', identifier: 'LicenseRef-Gammaline-Proprietary' },
    },
    servers: [{ url: '/', description: 'The server that serves this document' }],
    tags: TAGS,
  }));
  return cached;
}

/** `GET /api/v1/openapi.json`. */
export const serveOpenApiDocument: RequestHandler = (_req, res) => {
  res.json(openApiDocument());
};
