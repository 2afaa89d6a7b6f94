import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import { createMemoryHistory } from 'vue-router';
import App from '../App.vue';
import { createConsoleRouter } from '../router/index.ts';
import { SESSION_HINT_KEY } from '../stores/session.ts';
import { THEME_STORAGE_KEY } from '../stores/theme.ts';
import { fakeApi, json, notSignedIn, sessionOf } from '../test/fakeApi.ts';

const TOKEN = 'Vb1sQ8mJ2yTt4nCq0rX7eWz3aKf5uGh6LpD9oN1iS2M';

async function openInvitation() {
  const pinia = createPinia();
  setActivePinia(pinia);
  const router = createConsoleRouter(createMemoryHistory());
  await router.push(`/invitation?token=${TOKEN}`);
  await router.isReady();
  const wrapper = mount(App, { global: { plugins: [pinia, router] }, attachTo: document.body });
  await flushPromises();
  return wrapper;
}

beforeEach(() => {
  localStorage.setItem(THEME_STORAGE_KEY, 'light');
  localStorage.setItem(SESSION_HINT_KEY, '1');
});

afterEach(() => {
  vi.unstubAllGlobals();
  localStorage.clear();
  document.body.innerHTML = '';
  document.body.removeAttribute('n-styled');
});

describe('the invitation page', () => {
  it('lets a signed-in invitee accept with one button, sending the token alone, and says the account moved', async () => {
    const member = sessionOf('developer').member;
    const seen = fakeApi({
      'GET /api/v1/session': () => json(sessionOf('developer')),
      'POST /api/v1/invitations/accept': () => json({ ...member, role: 'admin' }),
    });
    const wrapper = await openInvitation();
    expect(wrapper.get('[data-testid="accept-signed-in"]').text()).toContain(member.email);
    await wrapper.get('[data-testid="accept-invitation"]').trigger('click');
    await flushPromises();
    const sent = seen.find((r) => r.method === 'POST')!;
    expect(await sent.json()).toEqual({ token: TOKEN });
    expect(sent.headers.get('X-CSRF-Token')).toBe('test-csrf-token');
    expect(wrapper.get('[data-testid="joined"]').text()).toMatch(/now an admin of the organisation that invited you/);
    wrapper.unmount();
  });

  it('shows only the new-account form to a visitor who is not signed in', async () => {
    fakeApi({ 'GET /api/v1/session': notSignedIn });
    const wrapper = await openInvitation();
    expect(wrapper.find('[data-testid="accept-signed-in"]').exists()).toBe(false);
    expect(wrapper.text()).toContain('Your name');
    wrapper.unmount();
  });
});
