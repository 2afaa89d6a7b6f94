import type { ThemeMode } from '../stores/theme.ts';

/** Series colours per theme: teal and copper first, then colours that stay apart from both; twelve, so no two series of one chart share a colour (a chart has at most ten). */
export function seriesColours(mode: ThemeMode): string[] {
  return mode === 'dark'
    ? ['#46B3A8', '#E3A36B', '#8FB8E8', '#C7A8E0', '#9CCB7A', '#E88F8F', '#D9C96A', '#7FD1D1', '#F0B8D8', '#B0B0B0', '#A8D8A0', '#F2D3A0']
    : ['#0E6B68', '#A65A24', '#2D6A8A', '#6C4A94', '#4C7A2E', '#B3362F', '#8A7A1E', '#2C8C8C', '#A0467A', '#5E5E5E', '#1E4F9A', '#C27C0E'];
}

/** Axis, grid and text colours of charts per theme. */
export function chartInk(mode: ThemeMode): { text: string; muted: string; grid: string; background: string } {
  return mode === 'dark'
    ? { text: '#E6EEED', muted: '#9DB3B1', grid: '#24393C', background: 'transparent' }
    : { text: '#1F2A29', muted: '#5C6664', grid: '#E2DDD2', background: 'transparent' };
}

/**
 * What every measurement chart of the console shares: series colours, no animation (an animated line
 * is half-drawn in screenshots and adds nothing to a measurement), the console's font, and the axis
 * style, per theme.
 */
export function chartFrame(mode: ThemeMode) {
  const ink = chartInk(mode);
  return {
    common: { color: seriesColours(mode), animation: false, textStyle: { fontFamily: 'v-sans, system-ui, sans-serif', color: ink.text } },
    axis: { axisLine: { lineStyle: { color: ink.grid } }, axisLabel: { color: ink.muted }, splitLine: { lineStyle: { color: ink.grid } } },
  };
}
