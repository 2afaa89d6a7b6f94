import { afterEach, describe, expect, it, vi } from 'vitest';
import { checkHealth, checkReadiness } from './useServiceStatus.ts';

function jsonResponse(body: unknown, status = 200, contentType = 'application/json'): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': contentType } });
}

function pathOf(request: Request): string {
  return new URL(request.url).pathname;
}

afterEach(() => {
  vi.unstubAllGlobals();
});

describe('health checks', () => {
  it('return the body when the server is live and ready', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async (request: Request) =>
        pathOf(request) === '/healthz'
          ? jsonResponse({ status: 'ok', version: '0.1.0', uptimeS: 12 })
          : jsonResponse({ status: 'ready', database: 'up' }),
      ),
    );
    await expect(checkHealth()).resolves.toEqual({
      kind: 'ok',
      body: { status: 'ok', version: '0.1.0', uptimeS: 12 },
    });
    await expect(checkReadiness()).resolves.toEqual({ kind: 'ok', body: { status: 'ready', database: 'up' } });
  });

  it('return the problem details of a 503', async () => {
    const problem = {
      type: 'https://gammaline.example/problems/not-ready',
      title: 'Not ready',
      status: 503,
      detail: 'The database does not answer.',
    };
    vi.stubGlobal('fetch', vi.fn(async () => jsonResponse(problem, 503, 'application/problem+json')));
    await expect(checkReadiness()).resolves.toEqual({ kind: 'problem', problem });
  });

  it('build a problem from the status line when the error body is not one', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async () => new Response('<html>Bad Gateway</html>', { status: 502, statusText: 'Bad Gateway' })),
    );
    const outcome = await checkHealth();
    expect(outcome.kind).toBe('problem');
    if (outcome.kind === 'problem') {
      expect(outcome.problem.status).toBe(502);
      expect(outcome.problem.title).toBe('Bad Gateway');
    }
  });

  it('report a body of the wrong shape as a problem, not as data', async () => {
    vi.stubGlobal('fetch', vi.fn(async () => jsonResponse({ status: 'ok' })));
    const outcome = await checkHealth();
    expect(outcome.kind).toBe('problem');
  });

  it('report a page answering in place of the API as a problem with its status', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async () => new Response('<!doctype html><title>Console</title>', { status: 200, headers: { 'content-type': 'text/html' } })),
    );
    const outcome = await checkHealth();
    expect(outcome.kind).toBe('problem');
    if (outcome.kind === 'problem') expect(outcome.problem.status).toBe(200);
  });

  it('report a network failure as unreachable', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async () => {
        throw new TypeError('Failed to fetch');
      }),
    );
    await expect(checkHealth()).resolves.toEqual({ kind: 'unreachable', reason: 'Failed to fetch' });
  });

  it('give up after the timeout and say so', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(
        (request: Request) =>
          new Promise<Response>((_resolve, reject) => {
            request.signal.addEventListener('abort', () => reject(new Error('aborted')));
          }),
      ),
    );
    const outcome = await checkHealth(20);
    expect(outcome).toEqual({ kind: 'unreachable', reason: 'no answer within 20 ms' });
  });
});
