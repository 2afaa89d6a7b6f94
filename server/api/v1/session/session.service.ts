import type { Db } from '../../../db/client.ts';
import { verifyPassword } from '../../../auth/password.ts';
import { ApiError } from '../../../http/problem.ts';
import { findMember, findMemberByEmail } from '../members/members.repository.ts';
import { findOrganisationSummary } from '../organisation/organisation.repository.ts';

const WRONG_CREDENTIALS = 'E-mail or password is wrong. Forgot the password? POST /api/v1/password-reset sends a link.';

/** The active member these credentials belong to; 401 that does not say which part was wrong. */
export async function checkCredentials(db: Db, email: string, password: string): Promise<{ userId: string; organisationId: string }> {
  const account = await findMemberByEmail(db, email);
  // Always verify something, so unknown addresses take as long as wrong passwords.
  const passwordMatches = await verifyPassword(account?.passwordHash, password);
  if (!account || !passwordMatches || account.disabled) throw new ApiError('unauthenticated', WRONG_CREDENTIALS);
  return { userId: account.id, organisationId: account.organisationId };
}

/** What the console learns about its session: the member, their organisation and the CSRF token. */
export async function sessionView(db: Db, signedIn: { organisationId: string; userId: string }, csrfToken: string) {
  const member = await findMember(db, signedIn);
  const organisation = await findOrganisationSummary(db, signedIn.organisationId);
  return { member, organisation, csrfToken };
}
