import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, TEST_DEVELOPER, type TestApp } from '../helpers/app.ts';

// The operators' CLI works on the same database as the server: a key it creates authenticates at
// once over HTTP, and a key it revokes is refused at once (common practice for admin tooling).

const run = promisify(execFile);
let ctx: TestApp;

async function keys(args: string[], env: Record<string, string | undefined> = {}) {
  try {
    const { stdout, stderr } = await run(process.execPath, ['--import', 'tsx', 'scripts/keys.ts', ...args], {
      env: { ...process.env, DATABASE_URL: ctx.database.url, ...env },
      cwd: process.cwd(),
    });
    return { code: 0, stdout, stderr };
  } catch (err) {
    const e = err as { code: number; stdout: string; stderr: string };
    return { code: e.code, stdout: e.stdout, stderr: e.stderr };
  }
}

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

describe('npm run keys', () => {
  let created: { id: string; secret: string };

  it('creates a key for a member and prints it once, on its own line', async () => {
    const res = await keys(['create', '--email', TEST_DEVELOPER.email.toUpperCase(), '--name', 'Field day laptop', '--daily-quota', '250']);
    expect(res.code, res.stderr).toBe(0);
    const lines = res.stdout.trim().split('\n');
    const secret = lines.at(-1)!;
    expect(secret).toMatch(/^gml_[A-Za-z0-9_-]{43}$/);
    expect(lines.filter((l) => l.includes(secret.slice(10)))).toHaveLength(1);
    expect(lines[0]).toMatch(/Key "Field day laptop" for wren\.aldous@kestrel-ridge\.example \(id [0-9a-f-]{36}\): 250 units a day, 120 requests a minute\./);
    created = { id: /\(id ([0-9a-f-]{36})\)/.exec(lines[0]!)![1]!, secret };
    await request(ctx.app).get('/api/v1/usage').set('Authorization', `Bearer ${secret}`).expect(200);
  }, 30_000);

  it('lists keys as a table and as JSON with owner, state, quota and usage today', async () => {
    const table = await keys(['list']);
    expect(table.code).toBe(0);
    expect(table.stdout.split('\n')[0]).toMatch(/^id\s+start\s+owner\s+state\s+quota\/day\s+used today\s+name$/);
    expect(table.stdout).toContain('Field day laptop');

    const json = await keys(['list', '--json']);
    const rows = JSON.parse(json.stdout) as { id: string; state: string; dailyQuota: number; usedToday: number; owner: { email: string }; organisation: string }[];
    expect(rows.find((r) => r.id === created.id)).toMatchObject({ state: 'active', dailyQuota: 250, usedToday: 0, organisation: 'kestrel-ridge', owner: { email: TEST_DEVELOPER.email } });
    expect(json.stdout).not.toContain(created.secret);
  }, 30_000);

  it('issues a key for web pages with repeated --origin, and replaces its origins later', async () => {
    const res = await keys(['create', '--email', TEST_DEVELOPER.email, '--name', 'Club log page', '--origin', 'https://log.example.org', '--origin', 'http://127.0.0.1:8088']);
    expect(res.code, res.stderr).toBe(0);
    expect(res.stdout).toContain('Web pages of https://log.example.org, http://127.0.0.1:8088 may use it from a browser.');
    const id = /\(id ([0-9a-f-]{36})\)/.exec(res.stdout)![1]!;
    const admin = await ctx.adminAgent();
    expect((await admin.get(`/api/v1/keys/${id}`).expect(200)).body.allowedOrigins).toEqual(['https://log.example.org', 'http://127.0.0.1:8088']);

    const moved = await keys(['origins', id, '--origin', 'https://monitor.example.net']);
    expect(moved.code, moved.stderr).toBe(0);
    expect(moved.stdout).toContain('now serves web pages of https://monitor.example.net');
    expect((await admin.get(`/api/v1/keys/${id}`).expect(200)).body.allowedOrigins).toEqual(['https://monitor.example.net']);
    const none = await keys(['origins', id]);
    expect(none.code, none.stderr).toBe(0);
    expect((await admin.get(`/api/v1/keys/${id}`).expect(200)).body.allowedOrigins).toEqual([]);

    const bad = await keys(['create', '--email', TEST_DEVELOPER.email, '--name', 'x', '--origin', 'https://Log.example.org/']);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/--origin "https:\/\/Log\.example\.org\/": .*https:\/\/log\.example\.org/);
  }, 60_000);

  it('revokes a key, which is refused at once, and the audit trail names the CLI', async () => {
    const res = await keys(['revoke', created.id]);
    expect(res.code, res.stderr).toBe(0);
    expect(res.stdout).toMatch(/^Revoked key /);
    await request(ctx.app).get('/api/v1/usage').set('Authorization', `Bearer ${created.secret}`).expect(401);
    const admin = await ctx.adminAgent();
    const audit = await admin.get('/api/v1/audit').expect(200);
    expect(audit.body.events).toContainEqual(expect.objectContaining({ action: 'key.revoked', targetId: created.id, actorUserId: null, actorLabel: 'operator (CLI)' }));
  }, 30_000);

  it('explains what is wrong instead of failing obscurely', async () => {
    const unknown = await keys(['create', '--email', 'nobody@kestrel-ridge.example', '--name', 'x']);
    expect(unknown.code).toBe(2);
    expect(unknown.stderr).toMatch(/No member signs in with nobody@kestrel-ridge\.example/);
    const badId = await keys(['revoke', 'abc']);
    expect(badId.code).toBe(2);
    expect(badId.stderr).toMatch(/not a key id/);
    const twice = await keys(['revoke', created.id]);
    expect(twice.code).toBe(1);
    expect(twice.stderr).toMatch(/No live key/);
    const noDb = await keys(['list'], { DATABASE_URL: '', DATABASE_URL_FILE: '/nonexistent/database-url' });
    expect(noDb.code).toBe(2);
    expect(noDb.stderr).toMatch(/Set DATABASE_URL/);
    const help = await keys([]);
    expect(help.code).toBe(2);
    expect(help.stderr).toMatch(/npm run keys -- create --email <member> --name <name>/);
  }, 60_000);
});
