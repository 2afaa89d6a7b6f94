import { afterEach, describe, expect, it, vi } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises, mount } from '@vue/test-utils';
import { NMessageProvider } from 'naive-ui';
import StatusView from './StatusView.vue';

type Handler = (url: string) => Response | Promise<Response>;

function json(body: unknown, status = 200, contentType = 'application/json'): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': contentType } });
}

function stubServer(handler: Handler) {
  const fetchMock = vi.fn(async (url: string) => handler(url));
  vi.stubGlobal('fetch', fetchMock);
  return fetchMock;
}

// useMessage() needs its provider above the view, as App.vue gives it in the real console.
const Harness = defineComponent(() => () => h(NMessageProvider, null, { default: () => h(StatusView) }));

async function mountStatus() {
  const wrapper = mount(Harness, { attachTo: document.body });
  await flushPromises();
  return wrapper;
}

function stateOf(wrapper: Awaited<ReturnType<typeof mountStatus>>, panel: 'server' | 'database'): string {
  return wrapper.get(`[data-testid="${panel}-panel"] [data-testid="check-state"]`).text();
}

afterEach(() => {
  vi.unstubAllGlobals();
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
