import { hash, verify } from '@node-rs/argon2';
import { z } from '../zod.ts';

/**
 * Length is what makes a password strong; we ask for 12 characters and allow long passphrases
 * (NIST SP 800-63B: no composition rules, allow at least 64 characters).
 */
export const PasswordSchema = z
  .string()
  .min(12, 'choose a password of at least 12 characters; a few unrelated words work well')
  .max(256, 'use at most 256 characters')
  .openapi({ description: 'At least 12 characters; no other rules.', example: 'four quiet ridge antennas' });

export function hashPassword(password: string): Promise<string> {
  return hash(password);
}

/** Verified when the address is unknown, so that a miss takes as long as a wrong password. */
let decoyHash: Promise<string> | undefined;

/** True when `password` matches `passwordHash`; with no hash it still spends the time of a check. */
export async function verifyPassword(passwordHash: string | null | undefined, password: string): Promise<boolean> {
  if (!passwordHash) {
    decoyHash ??= hash('decoy password that matches nothing');
    await verify(await decoyHash, password).catch(() => false);
    return false;
  }
  try {
    return await verify(passwordHash, password);
  } catch {
    return false;
  }
}
