import { computed, ref, shallowRef } from 'vue';
import { defineStore } from 'pinia';
import { api, asProblem, setCsrfToken, unwrap, unwrapEmpty, type Schemas } from '../api/client.ts';
import type { Role } from '../router/routes.ts';

export type SessionView = Schemas['Session'];

/**
 * What this browser knew of its session when the console last looked: '1' signed in, '0' signed
 * out, 'ask' unknown (the server could not answer). A session only begins through this console's
 * sign-in, which writes '1', so a browser with no hint at all (a first visit) has none, and the
 * console does not ask the server: its 401 would show as a failed request in the browser's console.
 * With storage blocked (some privacy modes) it always asks.
 */
export const SESSION_HINT_KEY = 'gammaline.signedIn';
export const ASK_HINT = 'ask';

function readHint(): '1' | '0' | 'ask' | 'none' {
  try {
    const v = globalThis.localStorage?.getItem(SESSION_HINT_KEY);
    if (v === '1' || v === '0' || v === ASK_HINT) return v;
    return globalThis.localStorage ? 'none' : 'ask';
  } catch {
    return 'ask';
  }
}

/** `null` records "unknown": the next page load asks the server. */
function writeHint(signedIn: boolean | null): void {
  try {
    globalThis.localStorage?.setItem(SESSION_HINT_KEY, signedIn === null ? ASK_HINT : signedIn ? '1' : '0');
  } catch {
    /* see readHint */
  }
}

/** The signed-in member, or nobody. Loaded once per page load, then kept in step by sign-in and sign-out. */
export const useSessionStore = defineStore('session', () => {
  const current = shallowRef<SessionView | null>(null);
  const loaded = ref(false);
  let pending: Promise<void> | null = null;

  const member = computed(() => current.value?.member ?? null);
  const organisation = computed(() => current.value?.organisation ?? null);
  const role = computed<Role | null>(() => current.value?.member.role ?? null);
  const isAdmin = computed(() => role.value === 'admin');
  const signedIn = computed(() => current.value !== null);

  // The hint records only what the server said: signed in, a 401, or a sign-out it confirmed. An
  // outage or a network error says nothing about the session, so it leaves the next load to ask.
  function set(view: SessionView | null, hint: boolean | null = view !== null): void {
    current.value = view;
    writeHint(hint);
    setCsrfToken(view?.csrfToken ?? null);
    loaded.value = true;
  }

  /** Asks the server who we are; a 401 simply means nobody is signed in. */
  function ensureLoaded(): Promise<void> {
    if (loaded.value) return Promise.resolve();
    const hint = readHint();
    if (hint === '0' || hint === 'none') {
      // Nobody signed in here since the server last said so (or ever): a session can only begin
      // through this console's sign-in, which sets the hint again.
      set(null);
      return Promise.resolve();
    }
    pending ??= unwrap(api.GET('/api/v1/session'))
      .then(
        (view) => set(view),
        (error: unknown) => {
          // Signed out (401) or offline: the console still opens, on the pages that need nobody;
          // the Status page tells an unreachable server apart.
          set(null, asProblem(error).status === 401 ? false : null);
        },
      )
      .finally(() => {
        pending = null;
      });
    return pending;
  }

  async function signIn(email: string, password: string): Promise<SessionView> {
    const view = await unwrap(api.POST('/api/v1/session', { body: { email, password } }));
    set(view);
    return view;
  }

  async function signOut(): Promise<void> {
    let confirmed = false;
    try {
      await unwrapEmpty(api.DELETE('/api/v1/session'));
      confirmed = true;
    } finally {
      set(null, confirmed ? false : null);
    }
  }

  /** The server said 401 on a session call: the session ended elsewhere (expiry, reset, disabled). */
  function forget(): void {
    set(null);
  }

  return { current, loaded, member, organisation, role, isAdmin, signedIn, ensureLoaded, signIn, signOut, forget };
});
