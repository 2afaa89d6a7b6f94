import { createRouter, createWebHistory, type RouterHistory } from 'vue-router';
import { canEnter, type HeldRoles } from './guards.ts';
import { routes } from './routes.ts';

export { routes } from './routes.ts';
export type { Role, RouteName } from './routes.ts';

/** Until sign-in exists every visitor holds every role. */
const heldRoles = (): HeldRoles => 'everything';

/** Builds the console router; tests pass a memory history. */
export function createConsoleRouter(history: RouterHistory = createWebHistory(import.meta.env.BASE_URL)) {
  const router = createRouter({
    history,
    routes,
    scrollBehavior: (_to, _from, saved) => saved ?? { top: 0 },
  });

  router.beforeEach((to) => (canEnter(to.meta.roles, heldRoles()) ? true : { name: 'status' }));

  router.afterEach((to) => {
    if (typeof document !== 'undefined') {
      document.title = to.meta.title ? `${to.meta.title} · Gammaline` : 'Gammaline console';
    }
  });

  return router;
}
