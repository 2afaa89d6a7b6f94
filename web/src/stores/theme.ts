import { computed, ref } from 'vue';
import { defineStore } from 'pinia';

export type ThemeMode = 'light' | 'dark';

export const THEME_STORAGE_KEY = 'gammaline.theme';

function isThemeMode(value: unknown): value is ThemeMode {
  return value === 'light' || value === 'dark';
}

// Storage access throws when the browser blocks it (privacy modes, sandboxed frames);
// the theme then simply lasts for the page's lifetime.
function readStoredMode(): ThemeMode | null {
  try {
    const stored = globalThis.localStorage?.getItem(THEME_STORAGE_KEY);
    return isThemeMode(stored) ? stored : null;
  } catch {
    return null;
  }
}

function storeMode(mode: ThemeMode): void {
  try {
    globalThis.localStorage?.setItem(THEME_STORAGE_KEY, mode);
  } catch {
    /* see readStoredMode */
  }
}

function systemMode(): ThemeMode {
  const query = globalThis.matchMedia?.('(prefers-color-scheme: dark)');
  return query?.matches ? 'dark' : 'light';
}

/** Light or dark console theme: the person's last choice, else the system preference. */
export const useThemeStore = defineStore('theme', () => {
  const mode = ref<ThemeMode>(readStoredMode() ?? systemMode());
  const isDark = computed(() => mode.value === 'dark');

  function setMode(next: ThemeMode): void {
    mode.value = next;
    storeMode(next);
  }

  function toggle(): void {
    setMode(isDark.value ? 'light' : 'dark');
  }

  return { mode, isDark, setMode, toggle };
});
