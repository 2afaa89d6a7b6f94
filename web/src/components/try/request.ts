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
  if (request.endpoint === 'batch') return batchCurl(origin, request.body as { items: unknown[] }, auth);
  const lines = [`curl -sS ${request.method === 'GET' ? '' : '-X POST '}${shellQuote(requestUrl(origin, request))}`, `  -H ${auth}`];
  if (request.method === 'POST') {
    lines.push(`  -H 'Content-Type: application/json'`, `  -d ${shellQuote(JSON.stringify(request.body))}`);
  }
  return lines.join(' \\\n');
}

/** Above this many characters of NDJSON the command names a file instead of holding the items. */
export const INLINE_BATCH_CHARS = 2000;
export const BATCH_FILE_NAME = 'batch.ndjson';

/** A batch as the console sends it: NDJSON, one item per line, read back line by line. */
function batchCurl(origin: string, body: { items: unknown[] }, auth: string): string {
  const lines = body.items.map((item) => JSON.stringify(item));
  const post = [`curl -sS -X POST ${shellQuote(`${origin}/api/v1/batch`)}`, `  -H ${auth}`, `  -H 'Content-Type: application/x-ndjson'`];
  if (lines.join('\n').length <= INLINE_BATCH_CHARS) {
    return [`printf '%s\\n' ${lines.map(shellQuote).join(' ')} |`, ...post, '  --data-binary @-'].join(' \\\n');
  }
  const count = lines.length.toLocaleString('en');
  return [`# ${BATCH_FILE_NAME} holds the ${count} items, one per line (save it with the button below)`, [...post, `  --data-binary @${BATCH_FILE_NAME}`].join(' \\\n')].join('\n');
}

/** Zod issues as lines a person can act on: "lengthM: give the line length…". */
export function issueLines(issues: readonly { path: readonly PropertyKey[]; message: string }[]): string[] {
  return issues.map((i) => (i.path.length > 0 ? `${i.path.map(String).join('.')}: ${i.message}` : i.message));
}

/** Length and loss units of a line form: the API takes lengthM/lossDbPer100m or lengthFt/lossDbPer100ft. */
export type Units = 'metric' | 'imperial';

export const UNIT_CHOICES: readonly { value: Units; label: string }[] = [
  { value: 'metric', label: 'metres' },
  { value: 'imperial', label: 'feet' },
];

/** Metres in one foot, exactly (the international foot). */
const M_PER_FT = 0.3048;

/** A length typed in one unit, in the other; six significant digits, as people would type it. */
export function convertLength(value: number, from: Units, to: Units): number {
  if (from === to) return value;
  return Number((from === 'metric' ? value / M_PER_FT : value * M_PER_FT).toPrecision(6));
}

/** A loss per 100 m as per 100 ft, or back: 100 ft is 30.48 m, so it carries 0.3048 of the loss. */
export function convertLossPer100(value: number, from: Units, to: Units): number {
  if (from === to) return value;
  return Number((from === 'metric' ? value * M_PER_FT : value / M_PER_FT).toPrecision(6));
}
