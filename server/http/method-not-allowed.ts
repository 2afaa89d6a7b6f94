import type { RequestHandler } from 'express';
import { ApiError } from './problem.ts';

const METHODS = ['get', 'put', 'post', 'patch', 'delete'] as const;

interface KnownPath {
  pattern: RegExp;
  methods: string[];
}

const ORDER = ['GET', 'HEAD', 'PUT', 'POST', 'PATCH', 'DELETE'];

/** `/api/v1/keys/{id}` → a regular expression matching it as Express routes do (any case, optional trailing slash). */
function patternOf(template: string): RegExp {
  const source = template
    .split(/(\{[^}]+\})/)
    .map((part) => (part.startsWith('{') ? '[^/]+' : part.replace(/[.*+?^$()|[\]\\]/g, '\\$&')))
    .join('');
  return new RegExp(`^${source}/?$`, 'i');
}

/**
 * Answers 405 with `Allow` for a known path asked with a method it does not take (RFC 9110 §15.5.6),
 * instead of the 404 a router gives by default; `paths` is the OpenAPI document's `paths`, so the
 * methods listed are exactly the documented ones. Unknown paths fall through to the 404 handler.
 */
export function methodNotAllowed(paths: Record<string, Partial<Record<(typeof METHODS)[number], unknown>> | undefined>): RequestHandler {
  const known: KnownPath[] = Object.entries(paths).map(([template, item]) => {
    const methods = METHODS.filter((m) => item?.[m] !== undefined).map((m) => m.toUpperCase());
    // Express answers HEAD wherever it answers GET.
    if (methods.includes('GET')) methods.splice(1, 0, 'HEAD');
    return { pattern: patternOf(template), methods };
  });
  return (req, _res, next) => {
    const path = req.originalUrl.split('?', 1)[0]!;
    // A fixed path can also fit a template (`/invitations/accept` and `/invitations/{id}`): Express
    // would route any of their methods, so all of them are allowed.
    const matches = known.filter((k) => k.pattern.test(path));
    const methods = ORDER.filter((m) => matches.some((k) => k.methods.includes(m)));
    // A documented method that reached here has no handler in this mode: a 404.
    if (methods.length === 0 || req.method === 'OPTIONS' || methods.includes(req.method)) {
      next();
      return;
    }
    const allow = methods.join(', ');
    next(new ApiError('methodNotAllowed', `${path} does not take ${req.method}; it takes ${allow}.`, { headers: { Allow: allow } }));
  };
}
