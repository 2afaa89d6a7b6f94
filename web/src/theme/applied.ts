import { computed, shallowRef, watch } from 'vue';
import type { GlobalTheme } from 'naive-ui';
import { type ThemeMode, useThemeStore } from '../stores/theme.ts';

const loadedDark = shallowRef<GlobalTheme | null>(null);
let pending: Promise<GlobalTheme> | null = null;

/**
 * Loads Naive UI's dark theme. It carries the dark variant of every Naive component
 * (about 14 kB gzip), so people who stay in the light theme never download it.
 */
export function loadDarkTheme(): Promise<GlobalTheme> {
  pending ??= import('./naiveDark.ts').then(
    ({ darkTheme }) => {
      loadedDark.value = darkTheme;
      return darkTheme;
    },
    (error: unknown) => {
      // Let a later toggle try again, e.g. once the network is back.
      pending = null;
      throw error;
    },
  );
  return pending;
}

/**
 * The theme actually on screen. It follows the theme store, except that dark waits for
 * Naive UI's dark theme to arrive, so the shell and the components never disagree.
 */
export function useAppliedTheme() {
  const theme = useThemeStore();
  watch(
    () => theme.isDark,
    (dark) => {
      if (dark) loadDarkTheme().catch(() => undefined);
    },
    { immediate: true },
  );
  const mode = computed<ThemeMode>(() => (theme.isDark && loadedDark.value ? 'dark' : 'light'));
  const naiveTheme = computed(() => (mode.value === 'dark' ? loadedDark.value : null));
  return { mode, naiveTheme };
}
