import { createRouter, createWebHistory, type RouterHistory } from 'vue-router';
import { useSessionStore } from '../stores/session.ts';
import { decide } from './guards.ts';
import { routes } from './routes.ts';

/** Builds the console router; tests pass a memory history. Needs an active Pinia. */
export function createConsoleRouter(history: RouterHistory = createWebHistory(import.meta.env.BASE_URL)) {
  const router = createRouter({
    history,
    routes,
    scrollBehavior: (_to, _from, saved) => saved ?? { top: 0 },
  });

  router.beforeEach(async (to) => {
    const session = useSessionStore();
    await session.ensureLoaded();
    switch (decide(to.meta.roles, session.role)) {
      case 'enter':
        return true;
      case 'sign-in':
        return { name: 'sign-in', query: { next: to.fullPath } };
      case 'not-allowed':
        return { name: 'not-allowed', query: { page: to.meta.title } };
    }
  });

  router.afterEach((to) => {
    if (typeof document !== 'undefined') {
      document.title = to.meta.title ? `${to.meta.title} · Gammaline` : 'Gammaline console';
    }
  });

  return router;
}
