import type { RequestHandler } from 'express';

/** How a part of v1 that is to be retired announces itself (README, "Versioning"). */
export interface Retirement {
  /** When it was deprecated. */
  since: Date;
  /** The earliest date after which it may stop answering. */
  sunset: Date;
  /** Where people read what replaces it: the changelog entry. */
  changelog: string;
}

/**
 * Adds the announcement to every answer of a route that is being retired: `Deprecation` (RFC 9745 §2,
 * a structured-field date: `@` and seconds since the epoch), `Sunset` (RFC 8594 §3, an HTTP-date) and
 * a `Link` with relation `deprecation` (RFC 9745 §3) to the changelog. The route goes on answering as
 * before; its OpenAPI operation is marked `deprecated: true` beside it.
 */
export function announceRetirement(retirement: Retirement): RequestHandler {
  const deprecation = `@${Math.floor(retirement.since.getTime() / 1000)}`;
  const sunset = retirement.sunset.toUTCString();
  const link = `<${retirement.changelog}>; rel="deprecation"; type="text/markdown"`;
  return (_req, res, next) => {
    res.setHeader('Deprecation', deprecation);
    res.setHeader('Sunset', sunset);
    res.append('Link', link);
    next();
  };
}
