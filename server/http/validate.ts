import type { RequestHandler, Response } from 'express';
import type { z } from 'zod';
import { ApiError } from './problem.ts';
import { apiErrorFromZod } from './zod-issues.ts';

/** Where a request's validated parts are kept, each beside the schema that produced it. */
type Source = 'body' | 'query' | 'params';

interface Validated {
  schema: z.ZodType;
  value: unknown;
}

declare global {
  namespace Express {
    interface Locals {
      validated?: Partial<Record<Source, Validated>>;
    }
  }
}

function keep(res: Response, source: Source, schema: z.ZodType, value: unknown): void {
  (res.locals.validated ??= {})[source] = { schema, value };
}

/**
 * The part of the request that `schema` validated (body, query or params), typed as the schema's
 * output. Handlers read their input through this and never cast `res.locals`: asking for a schema
 * that did not run on this request is a programming error, caught the first time the route runs.
 */
export function input<S extends z.ZodType>(res: Response, schema: S): z.output<S> {
  const v = res.locals.validated;
  if (v) {
    if (v.body?.schema === schema) return v.body.value as z.output<S>;
    if (v.query?.schema === schema) return v.query.value as z.output<S>;
    if (v.params?.schema === schema) return v.params.value as z.output<S>;
  }
  throw new Error('input(): this schema did not validate any part of the request; add validateBody/validateQuery/validateParams to the route');
}

/** Records a body a route parsed itself (the batch route reads its own stream) so `input()` finds it. */
export function keepValidatedBody<S extends z.ZodType>(res: Response, schema: S, value: z.output<S>): void {
  keep(res, 'body', schema, value);
}

/**
 * Parses the JSON body with a zod schema; the handler reads it with `input(res, schema)`
 * (Express 5 makes `req.query` read-only, and handlers never re-parse strings).
 */
export function validateBody<S extends z.ZodType>(schema: S): RequestHandler {
  return (req, res, next) => {
    const type = req.headers['content-type'];
    // The common exact form skips the media-type parser; anything else gets the full check.
    if (type !== 'application/json' && type !== 'application/json; charset=utf-8' && !req.is('application/json')) {
      next(new ApiError('unsupportedMediaType', 'Send the body as JSON with Content-Type: application/json.'));
      return;
    }
    const parsed = schema.safeParse(req.body ?? {});
    if (!parsed.success) {
      next(apiErrorFromZod(parsed.error, 'body', { schema, input: req.body ?? {} }));
      return;
    }
    keep(res, 'body', schema, parsed.data);
    next();
  };
}

export function validateQuery<S extends z.ZodType>(schema: S): RequestHandler {
  return (req, res, next) => {
    const parsed = schema.safeParse(req.query);
    if (!parsed.success) {
      next(apiErrorFromZod(parsed.error, 'query', { schema, input: req.query }));
      return;
    }
    keep(res, 'query', schema, parsed.data);
    next();
  };
}

export function validateParams<S extends z.ZodType>(schema: S): RequestHandler {
  return (req, res, next) => {
    const parsed = schema.safeParse(req.params);
    if (!parsed.success) {
      next(apiErrorFromZod(parsed.error, 'params'));
      return;
    }
    keep(res, 'params', schema, parsed.data);
    next();
  };
}
