import { OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import { APP_VERSION } from '../config.ts';
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
        ...(path.startsWith('/api/v1/') && path !== '/api/v1/openapi.json' ? DATABASE : {}),
      };
      op.responses ??= {};
      for (const [status, description] of Object.entries(answers)) op.responses[status] ??= { description, content: PROBLEM };
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
      description:
        'Feed-line mismatch arithmetic: SWR, return loss, reflection, lossy lines and referral of readings between the two ends of a line. ' +
        'SI units with the unit in the field name; complex values as `{ re, im }`; unbounded results (SWR of a total reflection, return loss of a perfect match) are `null`. ' +
        'Errors are RFC 9457 problem details.',
    },
    servers: [{ url: '/' }],
  }));
  return cached;
}
