import { createHash, randomBytes } from 'node:crypto';

/** Every Gammaline key starts with this, so leaked keys are easy to recognise and scan for. */
export const API_KEY_PREFIX = 'gml_';

/** Random bytes per key: 256 bits, more than anyone can guess. */
const KEY_BYTES = 32;

/** Characters of the random part kept for display, enough for a person to tell keys apart. */
const DISPLAY_CHARS = 6;

/** `gml_` and 43 base64url characters (32 bytes without padding). */
const API_KEY_PATTERN = /^gml_[A-Za-z0-9_-]{43}$/;

export interface NewApiKey {
  /** The plaintext key, shown once to the person who created it. */
  key: string;
  /** What we store: SHA-256 of the whole key, hex. */
  hash: string;
  /** What lists show, e.g. `gml_Xq3v9A`. */
  displayStart: string;
}

/** A fresh key from the platform's secure generator. */
export function generateApiKey(): NewApiKey {
  const key = API_KEY_PREFIX + randomBytes(KEY_BYTES).toString('base64url');
  return { key, hash: hashApiKey(key), displayStart: key.slice(0, API_KEY_PREFIX.length + DISPLAY_CHARS) };
}

/**
 * SHA-256 is enough here (no salt, no slow hash): the key has 256 bits of entropy, so there is
 * nothing to brute-force, and a fast hash keeps the per-request lookup cheap.
 */
export function hashApiKey(key: string): string {
  let hash = recentHashes.get(key);
  if (hash === undefined) {
    hash = createHash('sha256').update(key, 'utf8').digest('hex');
    if (recentHashes.size >= RECENT_HASHES_MAX) recentHashes.clear();
    recentHashes.set(key, hash);
  }
  return hash;
}

/**
 * Hashes of keys presented in the last few seconds: a SHA-256 per request is a measurable share of a
 * calculation's cost. Entries live at most RECENT_HASHES_MS (the map is emptied on that beat) and only
 * in this process's memory, where each request's key already is while it is handled; never stored or logged.
 */
const recentHashes = new Map<string, string>();
const RECENT_HASHES_MAX = 10_000;
const RECENT_HASHES_MS = 10_000;
setInterval(() => recentHashes.clear(), RECENT_HASHES_MS).unref();

/** The cheap format check done before any database lookup. */
export function looksLikeApiKey(value: string): boolean {
  return API_KEY_PATTERN.test(value);
}
