import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import { createMemoryHistory } from 'vue-router';
import App from '../App.vue';
import { createConsoleRouter } from '../router/index.ts';
import { SESSION_HINT_KEY } from '../stores/session.ts';
import { THEME_STORAGE_KEY } from '../stores/theme.ts';
import { fakeApi, json, notSignedIn, sessionOf } from '../test/fakeApi.ts';

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
  // A browser that was signed in last time asks the server who it is (a first visit does not).
  localStorage.setItem(SESSION_HINT_KEY, '1');
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
  it('shows a visitor who is not signed in only the status page, sign-in and the API reference', async () => {
    fakeApi({ 'GET /api/v1/session': notSignedIn });
    const { wrapper } = await mountAt('/');
    const nav = wrapper.get('nav[aria-label="Console pages"]');
    const labels = nav.findAll('a').map((a) => a.text().replace(/\s+/g, ' ').trim());

    expect(wrapper.get('header').text()).toContain('Gammaline');
    expect(labels).toEqual(['Status', 'Sign in', 'API reference']);
    expect(nav.get('a[href="/docs"]').text()).toBe('API reference');
    expect(nav.get('a[aria-current="page"]').text()).toBe('Status');
    wrapper.unmount();
  });

  it('shows an admin every page, and a developer every page but Admin', async () => {
    fakeApi({ 'GET /api/v1/session': () => json(sessionOf('admin')) });
    const admin = await mountAt('/');
    const adminLabels = admin.wrapper.get('nav[aria-label="Console pages"]').findAll('a').map((a) => a.text().trim());
    expect(adminLabels).toEqual(['Status', 'Try', 'Sweeps', 'Feed lines', 'Cables', 'Keys', 'Usage', 'Admin', 'API reference']);
    expect(admin.wrapper.get('[data-testid="signed-in-as"]').text()).toContain('Demo Admin');
    admin.wrapper.unmount();
    document.body.innerHTML = '';
    document.body.removeAttribute('n-styled');

    fakeApi({ 'GET /api/v1/session': () => json(sessionOf('developer')) });
    const developer = await mountAt('/');
    const developerLabels = developer.wrapper.get('nav[aria-label="Console pages"]').findAll('a').map((a) => a.text().trim());
    expect(developerLabels).not.toContain('Admin');
    expect(developerLabels).toContain('Keys');
    developer.wrapper.unmount();
  });

  it('sends a visitor who is not signed in to sign in first, and remembers where they were going', async () => {
    fakeApi({ 'GET /api/v1/session': notSignedIn });
    const { wrapper, router } = await mountAt('/keys');
    expect(router.currentRoute.value.name).toBe('sign-in');
    expect(router.currentRoute.value.query.next).toBe('/keys');
    expect(wrapper.get('main h1').text()).toBe('Sign in');
    expect(document.title).toBe('Sign in · Gammaline');
    wrapper.unmount();
  });

  it('keeps a developer out of the admin page', async () => {
    fakeApi({ 'GET /api/v1/session': () => json(sessionOf('developer')) });
    const { wrapper, router } = await mountAt('/admin');
    expect(router.currentRoute.value.name).toBe('not-allowed');
    expect(wrapper.get('main').text()).toContain('is for admins');
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
    expect(footer).toContain('high voltages on lines, connectors and matching components');
    expect(footer).toContain('RF fields');
    expect(footer).toContain('tower work');
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
    expect(toggle.text()).toContain('Dark theme: on');
    expect(localStorage.getItem(THEME_STORAGE_KEY)).toBe('dark');
    wrapper.unmount();
  });
});
