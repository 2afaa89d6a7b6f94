import { OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import { APP_VERSION } from '../config.ts';
import { registry } from './registry.ts';
// Imported for their side effect: every route module registers its paths on the shared registry.
import '../api/health.routes.ts';
import '../api/v1/router.ts';

type Document = ReturnType<OpenApiGeneratorV31['generateDocument']>;
let cached: Document | undefined;

const PROBLEM = { 'application/problem+json': { schema: { $ref: '#/components/schemas/Problem' } } };
const VALIDATION_ANSWERS = {
  '400': 'The request is malformed or fails validation (field list in `errors`).',
  '422': 'Well-formed input that cannot be computed or stored (the field and the reason are named).',
} as const;
const JSON_BODY_ANSWERS = {
  '413': 'The body exceeds the size limit.',
  '415': 'The body is not JSON (send Content-Type: application/json).',
} as const;

/**
 * Every route validates its parameters and body with zod (server/http/validate.ts), so each can answer
 * 400 and 422, and 413 and 415 when it takes JSON; the routes list what is particular to them and this adds
 * the rest, so the document never leaves out an answer the code gives.
 */
function withValidationAnswers(doc: Document): Document {
  for (const item of Object.values(doc.paths ?? {})) {
    for (const method of ['get', 'put', 'post', 'patch', 'delete'] as const) {
      const op = item?.[method];
      if (!op) continue;
      const body = op.requestBody && 'content' in op.requestBody ? op.requestBody.content : undefined;
      const takesInput = body !== undefined || (op.parameters ?? []).some((p) => 'in' in p && (p.in === 'query' || p.in === 'path'));
      if (!takesInput) continue;
      const answers: Record<string, string> = { ...VALIDATION_ANSWERS, ...(body?.['application/json'] ? JSON_BODY_ANSWERS : {}) };
      op.responses ??= {};
      for (const [status, description] of Object.entries(answers)) op.responses[status] ??= { description, content: PROBLEM };
    }
  }
  return doc;
}

/** The OpenAPI 3.1 document, generated from the same zod schemas that validate requests. */
export function openApiDocument() {
  cached ??= withValidationAnswers(new OpenApiGeneratorV31(registry.definitions).generateDocument({
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
