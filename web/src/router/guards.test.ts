import { describe, expect, it } from 'vitest';
import { canEnter, decide, safeNext } from './guards.ts';
import { routes } from './routes.ts';

describe('role guard', () => {
  it('lets anyone open a page that requires no role', () => {
    expect(canEnter([], [])).toBe(true);
    expect(decide([], null)).toBe('enter');
  });

  it('lets a holder of one of the required roles in', () => {
    expect(canEnter(['developer', 'admin'], ['developer'])).toBe(true);
    expect(decide(['developer', 'admin'], 'admin')).toBe('enter');
  });

  it('keeps a developer out of admin pages', () => {
    expect(canEnter(['admin'], ['developer'])).toBe(false);
    expect(decide(['admin'], 'developer')).toBe('not-allowed');
  });

  it('sends a visitor who is not signed in to sign in first', () => {
    expect(decide(['developer', 'admin'], null)).toBe('sign-in');
  });

  it('only follows a next page inside the console', () => {
    expect(safeNext('/keys?x=1')).toBe('/keys?x=1');
    expect(safeNext('//elsewhere.example/')).toBeNull();
    expect(safeNext('https://elsewhere.example/')).toBeNull();
    expect(safeNext('/sign-in')).toBeNull();
    expect(safeNext(undefined)).toBeNull();
  });

  it('gives every route a title and a role list', () => {
    for (const route of routes) {
      expect(route.meta?.title, String(route.name)).toBeTruthy();
      expect(Array.isArray(route.meta?.roles), String(route.name)).toBe(true);
    }
  });
});
