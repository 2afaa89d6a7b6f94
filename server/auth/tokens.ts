import { createHash, randomBytes } from 'node:crypto';

/** Single-use tokens for invitation and reset links: random, only their SHA-256 is stored. */
export function generateToken(): { token: string; hash: string } {
  const token = randomBytes(32).toString('base64url');
  return { token, hash: hashToken(token) };
}

export function hashToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** Tokens look like 43 base64url characters; anything else is refused before a lookup. */
export function looksLikeToken(value: string): boolean {
  return /^[A-Za-z0-9_-]{43}$/.test(value);
}
