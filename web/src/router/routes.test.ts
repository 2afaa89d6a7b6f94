import { describe, expect, it } from 'vitest';
import { createMemoryHistory, createRouter, type RouteRecordRaw } from 'vue-router';
import { routes } from './routes.ts';

// The pages themselves are not under test; a blank component keeps navigation from loading them.
const Blank = { render: () => null };
const withBlankPages = routes.map(
  (route): RouteRecordRaw => (route.redirect ? route : { path: route.path, name: route.name, meta: route.meta, component: Blank }),
);

describe('console routes', () => {
  it('opens the feed lines page from its earlier address, so bookmarks still work', async () => {
    const router = createRouter({ history: createMemoryHistory(), routes: withBlankPages });
    await router.push('/feed-lines');
    expect(router.currentRoute.value.name).toBe('feedlines');
    expect(router.currentRoute.value.path).toBe('/feedlines');
  });
});
