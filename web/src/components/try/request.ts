/** A request the Try page can send and write out as curl; built by one of the endpoint forms. */
export type TryRequest =
  | { endpoint: 'mismatch'; method: 'POST'; path: '/api/v1/mismatch'; body: object }
  | { endpoint: 'reflection'; method: 'POST'; path: '/api/v1/reflection'; body: object }
  | { endpoint: 'line'; method: 'POST'; path: '/api/v1/line'; body: object }
  | { endpoint: 'refer'; method: 'POST'; path: '/api/v1/refer'; body: object }
  | { endpoint: 'match'; method: 'POST'; path: '/api/v1/match'; body: object }
  | { endpoint: 'batch'; method: 'POST'; path: '/api/v1/batch'; body: object }
  | { endpoint: 'attenuation'; method: 'GET'; path: string; cableId: string; query: Record<string, number> };

export type TryEndpoint = TryRequest['endpoint'];

/** What a form reports upward on every change: a request ready to send, or what is missing. */
export interface FormState {
  request: TryRequest | null;
  issues: string[];
}

/** MHz as typed by people to Hz without binary noise (14.2 MHz → 14200000, not 14199999.999999998). */
export function mhzToHz(mhz: number): number {
  return scaled(mhz, 1e6);
}

/** A value typed in a prefixed unit to the base unit without binary noise (0.21 µH → 2.1e-7 H, not 2.0999999999999997e-7). */
export function scaled(value: number, factor: number): number {
  return Number((value * factor).toPrecision(12));
}

/** `'` inside single quotes, the POSIX shell way. */
function shellQuote(text: string): string {
  return `'${text.replaceAll("'", `'\\''`)}'`;
}

export function requestUrl(origin: string, request: TryRequest): string {
  if (request.method === 'GET') {
    const query = new URLSearchParams(Object.entries(request.query).map(([k, v]) => [k, String(v)]));
    const q = query.toString();
    return `${origin}${request.path}${q ? `?${q}` : ''}`;
  }
  return `${origin}${request.path}`;
}

/**
 * The exact request as a curl command. `key` is the key itself when the person pasted one (it is
 * only placed in the text, never stored); otherwise the command reads it from $GAMMALINE_KEY.
 */
export function curlCommand(origin: string, request: TryRequest, key: string | null): string {
  const auth = key ? shellQuote(`Authorization: Bearer ${key}`) : '"Authorization: Bearer $GAMMALINE_KEY"';
  const lines = [`curl -sS ${request.method === 'GET' ? '' : '-X POST '}${shellQuote(requestUrl(origin, request))}`, `  -H ${auth}`];
  if (request.method === 'POST') {
    lines.push(`  -H 'Content-Type: application/json'`, `  -d ${shellQuote(JSON.stringify(request.body))}`);
  }
  return lines.join(' \\\n');
}

/** Zod issues as lines a person can act on: "lengthM: give the line length…". */
export function issueLines(issues: readonly { path: readonly PropertyKey[]; message: string }[]): string[] {
  return issues.map((i) => (i.path.length > 0 ? `${i.path.map(String).join('.')}: ${i.message}` : i.message));
}

/** Length and loss units of a line form: the API takes lengthM/lossDbPer100m or lengthFt/lossDbPer100ft. */
export type Units = 'metric' | 'imperial';
