/** Origins one key may list (the API's limit). */
export const MAX_ORIGINS = 20;

/** `value` as the exact origin browsers send (`scheme://host[:port]`), or undefined when it names no http(s) origin. */
export function originOf(value: string): string | undefined {
  let url: URL;
  try {
    url = new URL(value);
  } catch {
    return undefined;
  }
  return url.protocol === 'https:' || url.protocol === 'http:' ? url.origin : undefined;
}

/**
 * The origins typed one per line (blank lines ignored), or why they cannot be sent: the same rules as
 * the API's, checked here so that the member sees the fix beside the field.
 */
export function parseOrigins(text: string): { origins: string[]; problem?: undefined } | { origins?: undefined; problem: string } {
  const lines = text
    .split(/\r?\n/)
    .map((line) => line.trim())
    .filter((line) => line !== '');
  for (const line of lines) {
    const origin = originOf(line);
    if (!origin) return { problem: `“${line}” is not an origin: write scheme://host[:port], e.g. https://log.example.org.` };
    if (origin !== line) return { problem: `Write “${line}” as ${origin}: lower case, no path or trailing slash, no default port.` };
  }
  if (new Set(lines).size !== lines.length) return { problem: 'List each origin once.' };
  if (lines.length > MAX_ORIGINS) return { problem: `At most ${MAX_ORIGINS} origins per key; issue another key for another site.` };
  return { origins: lines };
}
