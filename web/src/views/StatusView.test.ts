import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises, mount } from '@vue/test-utils';
import { NMessageProvider } from 'naive-ui';
import { createPinia, setActivePinia, type Pinia } from 'pinia';
import StatusView from './StatusView.vue';
import { useSessionStore, type SessionView } from '../stores/session.ts';

type Handler = (url: string) => Response | Promise<Response>;

function json(body: unknown, status = 200, contentType = 'application/json'): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': contentType } });
}

function stubServer(handler: Handler) {
  // The typed client hands fetch a Request; handlers see its path.
  const fetchMock = vi.fn(async (request: Request) => handler(new URL(request.url).pathname));
  vi.stubGlobal('fetch', fetchMock);
  return fetchMock;
}

// useMessage() needs its provider above the view, as App.vue gives it in the real console.
const Harness = defineComponent(() => () => h(NMessageProvider, null, { default: () => h(StatusView) }));

let pinia: Pinia;

async function mountStatus() {
  const wrapper = mount(Harness, { global: { plugins: [pinia] }, attachTo: document.body });
  await flushPromises();
  return wrapper;
}

/** Signs an admin in as far as the console knows (the store's view of the session). */
function signInAdmin(): void {
  useSessionStore().current = {
    member: { id: '00000000-0000-4000-8000-000000000001', email: 'admin@kestrel-ridge.example', displayName: 'Admin', role: 'admin' },
    organisation: { id: '00000000-0000-4000-8000-000000000002', name: 'Kestrel Ridge' },
    csrfToken: 'csrf',
  } as unknown as SessionView;
}

const FIGURES = {
  windowS: 60,
  requestsPerS: 41.5,
  serverErrorShare: 0.002,
  refusalShare: 0.0125,
  shedPerS: 0,
  p95LatencyMs: 4.2,
  unitsSpentPerS: 38.1,
  unitsRefusedPerS: 0.4,
  inFlight: 3,
  eventLoopDelayMs: 0.6,
  database: { connections: 4, inUse: 1, idle: 3, waiting: 0, max: 10 },
  uptimeS: 3600,
};

function healthy(url: string): Response {
  if (url === '/healthz') return json({ status: 'ok', version: '0.1.0', uptimeS: 5 });
  if (url === '/readyz') return json({ status: 'ready', database: 'up' });
  return json(FIGURES);
}

function setHidden(hidden: boolean): void {
  Object.defineProperty(document, 'hidden', { configurable: true, get: () => hidden });
  document.dispatchEvent(new Event('visibilitychange'));
}

function stateOf(wrapper: Awaited<ReturnType<typeof mountStatus>>, panel: 'server' | 'database'): string {
  return wrapper.get(`[data-testid="${panel}-panel"] [data-testid="check-state"]`).text();
}

beforeEach(() => {
  pinia = createPinia();
  setActivePinia(pinia);
});

afterEach(() => {
  vi.useRealTimers();
  vi.unstubAllGlobals();
  setHidden(false);
  document.body.innerHTML = '';
});

describe('Status view', () => {
  it('shows a running, ready server with its version and uptime', async () => {
    stubServer((url) =>
      url === '/healthz'
        ? json({ status: 'ok', version: '0.1.0-test', uptimeS: 3725 })
        : json({ status: 'ready', database: 'up' }),
    );
    const wrapper = await mountStatus();

    expect(stateOf(wrapper, 'server')).toBe('running');
    expect(stateOf(wrapper, 'database')).toBe('ready');
    expect(wrapper.text()).toContain('0.1.0-test');
    expect(wrapper.text()).toContain('1 h 2 min');
    expect(wrapper.text()).toContain('The server is running and ready for requests.');
    wrapper.unmount();
  });

  it('shows the problem when the database is down', async () => {
    stubServer((url) =>
      url === '/healthz'
        ? json({ status: 'ok', version: '0.1.0', uptimeS: 5 })
        : json(
            { type: 'about:blank', title: 'Not ready', status: 503, detail: 'The database does not answer.' },
            503,
            'application/problem+json',
          ),
    );
    const wrapper = await mountStatus();

    expect(stateOf(wrapper, 'server')).toBe('running');
    expect(stateOf(wrapper, 'database')).toBe('not ready');
    expect(wrapper.get('[data-testid="database-panel"]').text()).toContain('The database does not answer.');
    expect(document.body.textContent).toContain('Not ready: The database does not answer.');
    wrapper.unmount();
  });

  it('shows both checks as unreachable when nothing answers, and says what to do', async () => {
    stubServer(() => {
      throw new TypeError('Failed to fetch');
    });
    const wrapper = await mountStatus();

    expect(stateOf(wrapper, 'server')).toBe('unreachable');
    expect(stateOf(wrapper, 'database')).toBe('unreachable');
    expect(wrapper.text()).toContain('The server cannot be reached.');
    expect(document.body.textContent).toContain('Check that it is running');
    wrapper.unmount();
  });

  it('checks again when asked and shows the new state', async () => {
    let up = false;
    const fetchMock = stubServer((url) => {
      if (!up) throw new TypeError('Failed to fetch');
      return url === '/healthz'
        ? json({ status: 'ok', version: '0.1.0', uptimeS: 1 })
        : json({ status: 'ready', database: 'up' });
    });
    const wrapper = await mountStatus();
    expect(stateOf(wrapper, 'server')).toBe('unreachable');

    up = true;
    await wrapper.get('button').trigger('click');
    await flushPromises();

    expect(fetchMock).toHaveBeenCalledTimes(4);
    expect(stateOf(wrapper, 'server')).toBe('running');
    expect(stateOf(wrapper, 'database')).toBe('ready');
    wrapper.unmount();
  });
});

describe('Status view: live figures', () => {
  const statusCalls = (fetchMock: ReturnType<typeof stubServer>) =>
    fetchMock.mock.calls.filter(([request]) => new URL((request as Request).url).pathname === '/api/v1/status').length;

  it('shows an admin the live figures with text labels', async () => {
    signInAdmin();
    stubServer(healthy);
    const wrapper = await mountStatus();
    const panel = wrapper.get('[data-testid="live-figures"]');
    expect(panel.text()).toContain('Live figures');
    expect(wrapper.get('[data-testid="figure-Requests"]').text()).toBe('42 /s');
    expect(wrapper.get('[data-testid="figure-Server errors"]').text()).toBe('0.2 %');
    expect(wrapper.get('[data-testid="figure-Refused (quota or burst)"]').text()).toBe('1.3 %');
    expect(wrapper.get('[data-testid="figure-Answer time, 95th percentile"]').text()).toBe('4.2 ms');
    expect(wrapper.get('[data-testid="figure-Database connections"]').text()).toBe('1 in use · 3 idle · 10 at most');
    expect(panel.text()).toContain('Rates over the last 60 s');
    // Every figure has its term beside it in a description list.
    expect(panel.findAll('dt')).toHaveLength(panel.findAll('dd').length);
    wrapper.unmount();
  });

  it('shows no live figures to members who are not admins', async () => {
    const fetchMock = stubServer(healthy);
    const wrapper = await mountStatus();
    expect(wrapper.find('[data-testid="live-figures"]').exists()).toBe(false);
    expect(statusCalls(fetchMock)).toBe(0);
    wrapper.unmount();
  });

  it('reads the figures again every few seconds, and not while the tab is hidden', async () => {
    vi.useFakeTimers();
    signInAdmin();
    const fetchMock = stubServer(healthy);
    const wrapper = await mountStatus();
    expect(statusCalls(fetchMock)).toBe(1);

    await vi.advanceTimersByTimeAsync(5000);
    expect(statusCalls(fetchMock)).toBe(2);

    setHidden(true);
    await vi.advanceTimersByTimeAsync(30_000);
    expect(statusCalls(fetchMock)).toBe(2);

    // Back on the tab: read at once, then every 5 s again.
    setHidden(false);
    await flushPromises();
    expect(statusCalls(fetchMock)).toBe(3);
    await vi.advanceTimersByTimeAsync(5000);
    expect(statusCalls(fetchMock)).toBe(4);
    wrapper.unmount();
  });

  it('says the figures are stale when a reading fails, and keeps the last ones', async () => {
    vi.useFakeTimers();
    signInAdmin();
    let up = true;
    stubServer((url) => {
      if (url === '/api/v1/status' && !up) throw new TypeError('Failed to fetch');
      return healthy(url);
    });
    const wrapper = await mountStatus();
    up = false;
    await vi.advanceTimersByTimeAsync(5000);
    expect(wrapper.get('[data-testid="live-figures"]').text()).toContain('stale');
    expect(wrapper.get('[role="alert"]').text()).toContain('did not answer');
    expect(wrapper.get('[data-testid="figure-Requests"]').text()).toBe('42 /s');
    wrapper.unmount();
  });
});
