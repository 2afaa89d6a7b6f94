import type { GlobalThemeOverrides } from 'naive-ui';
import type { ThemeMode } from '../stores/theme.ts';

/**
 * Gammaline's colours: a deep teal for actions and a copper accent taken from the
 * centre conductor of a cable, on warm paper (light) or a teal-black night (dark).
 */
export const brand = {
  teal: '#0E6B68',
  // Dark enough for 4.5:1 text contrast on white and on the paper background.
  copper: '#A65A24',
  copperLight: '#E3A36B',
  paper: '#F6F4EF',
  night: '#0D1A1B',
} as const;

const fontFamily = 'v-sans, system-ui, -apple-system, "Segoe UI", Roboto, sans-serif';
const fontFamilyMono = 'v-mono, ui-monospace, SFMono-Regular, Menlo, Consolas, monospace';

const light: GlobalThemeOverrides = {
  common: {
    fontFamily,
    fontFamilyMono,
    borderRadius: '6px',
    primaryColor: brand.teal,
    primaryColorHover: '#158580',
    primaryColorPressed: '#0A5250',
    primaryColorSuppl: '#158580',
    infoColor: '#2D6A8A',
    infoColorHover: '#3A7FA3',
    infoColorPressed: '#22546E',
    infoColorSuppl: '#3A7FA3',
    successColor: '#2E7D4F',
    successColorHover: '#38925E',
    successColorPressed: '#23623D',
    successColorSuppl: '#38925E',
    warningColor: brand.copper,
    warningColorHover: '#BA6A2E',
    warningColorPressed: '#84461B',
    warningColorSuppl: '#BA6A2E',
    errorColor: '#B3362F',
    errorColorHover: '#C84A42',
    errorColorPressed: '#8E2923',
    errorColorSuppl: '#C84A42',
    bodyColor: brand.paper,
    cardColor: '#FFFFFF',
    modalColor: '#FFFFFF',
    popoverColor: '#FFFFFF',
    // Help lines under fields and other quiet text: the library's grey is 4.2:1 on white.
    textColor3: '#5C6664',
  },
  // Tags sit on a 12 % tint of their own colour, which takes the action colours under 4.5:1;
  // their words use the pressed shade instead.
  // "Nothing here yet" lines: the library draws them in its disabled grey (1.8:1).
  Empty: { textColor: '#5C6664' },
  Tag: {
    textColorPrimary: '#0A5250',
    textColorInfo: '#22546E',
    textColorSuccess: '#23623D',
    textColorWarning: '#84461B',
    textColorError: '#8E2923',
  },
};

const dark: GlobalThemeOverrides = {
  common: {
    fontFamily,
    fontFamilyMono,
    borderRadius: '6px',
    primaryColor: '#46B3A8',
    primaryColorHover: '#62C4BA',
    primaryColorPressed: '#2F9488',
    primaryColorSuppl: '#62C4BA',
    infoColor: '#6AAFD3',
    infoColorHover: '#86C1E0',
    infoColorPressed: '#4D93B8',
    infoColorSuppl: '#86C1E0',
    successColor: '#5DBB84',
    successColorHover: '#78CB9A',
    successColorPressed: '#44A06B',
    successColorSuppl: '#78CB9A',
    warningColor: brand.copperLight,
    warningColorHover: '#EDB887',
    warningColorPressed: '#C98648',
    warningColorSuppl: '#EDB887',
    errorColor: '#E57368',
    errorColorHover: '#EE8F86',
    errorColorPressed: '#C9564B',
    errorColorSuppl: '#EE8F86',
    bodyColor: brand.night,
    cardColor: '#132426',
    modalColor: '#172B2E',
    popoverColor: '#1A3033',
    // The library's quiet text (38–52 % white) is under 4.5:1 on the night cards.
    textColor3: 'rgba(255, 255, 255, 0.66)',
  },
  // As in the light theme, tags use the hover shade, which keeps 4.5:1 on their tint in dialogs too.
  Empty: { textColor: 'rgba(255, 255, 255, 0.66)' },
  Tag: {
    textColorPrimary: '#62C4BA',
    textColorInfo: '#86C1E0',
    textColorSuccess: '#78CB9A',
    textColorWarning: '#EDB887',
    textColorError: '#EE8F86',
  },
};

export function themeOverridesFor(mode: ThemeMode): GlobalThemeOverrides {
  return mode === 'dark' ? dark : light;
}

/** Colours the shell's own CSS uses (header rule, muted text, the focus ring), per theme. */
export function shellColoursFor(mode: ThemeMode): Record<string, string> {
  return mode === 'dark'
    ? {
        '--gl-accent': brand.copperLight,
        '--gl-surface': '#132426',
        '--gl-border': '#24393C',
        '--gl-muted': '#9DB3B1',
        '--gl-current': 'rgba(70, 179, 168, 0.16)',
        '--gl-focus': brand.copperLight,
      }
    : {
        '--gl-accent': brand.copper,
        '--gl-surface': '#FFFFFF',
        '--gl-border': '#E2DDD2',
        '--gl-muted': '#5C6664',
        '--gl-current': 'rgba(14, 107, 104, 0.10)',
        '--gl-focus': brand.copper,
      };
}
