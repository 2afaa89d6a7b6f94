import { describe, expect, it } from 'vitest';
import { canEnter } from './guards.ts';
import { routes } from './routes.ts';

describe('role guard', () => {
  it('lets anyone open a page that requires no role', () => {
    expect(canEnter([], [])).toBe(true);
  });

  it('lets a holder of one of the required roles in', () => {
    expect(canEnter(['member', 'admin'], ['member'])).toBe(true);
  });

  it('keeps a member out of admin pages', () => {
    expect(canEnter(['admin'], ['member'])).toBe(false);
  });

  it('lets everyone in while sign-in does not exist', () => {
    expect(canEnter(['admin'], 'everything')).toBe(true);
  });

  it('gives every route a title and a role list', () => {
    for (const route of routes) {
      expect(route.meta?.title, String(route.name)).toBeTruthy();
      expect(Array.isArray(route.meta?.roles), String(route.name)).toBe(true);
    }
  });
});
