const CONNECTION_ERROR_CODES = new Set(['ECONNREFUSED', 'ECONNRESET', 'ETIMEDOUT', 'ENOTFOUND', 'EHOSTUNREACH', 'EPIPE', '57P01', '57P02', '57P03']);

/** True when an error means "the database cannot be reached right now" rather than a bug or bad data. */
export function isDatabaseUnavailable(err: unknown): boolean {
  for (let e: unknown = err, depth = 0; e && depth < 5; depth++) {
    const code = (e as { code?: unknown }).code;
    if (typeof code === 'string' && (CONNECTION_ERROR_CODES.has(code) || code.startsWith('08'))) return true;
    const message = (e as { message?: unknown }).message;
    if (typeof message === 'string' && /Connection terminated|timeout exceeded when trying to connect|Client has encountered a connection error/i.test(message)) return true;
    e = (e as { cause?: unknown }).cause;
  }
  return false;
}

/** True when PostgreSQL cancelled a statement (statement_timeout, or an operator's pg_cancel_backend). */
export function isStatementCancelled(err: unknown): boolean {
  for (let e: unknown = err, depth = 0; e && depth < 5; depth++) {
    if ((e as { code?: unknown }).code === '57014') return true;
    e = (e as { cause?: unknown }).cause;
  }
  return false;
}
