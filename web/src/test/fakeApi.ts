import { vi } from 'vitest';
import type { Schemas } from '../api/client.ts';

type Handler = (request: Request) => Response | Promise<Response>;

export function json(body: unknown, status = 200): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': status >= 400 ? 'application/problem+json' : 'application/json' } });
}

export const notSignedIn = (): Response =>
  json({ type: 'urn:gammaline:problem:unauthenticated', title: 'Unauthenticated', status: 401, detail: 'Sign in first.' }, 401);

export function sessionOf(role: 'admin' | 'developer'): Schemas['Session'] {
  return {
    member: {
      id: '6f1c2a5e-8d4b-4f3a-9c2e-1b7d6f3e2d55',
      email: role === 'admin' ? 'admin@kestrel-ridge.example' : 'ines.marlow@kestrel-ridge.example',
      displayName: role === 'admin' ? 'Demo Admin' : 'Ines Marlow',
      role,
      disabled: false,
      createdAt: '2026-03-14T09:30:00.000Z',
    },
    organisation: { id: '0c7a3d1e-2b4f-4e6a-8c9d-5f1e2a3b4c5d', name: 'Kestrel Ridge Radio Club', slug: 'kestrel-ridge' },
    csrfToken: 'test-csrf-token',
  };
}

/**
 * Stubs fetch with handlers keyed by "METHOD /path"; anything else is a 404 problem. Returns the
 * list of requests seen, so tests can check what the console sent.
 */
export function fakeApi(handlers: Record<string, Handler>): Request[] {
  const seen: Request[] = [];
  vi.stubGlobal(
    'fetch',
    vi.fn(async (input: Request | string, init?: RequestInit) => {
      const request = typeof input === 'string' ? new Request(new URL(input, 'http://localhost'), init) : input;
      seen.push(request.clone());
      const handler = handlers[`${request.method} ${new URL(request.url).pathname}`];
      if (handler) return handler(request);
      return json({ type: 'about:blank', title: 'Not found', status: 404, detail: `no fake for ${request.method} ${request.url}` }, 404);
    }),
  );
  return seen;
}
