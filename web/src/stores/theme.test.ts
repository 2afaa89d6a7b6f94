import { beforeEach, describe, expect, it, vi } from 'vitest';
import { createPinia, setActivePinia } from 'pinia';
import { THEME_STORAGE_KEY, useThemeStore } from './theme.ts';

function freshStore() {
  setActivePinia(createPinia());
  return useThemeStore();
}

describe('theme store', () => {
  beforeEach(() => {
    localStorage.clear();
    vi.unstubAllGlobals();
  });

  it('starts from the stored choice when there is one', () => {
    localStorage.setItem(THEME_STORAGE_KEY, 'dark');
    expect(freshStore().mode).toBe('dark');
  });

  it('follows the system preference when nothing is stored', () => {
    vi.stubGlobal('matchMedia', (query: string) => ({ matches: query.includes('dark') }));
    expect(freshStore().mode).toBe('dark');
  });

  it('ignores a stored value that is not a theme', () => {
    localStorage.setItem(THEME_STORAGE_KEY, 'purple');
    vi.stubGlobal('matchMedia', () => ({ matches: false }));
    expect(freshStore().mode).toBe('light');
  });

  it('toggles between light and dark and remembers the choice', () => {
    localStorage.setItem(THEME_STORAGE_KEY, 'light');
    const store = freshStore();

    store.toggle();
    expect(store.isDark).toBe(true);
    expect(localStorage.getItem(THEME_STORAGE_KEY)).toBe('dark');

    store.toggle();
    expect(store.mode).toBe('light');
    expect(localStorage.getItem(THEME_STORAGE_KEY)).toBe('light');
  });

  it('gives the remembered choice to the next page load', () => {
    localStorage.setItem(THEME_STORAGE_KEY, 'light');
    freshStore().setMode('dark');
    expect(freshStore().mode).toBe('dark');
  });

  it('keeps working when the browser refuses storage', () => {
    vi.stubGlobal('localStorage', {
      getItem: () => {
        throw new Error('blocked');
      },
      setItem: () => {
        throw new Error('blocked');
      },
    });
    vi.stubGlobal('matchMedia', () => ({ matches: false }));
    const store = freshStore();
    expect(store.mode).toBe('light');
    store.toggle();
    expect(store.mode).toBe('dark');
  });
});
