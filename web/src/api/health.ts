import { type FetchOutcome, getJson } from './http.ts';

/** Body of `GET /healthz`: the server process answers. */
export interface Health {
  status: 'ok';
  version: string;
  /** Seconds since the server process started. */
  uptimeS: number;
}

/** Body of a 200 from `GET /readyz`: the server can reach its database. */
export interface Readiness {
  status: 'ready';
  database: 'up';
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null;
}

export function isHealth(body: unknown): body is Health {
  return (
    isRecord(body) &&
    body.status === 'ok' &&
    typeof body.version === 'string' &&
    typeof body.uptimeS === 'number' &&
    Number.isFinite(body.uptimeS)
  );
}

export function isReadiness(body: unknown): body is Readiness {
  return isRecord(body) && body.status === 'ready' && body.database === 'up';
}

/** Liveness of the server process. */
export function fetchHealth(): Promise<FetchOutcome<Health>> {
  return getJson('/healthz', isHealth);
}

/** Readiness to serve requests; a 503 problem means the database cannot be reached. */
export function fetchReadiness(): Promise<FetchOutcome<Readiness>> {
  return getJson('/readyz', isReadiness);
}
