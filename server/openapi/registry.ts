import { OpenAPIRegistry } from '@asteasolutions/zod-to-openapi';
import { ProblemSchema } from '../http/problem.ts';

/**
 * The one registry: each route module registers its paths right above its Express handlers,
 * so the document cannot describe a route that does not exist.
 */
export const registry = new OpenAPIRegistry();

registry.register('Problem', ProblemSchema);

const problemContent = { 'application/problem+json': { schema: ProblemSchema } };

/** Standard problem responses, spread into each path's `responses`. */
export const problemResponses = {
  validation: { 400: { description: 'The request is malformed or fails validation (field list in `errors`).', content: problemContent } },
  unprocessable: { 422: { description: 'Well-formed input that cannot be computed (the field and the reason are named).', content: problemContent } },
  notFound: { 404: { description: 'Not found.', content: problemContent } },
  tooLarge: { 413: { description: 'The body exceeds the size limit.', content: problemContent } },
  unavailable: { 503: { description: 'The database is unreachable; retry after `Retry-After` seconds.', content: problemContent } },
} as const;

/** The usual set for a JSON calculation endpoint. */
export const calculationProblems = {
  ...problemResponses.validation,
  ...problemResponses.tooLarge,
  ...problemResponses.unprocessable,
};

/** `{ content: { 'application/json': { schema } } }`, spread into a request body or a response. */
export const json = <T>(schema: T) => ({ content: { 'application/json': { schema } } });
