import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { hashPassword } from '../../server/auth/password.ts';
import { RESET_MAILS_PER_ACCOUNT } from '../../server/auth/throttle.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { organisations, users } from '../../server/db/schema.ts';
import { createTestApp, manualClock, TEST_DEVELOPER, type TestApp } from '../helpers/app.ts';

// Single-use, expiring, hashed tokens for invitations and resets, and a reset answer that does not
// reveal whether an address exists: OWASP forgot password cheat sheet. Every mail is read back through
// the local capture server, as an admin would in the console.

let ctx: TestApp;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
const clock = manualClock(new Date());

beforeAll(async () => {
  ctx = await createTestApp({ publicUrl: 'http://gammaline.test' }, { clock });
  admin = await ctx.adminAgent();
});
afterAll(async () => {
  await ctx.close();
});

async function mailsTo(address: string) {
  const res = await admin.get(`/api/v1/mail?to=${encodeURIComponent(address)}`).expect(200);
  return res.body.messages as { id: string; subject: string; to: string[]; from: string }[];
}

async function tokenFromLatestMail(address: string, path: string): Promise<string> {
  const [latest] = await mailsTo(address);
  expect(latest).toBeDefined();
  const message = await admin.get(`/api/v1/mail/${latest!.id}`).expect(200);
  const match = new RegExp(`http://gammaline\\.test${path}\\?token=([A-Za-z0-9_-]{43})`).exec(message.body.text as string);
  expect(match, message.body.text).not.toBeNull();
  // The expiry as people read it in a letter, never a raw ISO timestamp.
  expect(message.body.text).toMatch(/works once and until \d{1,2} [A-Z][a-z]+ \d{4}, \d{2}:\d{2} UTC\./);
  return match![1]!;
}

describe('the invitation flow', () => {
  const email = 'oskar.brandt@kestrel-ridge.example';

  it('sends a link by e-mail, creates the member from it once, and the member can sign in', async () => {
    const sent = await admin.post('/api/v1/invitations').send({ email, role: 'developer' }).expect(201);
    expect(sent.body).toMatchObject({ email, role: 'developer', state: 'pending' });
    expect(JSON.stringify(sent.body)).not.toMatch(/token/i);

    const [mail] = await mailsTo(email);
    expect(mail).toMatchObject({ subject: 'You are invited to Kestrel Ridge Radio Club on Gammaline', to: [email], from: 'no-reply@gammaline.example' });
    const token = await tokenFromLatestMail(email, '/invitation');

    const joined = await request(ctx.app).post('/api/v1/invitations/accept').send({ token, displayName: 'Oskar Brandt', password: 'ridge line at dawn' }).expect(201);
    expect(joined.body).toMatchObject({ email, displayName: 'Oskar Brandt', role: 'developer', disabled: false });
    // Exactly the documented member fields: never the password hash or any other column of the row.
    expect(Object.keys(joined.body).sort()).toEqual(['createdAt', 'disabled', 'displayName', 'email', 'id', 'role']);
    expect(joined.text).not.toMatch(/argon2|passwordHash|organisationId/);
    await request(ctx.app).post('/api/v1/session').send({ email, password: 'ridge line at dawn' }).expect(200);

    const again = await request(ctx.app).post('/api/v1/invitations/accept').send({ token, displayName: 'Someone Else', password: 'another long phrase' }).expect(422);
    expect(again.body.detail).toMatch(/Ask an admin to invite you again/);
    const list = await admin.get('/api/v1/invitations').expect(200);
    expect(list.body.invitations.find((i: { email: string }) => i.email === email).state).toBe('accepted');
  });

  it('refuses to invite a member of the same organisation (409: its admins see their members anyway)', async () => {
    const res = await admin.post('/api/v1/invitations').send({ email: TEST_DEVELOPER.email }).expect(409);
    expect(res.body.detail).toMatch(/already has a Gammaline account/);
  });

  it('refuses a withdrawn invitation, a replaced one and an expired one', async () => {
    const withdrawnTo = 'lena.faulk@kestrel-ridge.example';
    const w = await admin.post('/api/v1/invitations').send({ email: withdrawnTo }).expect(201);
    const withdrawnToken = await tokenFromLatestMail(withdrawnTo, '/invitation');
    const gone = await admin.delete(`/api/v1/invitations/${w.body.id}`).expect(200);
    expect(gone.body.state).toBe('withdrawn');
    await request(ctx.app).post('/api/v1/invitations/accept').send({ token: withdrawnToken, displayName: 'Lena', password: 'a long enough phrase' }).expect(422);

    const replacedTo = 'arlo.pike@kestrel-ridge.example';
    await admin.post('/api/v1/invitations').send({ email: replacedTo }).expect(201);
    const firstToken = await tokenFromLatestMail(replacedTo, '/invitation');
    await admin.post('/api/v1/invitations').send({ email: replacedTo, role: 'admin' }).expect(201);
    await request(ctx.app).post('/api/v1/invitations/accept').send({ token: firstToken, displayName: 'Arlo', password: 'a long enough phrase' }).expect(422);
    const secondToken = await tokenFromLatestMail(replacedTo, '/invitation');

    clock.advance(8 * 24 * 60 * 60 * 1000);
    try {
      await request(ctx.app).post('/api/v1/invitations/accept').send({ token: secondToken, displayName: 'Arlo', password: 'a long enough phrase' }).expect(422);
    } finally {
      clock.set(new Date());
    }
    const list = await admin.get('/api/v1/invitations').expect(200);
    expect(list.body.invitations.filter((i: { email: string }) => i.email === replacedTo).map((i: { state: string }) => i.state)).toEqual(['pending', 'withdrawn']);
  });

  it('refuses a short password with a 422 naming the field (a range rule), and a junk token with 422', async () => {
    const short = await request(ctx.app).post('/api/v1/invitations/accept').send({ token: 'x'.repeat(43), displayName: 'A', password: 'short' }).expect(422);
    expect(short.body.errors).toContainEqual({ field: 'password', message: expect.stringMatching(/at least 12 characters/) });
    await request(ctx.app).post('/api/v1/invitations/accept').send({ token: 'junk', displayName: 'A', password: 'long enough password' }).expect(422);
  });

  it('gives the invited role and records the join and the invitation in the audit trail', async () => {
    const to = 'mira.castell@kestrel-ridge.example';
    await admin.post('/api/v1/invitations').send({ email: to, role: 'admin' }).expect(201);
    const token = await tokenFromLatestMail(to, '/invitation');
    const joined = await request(ctx.app).post('/api/v1/invitations/accept').send({ token, displayName: 'Mira Castell', password: 'tower climb checklist' }).expect(201);
    expect(joined.body.role).toBe('admin');
    const audit = await admin.get('/api/v1/audit').expect(200);
    const actions = audit.body.events.map((e: { action: string }) => e.action);
    expect(actions).toEqual(expect.arrayContaining(['invitation.sent', 'invitation.withdrawn', 'member.joined']));
  });
});

/** Another organisation with members made through the repositories, as the demo seed makes the first. */
async function otherOrganisation(name: string, slug: string, members: { email: string; role: 'admin' | 'developer' }[]) {
  const db = ctx.database.db;
  const [org] = await db.insert(organisations).values({ name, slug }).returning();
  const passwordHash = await hashPassword('a passphrase for tests');
  const ids: Record<string, string> = {};
  for (const m of members) {
    const [row] = await db.insert(users).values({ organisationId: org!.id, email: m.email, displayName: m.email.split('@')[0]!, role: m.role, passwordHash }).returning();
    ids[m.email] = row!.id;
  }
  return { id: org!.id, ids, signIn: (email: string) => ctx.signIn(email, 'a passphrase for tests') };
}

async function mailText(address: string): Promise<string> {
  const [latest] = await mailsTo(address);
  return (await admin.get(`/api/v1/mail/${latest!.id}`).expect(200)).body.text as string;
}

describe('inviting an address that has an account in another organisation', () => {
  let saltmarsh: Awaited<ReturnType<typeof otherOrganisation>>;
  const mover = 'pell.ashdown@saltmarsh.example';
  const saltAdmin = 'tamsin.reed@saltmarsh.example';

  beforeAll(async () => {
    saltmarsh = await otherOrganisation('Saltmarsh Beacon Group', 'saltmarsh-beacon', [
      { email: saltAdmin, role: 'admin' },
      { email: mover, role: 'developer' },
    ]);
  });

  it('answers exactly as for a new address: 201, the same fields, listed as pending, the same audit entry', async () => {
    const fresh = await admin.post('/api/v1/invitations').send({ email: 'juno.marsh@kestrel-ridge.example', role: 'developer' }).expect(201);
    const known = await admin.post('/api/v1/invitations').send({ email: mover.toUpperCase(), role: 'developer' }).expect(201);
    expect(Object.keys(known.body).sort()).toEqual(Object.keys(fresh.body).sort());
    expect(known.body).toMatchObject({ email: mover, role: 'developer', state: 'pending' });
    expect(known.headers['content-type']).toBe(fresh.headers['content-type']);
    const list = (await admin.get('/api/v1/invitations').expect(200)).body.invitations as { id: string; state: string }[];
    expect(list.find((i) => i.id === known.body.id)!.state).toBe('pending');
    expect(list.find((i) => i.id === fresh.body.id)!.state).toBe('pending');
    const events = (await admin.get('/api/v1/audit').expect(200)).body.events as { action: string; targetId: string; details: Record<string, unknown> }[];
    const sentTo = (id: string) => events.find((e) => e.action === 'invitation.sent' && e.targetId === id)!;
    expect(Object.keys(sentTo(known.body.id).details).sort()).toEqual(Object.keys(sentTo(fresh.body.id).details).sort());
    expect(sentTo(known.body.id).details).toEqual({ email: mover, role: 'developer' });
  });

  it('tells the invitee by e-mail to sign in with that account and accept, and says the account will move', async () => {
    const text = await mailText(mover);
    expect(text).toMatch(/already have a Gammaline account/);
    expect(text).toMatch(/sign in/i);
    expect(text).toMatch(/moves your account to Kestrel Ridge Radio Club/);
    expect(await mailText('juno.marsh@kestrel-ridge.example')).not.toMatch(/already have/);
  });

  it('refuses an anonymous acceptance with 409 saying to sign in first, leaving the token usable', async () => {
    const token = await tokenFromLatestMail(mover, '/invitation');
    const res = await request(ctx.app).post('/api/v1/invitations/accept').send({ token, displayName: 'Pell', password: 'a long enough phrase' }).expect(409);
    expect(res.body.detail).toMatch(/already has a Gammaline account\. Sign in with it/);
    const tokenOnly = await request(ctx.app).post('/api/v1/invitations/accept').send({ token }).expect(409);
    expect(tokenOnly.body.detail).toMatch(/Sign in/);
    const list = (await admin.get('/api/v1/invitations').expect(200)).body.invitations as { email: string; state: string }[];
    expect(list.find((i) => i.email === mover)!.state).toBe('pending');
  });

  it('needs the CSRF token to accept signed in', async () => {
    const token = await tokenFromLatestMail(mover, '/invitation');
    const agent = await saltmarsh.signIn(mover);
    await agent.post('/api/v1/invitations/accept').set('X-CSRF-Token', 'wrong').send({ token }).expect(403);
  });

  it('signed in as the invited address, moves the account: keys revoked and audited there, member.left there and member.joined here, data stays', async () => {
    const token = await tokenFromLatestMail(mover, '/invitation');
    const db = ctx.database.db;
    const key = await createKey(db, { organisationId: saltmarsh.id, ownerId: saltmarsh.ids[mover]!, name: 'logger', note: '', actor: { userId: saltmarsh.ids[mover]!, label: mover } }, new Date());
    await request(ctx.app).get('/api/v1/organisation').set('Authorization', `Bearer ${key.secret}`).expect(200);
    const line = await request(ctx.app)
      .post('/api/v1/feedlines')
      .set('Authorization', `Bearer ${key.secret}`)
      .send({ name: 'Saltmarsh mast run', sections: [{ cableId: 'rg-213', lengthM: 20 }] })
      .expect(201);
    const otherBrowser = await saltmarsh.signIn(mover);
    const agent = await saltmarsh.signIn(mover);

    const moved = await agent.post('/api/v1/invitations/accept').send({ token }).expect(200);
    expect(moved.body).toMatchObject({ id: saltmarsh.ids[mover], email: mover, role: 'developer', disabled: false });
    expect(Object.keys(moved.body).sort()).toEqual(['createdAt', 'disabled', 'displayName', 'email', 'id', 'role']);

    // This browser goes on in the new organisation under a new session; every other session ended.
    const session = await agent.get('/api/v1/session').expect(200);
    expect(session.body.organisation.name).toBe('Kestrel Ridge Radio Club');
    await otherBrowser.get('/api/v1/session').expect(401);
    // Its key in the old organisation no longer works (the key cache hears of the revocation over NOTIFY, within moments).
    let status = 0;
    for (let i = 0; i < 100 && status !== 401; i++) {
      if (i > 0) await new Promise((r) => setTimeout(r, 20));
      status = (await request(ctx.app).get('/api/v1/organisation').set('Authorization', `Bearer ${key.secret}`)).status;
    }
    expect(status).toBe(401);

    const here = (await admin.get('/api/v1/members').expect(200)).body.members as { email: string; role: string }[];
    expect(here.find((m) => m.email === mover)?.role).toBe('developer');
    const hereAudit = (await admin.get('/api/v1/audit').expect(200)).body.events as { action: string; targetId: string }[];
    expect(hereAudit.some((e) => e.action === 'member.joined' && e.targetId === saltmarsh.ids[mover])).toBe(true);

    const saltmarshAdmin = await saltmarsh.signIn(saltAdmin);
    const there = (await saltmarshAdmin.get('/api/v1/members').expect(200)).body.members as { email: string }[];
    expect(there.map((m) => m.email)).toEqual([saltAdmin]);
    const thereAudit = (await saltmarshAdmin.get('/api/v1/audit').expect(200)).body.events as { action: string; targetId: string; details: Record<string, unknown> }[];
    expect(thereAudit.find((e) => e.action === 'member.left')).toMatchObject({ targetId: saltmarsh.ids[mover], details: { email: mover } });
    expect(JSON.stringify(thereAudit.find((e) => e.action === 'member.left'))).not.toMatch(/Kestrel/);
    expect(thereAudit.some((e) => e.action === 'key.revoked' && e.targetId === key.key.id)).toBe(true);
    const keysThere = (await saltmarshAdmin.get('/api/v1/keys').expect(200)).body.keys as { id: string; state: string }[];
    expect(keysThere.find((k) => k.id === key.key.id)?.state).toBe('revoked');
    const linesThere = (await saltmarshAdmin.get('/api/v1/feedlines').expect(200)).body.feedlines as { id: string }[];
    expect(linesThere.map((l) => l.id)).toContain(line.body.id);
    const linesHere = (await admin.get('/api/v1/feedlines').expect(200)).body.feedlines as { id: string }[];
    expect(linesHere.map((l) => l.id)).not.toContain(line.body.id);

    // The token worked once.
    await agent.post('/api/v1/invitations/accept').set('X-CSRF-Token', session.body.csrfToken as string).send({ token }).expect(422);
    // The account signs in with its own password, now in the new organisation.
    const again = await request(ctx.app).post('/api/v1/session').send({ email: mover, password: 'a passphrase for tests' }).expect(200);
    expect(again.body.organisation.name).toBe('Kestrel Ridge Radio Club');
  });

  it('refuses to move the only admin of an organisation (409) and leaves the token usable', async () => {
    const solo = await otherOrganisation('Hollow Fen Repeater Trust', 'hollow-fen', [{ email: 'ines.varga@hollow-fen.example', role: 'admin' }]);
    await admin.post('/api/v1/invitations').send({ email: 'ines.varga@hollow-fen.example', role: 'admin' }).expect(201);
    const token = await tokenFromLatestMail('ines.varga@hollow-fen.example', '/invitation');
    const agent = await solo.signIn('ines.varga@hollow-fen.example');
    const res = await agent.post('/api/v1/invitations/accept').send({ token }).expect(409);
    expect(res.body.detail).toMatch(/only admin of Hollow Fen Repeater Trust/);
    expect((await agent.get('/api/v1/session').expect(200)).body.organisation.name).toBe('Hollow Fen Repeater Trust');
    const list = (await admin.get('/api/v1/invitations').expect(200)).body.invitations as { email: string; state: string }[];
    expect(list.find((i) => i.email === 'ines.varga@hollow-fen.example')!.state).toBe('pending');
  });

  it('creates a new account from the form when a different account is signed in, and asks for the name and password when they are missing', async () => {
    const to = 'odile.brack@kestrel-ridge.example';
    await admin.post('/api/v1/invitations').send({ email: to }).expect(201);
    const token = await tokenFromLatestMail(to, '/invitation');
    const signedInElsewhere = await ctx.developerAgent();
    const missing = await signedInElsewhere.post('/api/v1/invitations/accept').send({ token }).expect(400);
    expect(missing.body.errors.map((e: { field: string }) => e.field).sort()).toEqual(['displayName', 'password']);
    const joined = await signedInElsewhere.post('/api/v1/invitations/accept').send({ token, displayName: 'Odile Brack', password: 'marsh reeds in wind' }).expect(201);
    expect(joined.body).toMatchObject({ email: to, role: 'developer' });
  });
});

describe('the password-reset flow', () => {
  it('mails a link that sets a new password once and ends the member\'s open sessions', async () => {
    const open = await ctx.developerAgent();
    const res = await request(ctx.app).post('/api/v1/password-reset').send({ email: TEST_DEVELOPER.email }).expect(202);
    const [mail] = await mailsTo(TEST_DEVELOPER.email);
    expect(mail!.subject).toBe('Choose a new Gammaline password');
    const token = await tokenFromLatestMail(TEST_DEVELOPER.email, '/password-reset');

    await request(ctx.app).post('/api/v1/password-reset/confirm').send({ token, password: 'brand new passphrase here' }).expect(204);
    await open.get('/api/v1/session').expect(401);
    await request(ctx.app).post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(401);
    await request(ctx.app).post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: 'brand new passphrase here' }).expect(200);

    const reused = await request(ctx.app).post('/api/v1/password-reset/confirm').send({ token, password: 'yet another passphrase' }).expect(422);
    expect(reused.body.detail).toMatch(/POST \/api\/v1\/password-reset/);
    // Keys are not sessions: a password change leaves them working.
    await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(200);
    expect(res.body.message).toMatch(/If the address belongs to an active member/);
  });

  it('answers an unknown address exactly like a known one and sends nothing', async () => {
    const known = await request(ctx.app).post('/api/v1/password-reset').send({ email: ctx.seed.adminEmail }).expect(202);
    const unknown = await request(ctx.app).post('/api/v1/password-reset').send({ email: 'ghost@kestrel-ridge.example' }).expect(202);
    expect(unknown.body).toEqual(known.body);
    expect(await mailsTo('ghost@kestrel-ridge.example')).toEqual([]);
  });

  it('lets only the newest link work', async () => {
    await request(ctx.app).post('/api/v1/password-reset').send({ email: 'oskar.brandt@kestrel-ridge.example' }).expect(202);
    const first = await tokenFromLatestMail('oskar.brandt@kestrel-ridge.example', '/password-reset');
    await request(ctx.app).post('/api/v1/password-reset').send({ email: 'oskar.brandt@kestrel-ridge.example' }).expect(202);
    const second = await tokenFromLatestMail('oskar.brandt@kestrel-ridge.example', '/password-reset');
    await request(ctx.app).post('/api/v1/password-reset/confirm').send({ token: first, password: 'first link passphrase' }).expect(422);
    await request(ctx.app).post('/api/v1/password-reset/confirm').send({ token: second, password: 'second link passphrase' }).expect(204);
  });

  it(`sends at most ${RESET_MAILS_PER_ACCOUNT} reset mails per account in 15 minutes, answering the same way`, async () => {
    const email = 'mira.castell@kestrel-ridge.example';
    for (let i = 0; i < RESET_MAILS_PER_ACCOUNT + 2; i++) await request(ctx.app).post('/api/v1/password-reset').send({ email }).expect(202);
    const resets = (await mailsTo(email)).filter((m) => m.subject === 'Choose a new Gammaline password');
    expect(resets).toHaveLength(RESET_MAILS_PER_ACCOUNT);
  });

  it('refuses an expired link', async () => {
    await request(ctx.app).post('/api/v1/password-reset').send({ email: ctx.seed.adminEmail }).expect(202);
    const token = await tokenFromLatestMail(ctx.seed.adminEmail, '/password-reset');
    clock.advance(61 * 60 * 1000);
    try {
      await request(ctx.app).post('/api/v1/password-reset/confirm').send({ token, password: 'too late for this one' }).expect(422);
    } finally {
      clock.set(new Date());
    }
  });
});

describe('captured mail', () => {
  it('is newest first and filterable by recipient', async () => {
    const all = await admin.get('/api/v1/mail').expect(200);
    const times = all.body.messages.map((m: { receivedAt: string }) => m.receivedAt);
    expect([...times].sort().reverse()).toEqual(times);
    await admin.get('/api/v1/mail/00000000-0000-4000-8000-000000000000').expect(404);
  });

  it('is not served in production (404), even to an admin', async () => {
    const prod = await createTestApp({ mode: 'production', trustProxy: 1 });
    try {
      const signIn = await request(prod.app)
        .post('/api/v1/session')
        .set('X-Forwarded-Proto', 'https')
        .send({ email: prod.seed.adminEmail, password: prod.config.demoAdmin.password })
        .expect(200);
      const cookie = signIn.headers['set-cookie'] as unknown as string[];
      await request(prod.app).get('/api/v1/mail').set('X-Forwarded-Proto', 'https').set('Cookie', cookie).expect(404);
      // Not "405, it takes GET": in production the path does not exist at all.
      await request(prod.app).post('/api/v1/mail').set('X-Forwarded-Proto', 'https').set('Cookie', cookie).expect(404);
      await request(prod.app).get('/api/v1/keys').set('X-Forwarded-Proto', 'https').set('Cookie', cookie).expect(200);
    } finally {
      await prod.close();
    }
  });
});
