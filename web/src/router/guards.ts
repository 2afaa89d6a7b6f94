import type { Role } from './routes.ts';

/**
 * The roles the current visitor holds. Sign-in does not exist yet, so every visitor is
 * treated as holding every role; the session store will replace this.
 */
export type HeldRoles = readonly Role[] | 'everything';

/** Whether someone holding `held` may open a page that requires one of `required`. */
export function canEnter(required: readonly Role[], held: HeldRoles): boolean {
  if (required.length === 0 || held === 'everything') return true;
  return required.some((role) => held.includes(role));
}
