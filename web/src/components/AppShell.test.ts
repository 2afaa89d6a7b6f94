import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import { createMemoryHistory } from 'vue-router';
import App from '../App.vue';
import { createConsoleRouter } from '../router/index.ts';
import { THEME_STORAGE_KEY } from '../stores/theme.ts';

async function mountAt(path: string) {
  const pinia = createPinia();
  setActivePinia(pinia);
  const router = createConsoleRouter(createMemoryHistory());
  await router.push(path);
  await router.isReady();
  const wrapper = mount(App, { global: { plugins: [pinia, router] }, attachTo: document.body });
  await flushPromises();
  return { wrapper, router };
}

beforeEach(() => {
  localStorage.setItem(THEME_STORAGE_KEY, 'light');
  vi.stubGlobal(
    'fetch',
    vi.fn(async () => {
      throw new TypeError('offline in tests');
    }),
  );
});

afterEach(() => {
  vi.unstubAllGlobals();
  localStorage.clear();
  document.body.innerHTML = '';
  // Naive UI marks the body once its global style is applied; each test mounts a fresh console.
  document.body.removeAttribute('n-styled');
});

describe('console shell', () => {
  it('shows the product name, every planned page and the API reference link', async () => {
    const { wrapper } = await mountAt('/');
    const nav = wrapper.get('nav[aria-label="Console pages"]');
    const labels = nav.findAll('a').map((a) => a.text().replace(/\s+/g, ' ').trim());

    expect(wrapper.get('header').text()).toContain('Gammaline');
    expect(labels).toEqual([
      'Status',
      'Try, coming soon',
      'Sweeps, coming soon',
      'Feed lines, coming soon',
      'Cables, coming soon',
      'Keys, coming soon',
      'Usage, coming soon',
      'Admin, coming soon',
      'API reference',
    ]);
    expect(nav.get('a[href="/docs"]').text()).toBe('API reference');
    expect(nav.get('a[aria-current="page"]').text()).toBe('Status');
    wrapper.unmount();
  });

  it('opens a planned page that says what it will do, and titles the document', async () => {
    const { wrapper } = await mountAt('/sweeps');
    expect(wrapper.get('main h1').text()).toBe('Sweeps');
    expect(wrapper.get('main').text()).toContain('Touchstone');
    expect(document.title).toBe('Sweeps · Gammaline');
    wrapper.unmount();
  });

  it('answers unknown addresses with a page of its own', async () => {
    const { wrapper, router } = await mountAt('/no/such/page');
    expect(router.currentRoute.value.name).toBe('not-found');
    expect(wrapper.get('main h1').text()).toBe('Page not found');
    wrapper.unmount();
  });

  it('carries the safety note in the footer', async () => {
    const { wrapper } = await mountAt('/');
    const footer = wrapper.get('footer').text();
    expect(footer).toContain('high voltages on lines and connectors');
    expect(footer).toContain('RF fields');
    wrapper.unmount();
  });

  it('switches to the dark theme from the header and remembers it', async () => {
    const { wrapper } = await mountAt('/');
    const toggle = wrapper.get('button[aria-pressed]');
    expect(toggle.attributes('aria-pressed')).toBe('false');

    await toggle.trigger('click');
    // The dark theme arrives as its own chunk; wait for it to be applied.
    await vi.waitFor(() => expect(document.documentElement.dataset.theme).toBe('dark'));

    expect(toggle.attributes('aria-pressed')).toBe('true');
    expect(localStorage.getItem(THEME_STORAGE_KEY)).toBe('dark');
    wrapper.unmount();
  });
});
