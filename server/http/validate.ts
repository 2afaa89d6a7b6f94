import type { RequestHandler } from 'express';
import type { z } from 'zod';
import { ApiError } from './problem.ts';
import { apiErrorFromZod } from './zod-issues.ts';

/**
 * Parses the JSON body with a zod schema and keeps the result in `res.locals.body`
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
    res.locals.body = parsed.data;
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
    res.locals.query = parsed.data;
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
    res.locals.params = parsed.data;
    next();
  };
}
