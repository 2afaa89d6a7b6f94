import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createPinia, setActivePinia } from 'pinia';
import { fakeApi, json, notSignedIn, sessionOf } from '../test/fakeApi.ts';
import { ASK_HINT, SESSION_HINT_KEY, useSessionStore } from './session.ts';

beforeEach(() => {
  setActivePinia(createPinia());
});

afterEach(() => {
  vi.unstubAllGlobals();
  localStorage.clear();
});

describe('the console session on page load', () => {
  it('does not ask the server on a first visit (no hint: nobody ever signed in from this browser)', async () => {
    const seen = fakeApi({ 'GET /api/v1/session': notSignedIn });
    const session = useSessionStore();
    await session.ensureLoaded();
    expect(seen).toEqual([]);
    expect(session.signedIn).toBe(false);
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe('0');
  });

  it('asks the server when the last visit could not tell, and remembers that nobody was signed in', async () => {
    localStorage.setItem(SESSION_HINT_KEY, ASK_HINT);
    const seen = fakeApi({ 'GET /api/v1/session': notSignedIn });
    await useSessionStore().ensureLoaded();
    expect(seen.map((r) => `${r.method} ${new URL(r.url).pathname}`)).toEqual(['GET /api/v1/session']);
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe('0');
  });

  it('does not ask again after a visit that found nobody signed in (no failed request on every load)', async () => {
    localStorage.setItem(SESSION_HINT_KEY, '0');
    const seen = fakeApi({ 'GET /api/v1/session': notSignedIn });
    const session = useSessionStore();
    await session.ensureLoaded();
    expect(seen).toEqual([]);
    expect(session.loaded).toBe(true);
    expect(session.signedIn).toBe(false);
  });

  it('asks when it was signed in last time, and keeps the hint in step with sign-in and sign-out', async () => {
    localStorage.setItem(SESSION_HINT_KEY, '1');
    fakeApi({
      'GET /api/v1/session': () => json(sessionOf('developer')),
      'DELETE /api/v1/session': () => new Response(null, { status: 204 }),
      'POST /api/v1/session': () => json(sessionOf('admin')),
    });
    const session = useSessionStore();
    await session.ensureLoaded();
    expect(session.member?.role).toBe('developer');
    await session.signOut();
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe('0');
    await session.signIn('admin@kestrel-ridge.example', 'gammaline-demo-2026');
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe('1');
  });

  it('records "ask next time" instead of "signed out" when the server could not answer', async () => {
    localStorage.setItem(SESSION_HINT_KEY, '1');
    const unavailable = () => json({ type: 'urn:gammaline:problem:unavailable', title: 'Service unavailable', status: 503, detail: 'The database is unreachable; retry shortly.' }, 503);
    fakeApi({ 'GET /api/v1/session': unavailable, 'DELETE /api/v1/session': unavailable });
    const session = useSessionStore();
    await session.ensureLoaded();
    expect(session.signedIn).toBe(false);
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe(ASK_HINT);
    localStorage.setItem(SESSION_HINT_KEY, '1');
    await session.signOut().catch(() => {});
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe(ASK_HINT);
  });

  it('asks again next time when the network is down', async () => {
    localStorage.setItem(SESSION_HINT_KEY, '1');
    vi.stubGlobal('fetch', vi.fn(async () => { throw new TypeError('offline'); }));
    await useSessionStore().ensureLoaded();
    expect(localStorage.getItem(SESSION_HINT_KEY)).toBe(ASK_HINT);
  });
});
