import { Router } from 'express';
import { and, desc, eq, gt, isNull, sql } from 'drizzle-orm';
import type { AppContext } from '../../../context.ts';
import { invitations, organisations, users } from '../../../db/schema.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, publicAccess, sessionOnly } from '../../../auth/openapi.ts';
import { hashPassword, PasswordSchema } from '../../../auth/password.ts';
import { generateToken, hashToken, looksLikeToken } from '../../../auth/tokens.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateBody, validateParams } from '../../../http/validate.ts';
import { invitationMail } from '../../../mail/messages.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { memberActor, toMemberView } from '../members/members.repository.ts';
import { MemberSchema, RoleSchema } from '../members/members.schemas.ts';

/** Invitation links work for a week. */
const INVITATION_TTL_MS = 7 * 24 * 60 * 60 * 1000;

const InvitationSchema = z
  .object({
    id: z.uuid(),
    email: z.string().openapi({ example: 'oskar.brandt@kestrel-ridge.example' }),
    role: RoleSchema,
    state: z.enum(['pending', 'accepted', 'withdrawn', 'expired']).openapi({ example: 'pending' }),
    expiresAt: z.string().openapi({ example: '2026-03-21T09:30:00.000Z' }),
    createdAt: z.string().openapi({ example: '2026-03-14T09:30:00.000Z' }),
  })
  .openapi('Invitation');

const CreateInvitationSchema = z
  .strictObject({
    email: z.email({ message: 'enter the address to send the invitation to' }).max(254).openapi({ example: 'oskar.brandt@kestrel-ridge.example' }),
    role: RoleSchema.default('developer'),
  })
  .openapi('CreateInvitation');

const AcceptInvitationSchema = z
  .strictObject({
    token: z.string().min(1, 'paste the token from the invitation link').openapi({ description: 'The `token` parameter of the link in the e-mail.', example: 'Vb1sQ8mJ2yTt4nCq0rX7eWz3aKf5uGh6LpD9oN1iS2M' }),
    displayName: z.string().trim().min(1, 'enter the name other members will see').max(100).openapi({ example: 'Oskar Brandt' }),
    password: PasswordSchema,
  })
  .openapi('AcceptInvitation');

const IdParams = z.object({ id: z.uuid({ message: 'invitation ids are UUIDs, as listed by GET /api/v1/invitations' }) });
const tags = ['Invitations'];

registry.registerPath({
  method: 'get',
  path: '/api/v1/invitations',
  operationId: 'listInvitations',
  tags,
  summary: 'List invitations (admins)',
  security: sessionOnly,
  responses: { 200: { description: 'Invitations, newest first.', ...json(z.object({ invitations: z.array(InvitationSchema) }).openapi('InvitationList')) }, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/invitations',
  operationId: 'createInvitation',
  tags,
  summary: 'Invite someone by e-mail (admins)',
  description: 'Sends a single-use link valid for 7 days. A newer invitation to the same address replaces a pending one.',
  security: sessionOnly,
  request: { body: { required: true, ...json(CreateInvitationSchema) } },
  responses: {
    201: { description: 'The invitation (the token only travels in the e-mail).', ...json(InvitationSchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...authProblems.conflict,
    ...problemResponses.unavailable,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/invitations/{id}',
  operationId: 'withdrawInvitation',
  tags,
  summary: 'Withdraw a pending invitation (admins)',
  security: sessionOnly,
  request: { params: IdParams },
  responses: { 200: { description: 'The withdrawn invitation.', ...json(InvitationSchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/invitations/accept',
  operationId: 'acceptInvitation',
  security: publicAccess,
  tags,
  summary: 'Accept an invitation',
  description: 'Creates the member from the token in the e-mail; the token works once. Then sign in with POST /api/v1/session.',
  request: { body: { required: true, ...json(AcceptInvitationSchema) } },
  responses: {
    201: { description: 'The new member.', ...json(MemberSchema) },
    ...problemResponses.validation,
    ...problemResponses.unprocessable,
    ...authProblems.conflict,
  },
});

type InvitationRow = typeof invitations.$inferSelect;

function invitationView(row: InvitationRow, now: Date): z.infer<typeof InvitationSchema> {
  const state = row.acceptedAt ? 'accepted' : row.withdrawnAt ? 'withdrawn' : row.expiresAt <= now ? 'expired' : 'pending';
  return { id: row.id, email: row.email, role: row.role, state, expiresAt: row.expiresAt.toISOString(), createdAt: row.createdAt.toISOString() };
}

const TOKEN_REFUSED = 'This invitation link is not valid: it was used, withdrawn, or has expired. Ask an admin to invite you again.';

export function invitationsRouter(ctx: AppContext): Router {
  const router = Router();
  const session = requireSession(ctx);
  const db = ctx.database.db;

  router.get('/invitations', session, requireAdmin, async (_req, res) => {
    const rows = await db.select().from(invitations).where(eq(invitations.organisationId, callerOf(res).organisationId)).orderBy(desc(invitations.createdAt));
    const now = ctx.clock.now();
    res.json({ invitations: rows.map((r) => invitationView(r, now)) });
  });

  router.post('/invitations', session, requireAdmin, validateBody(CreateInvitationSchema), async (_req, res) => {
    const caller = callerOf(res);
    const body = res.locals.body as z.infer<typeof CreateInvitationSchema>;
    const email = body.email.toLowerCase();
    const existing = await db.select({ id: users.id }).from(users).where(sql`lower(${users.email}) = ${email}`);
    if (existing[0]) throw new ApiError('conflict', `${email} already has a Gammaline account; change their role under /api/v1/members instead.`);
    const actor = await memberActor(db, caller);
    const now = ctx.clock.now();
    const expiresAt = new Date(now.getTime() + INVITATION_TTL_MS);
    const { token, hash } = generateToken();
    const row = await db.transaction(async (tx) => {
      // Only the newest link to an address works.
      await tx
        .update(invitations)
        .set({ withdrawnAt: sql`now()` })
        .where(and(eq(invitations.organisationId, caller.organisationId), eq(invitations.email, email), isNull(invitations.acceptedAt), isNull(invitations.withdrawnAt)));
      const [created] = await tx
        .insert(invitations)
        .values({ organisationId: caller.organisationId, email, role: body.role, tokenHash: hash, invitedBy: caller.userId, expiresAt })
        .returning();
      await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'invitation.sent', targetType: 'invitation', targetId: created!.id, details: { email, role: body.role } });
      return created!;
    });
    const [org] = await db.select({ name: organisations.name }).from(organisations).where(eq(organisations.id, caller.organisationId));
    const link = `${ctx.config.publicUrl}/invitation?token=${encodeURIComponent(token)}`;
    try {
      await ctx.mailer.send(invitationMail({ to: email, organisationId: caller.organisationId, organisationName: org?.name ?? 'your organisation', invitedBy: actor.label, role: body.role, link, expiresAt }));
    } catch (err) {
      throw new ApiError('unavailable', 'The invitation was saved but the mail server did not take the message; send the invitation again shortly.', {
        headers: { 'Retry-After': '30' },
        cause: err,
      });
    }
    res.status(201).json(invitationView(row, now));
  });

  router.delete('/invitations/:id', session, requireAdmin, validateParams(IdParams), async (_req, res) => {
    const caller = callerOf(res);
    const { id } = res.locals.params as { id: string };
    const actor = await memberActor(db, caller);
    const row = await db.transaction(async (tx) => {
      const [withdrawn] = await tx
        .update(invitations)
        .set({ withdrawnAt: sql`now()` })
        .where(and(eq(invitations.organisationId, caller.organisationId), eq(invitations.id, id), isNull(invitations.acceptedAt), isNull(invitations.withdrawnAt)))
        .returning();
      if (!withdrawn) throw new ApiError('notFound', 'No pending invitation with that id; GET /api/v1/invitations lists them.');
      await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'invitation.withdrawn', targetType: 'invitation', targetId: id, details: { email: withdrawn.email } });
      return withdrawn;
    });
    res.json(invitationView(row, ctx.clock.now()));
  });

  router.post('/invitations/accept', validateBody(AcceptInvitationSchema), async (_req, res) => {
    const body = res.locals.body as z.infer<typeof AcceptInvitationSchema>;
    const refused = () => new ApiError('unprocessable', TOKEN_REFUSED, { errors: [{ field: 'token', message: 'used, withdrawn, expired or unknown' }] });
    if (!looksLikeToken(body.token)) throw refused();
    const passwordHash = await hashPassword(body.password);
    const now = ctx.clock.now();
    const member = await db.transaction(async (tx) => {
      // Spending the token and creating the member are one transaction: a second use finds no row.
      const [invitation] = await tx
        .update(invitations)
        .set({ acceptedAt: sql`now()` })
        .where(and(eq(invitations.tokenHash, hashToken(body.token)), isNull(invitations.acceptedAt), isNull(invitations.withdrawnAt), gt(invitations.expiresAt, now)))
        .returning();
      if (!invitation) throw refused();
      const taken = await tx.select({ id: users.id }).from(users).where(sql`lower(${users.email}) = ${invitation.email}`);
      if (taken[0]) throw new ApiError('conflict', `${invitation.email} already has an account; sign in with POST /api/v1/session.`);
      const [created] = await tx
        .insert(users)
        .values({ organisationId: invitation.organisationId, email: invitation.email, displayName: body.displayName, role: invitation.role, passwordHash })
        .returning();
      await recordAudit(tx, {
        organisationId: invitation.organisationId,
        actor: { userId: created!.id, label: invitation.email },
        action: 'member.joined',
        targetType: 'member',
        targetId: created!.id,
        details: { role: invitation.role, invitationId: invitation.id },
      });
      return created!;
    });
    res.status(201).json(toMemberView(member));
  });

  return router;
}
