import type { ErrorRequestHandler, RequestHandler } from 'express';
import { ZodError } from 'zod';
import { NonFiniteResultError } from '../../shared/calculations/finite.ts';
import { RfInputError } from '../../shared/rf/errors.ts';
import { isDatabaseUnavailable, isStatementCancelled } from '../db/unavailable.ts';
import { ApiError, PROBLEM_CONTENT_TYPE } from './problem.ts';
import { apiErrorFromZod } from './zod-issues.ts';

/** Seconds a client should wait before retrying while the database is unreachable. */
const DATABASE_RETRY_AFTER_S = 5;

interface HttpParserError { type?: string; status?: number; statusCode?: number; expose?: boolean; limit?: number }

function fromParserError(err: HttpParserError): ApiError | undefined {
  switch (err.type) {
    case 'entity.parse.failed':
      return new ApiError('malformedJson', 'The body could not be parsed as JSON; check quotes, commas and brackets.');
    case 'entity.too.large':
      return new ApiError('payloadTooLarge', `The body exceeds the limit of ${err.limit ?? '?'} bytes; split the work into smaller requests.`);
    case 'encoding.unsupported':
    case 'charset.unsupported':
      return new ApiError('unsupportedMediaType', 'Send the body as UTF-8 encoded JSON.');
    case 'request.aborted':
    case 'request.size.invalid':
    case 'stream.encoding.set':
      return new ApiError('badRequest', 'The request body was incomplete or inconsistent with its Content-Length.');
  }
  const status = err.status ?? err.statusCode;
  if (status && status >= 400 && status < 500) return new ApiError('badRequest', 'The request could not be read.');
  return undefined;
}

/** Maps anything thrown in a handler to an RFC 9457 response; internal causes are logged, never returned. */
export const problemErrorHandler: ErrorRequestHandler = (err, req, res, _next) => {
  let apiError: ApiError;
  if (err instanceof ApiError) apiError = err;
  else if (err instanceof ZodError) apiError = apiErrorFromZod(err);
  else if (err instanceof RfInputError) {
    apiError = new ApiError('unprocessable', `${err.field}: ${err.message}`, { errors: [{ field: err.field, message: err.message }] });
  } else if (err instanceof NonFiniteResultError) {
    apiError = new ApiError('unprocessable', err.message);
  } else if (isDatabaseUnavailable(err)) {
    req.log?.warn({ err }, 'database unavailable');
    apiError = new ApiError('unavailable', 'The database is unreachable; retry shortly.', { headers: { 'Retry-After': String(DATABASE_RETRY_AFTER_S) } });
  } else if (isStatementCancelled(err)) {
    req.log?.warn({ err }, 'database statement timed out');
    apiError = new ApiError('unavailable', 'The database took too long to answer; retry shortly.', { headers: { 'Retry-After': String(DATABASE_RETRY_AFTER_S) } });
  } else {
    apiError = fromParserError(err as HttpParserError) ?? new ApiError('internal', 'Something went wrong on our side; the request id in Request-Id helps us find it.');
  }
  if (apiError.status >= 500 && apiError.kind === 'internal') req.log?.error({ err }, 'unhandled error');
  if (res.headersSent) {
    res.end();
    return;
  }
  for (const [name, value] of Object.entries(apiError.headers ?? {})) res.setHeader(name, value);
  res.status(apiError.status).type(PROBLEM_CONTENT_TYPE).send(JSON.stringify(apiError.toProblem(req.originalUrl)));
};

export const notFoundHandler: RequestHandler = (req, _res, next) => {
  // originalUrl, not path: under a mount point `path` drops the prefix (`/v1/…` for `/api/v1/…`).
  next(new ApiError('notFound', `No route for ${req.method} ${req.originalUrl.split('?', 1)[0]}; see /api/v1/openapi.json for the available paths.`));
};
