import type { Role } from './routes.ts';

/** Whether someone holding `held` may open a page that requires one of `required`. */
export function canEnter(required: readonly Role[], held: readonly Role[]): boolean {
  if (required.length === 0) return true;
  return required.some((role) => held.includes(role));
}

/** Where the guard sends a visitor: on to the page, to sign in first, or to the refusal page. */
export type GuardDecision = 'enter' | 'sign-in' | 'not-allowed';

export function decide(required: readonly Role[], role: Role | null): GuardDecision {
  if (required.length === 0) return 'enter';
  if (role === null) return 'sign-in';
  return canEnter(required, [role]) ? 'enter' : 'not-allowed';
}

/** A `next` target after sign-in must stay inside the console (no open redirects). */
export function safeNext(next: unknown): string | null {
  if (typeof next !== 'string' || !next.startsWith('/') || next.startsWith('//') || next.startsWith('/\\')) return null;
  if (next.startsWith('/sign-in')) return null;
  return next;
}
