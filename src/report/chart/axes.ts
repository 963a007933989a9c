/** Pieces both charts build from: axes, base options, the plugin's empty options, the profit bands. */
import { isNum } from '../format.js';
import { tickFormat } from './scale.js';
import { GRID, INK, MUTED, PROFIT_BAND, type ChartSize, type KolmoPluginOptions } from './style.js';

/** Spot intervals where the sampled P&L is above zero; crossings snap to a nearby breakeven. */
export function profitBands(
  spot: readonly number[],
  pnl: readonly number[],
  breakevens: readonly number[],
): { from: number; to: number }[] {
  const n = Math.min(spot.length, pnl.length);
  if (n < 2) return [];
  const scale = Math.max(...pnl.slice(0, n).map(Math.abs));
  if (!(scale > 0)) return [];
  const tol = scale * 1e-9;
  const pos = (i: number) => pnl[i] > tol;
  const crossing = (i: number): number => {
    // zero between samples i and i+1 (linear), snapped to a breakeven inside that interval
    const a = spot[i];
    const b = spot[i + 1];
    const be = breakevens.find((v) => isNum(v) && v >= a && v <= b);
    if (be !== undefined) return be;
    const pa = pnl[i];
    const pb = pnl[i + 1];
    return pa === pb ? a : a + ((0 - pa) * (b - a)) / (pb - pa);
  };
  const bands: { from: number; to: number }[] = [];
  let start: number | null = pos(0) ? spot[0] : null;
  for (let i = 0; i < n - 1; i++) {
    if (start === null && !pos(i) && pos(i + 1)) start = crossing(i);
    else if (start !== null && pos(i) && !pos(i + 1)) {
      bands.push({ from: start, to: crossing(i) });
      start = null;
    }
  }
  if (start !== null) bands.push({ from: start, to: spot[n - 1] });
  return bands.filter((b) => b.to > b.from);
}

export const AXIS_TITLE_FONT = { size: 13 };
export const TICK_FONT = { size: 13 };

export function baseOptions() {
  return {
    responsive: false,
    animation: false as const,
    devicePixelRatio: 1,
    locale: 'en-US',
    color: INK,
    layout: { padding: { left: 8, right: 12, top: 6, bottom: 4 } },
  };
}

export function emptyPluginOptions(size: ChartSize): KolmoPluginOptions {
  return { markers: [], bands: [], bandColor: PROFIT_BAND, hlines: [], stems: [], labelStrip: 0, size: { width: size.width, height: size.height } };
}

/** The left axis of a density: unlabelled ticks (only shapes and areas matter), headroom above the peak. */
export function densityAxis(dMax: number, title: string) {
  return {
    type: 'linear' as const,
    position: 'left' as const,
    min: 0,
    max: dMax > 0 ? dMax * 1.12 : 1,
    ticks: { display: false },
    grid: { display: false },
    border: { display: true, color: '#bbbbbb' },
    title: { display: true, text: title, font: AXIS_TITLE_FONT, color: MUTED },
  };
}

/** The title, subtitle, legend and Kolmo's plugin options of a chart. */
export function chartPlugins(title: string | string[], subtitle: string, subtitleSize: number, plugin: KolmoPluginOptions) {
  return {
    title: { display: true, text: title, font: { size: 16, weight: 'bold' }, color: INK, padding: { top: 4, bottom: 2 } },
    subtitle: { display: true, text: subtitle, font: { size: subtitleSize }, color: MUTED, padding: { top: 0, bottom: plugin.labelStrip } },
    legend: {
      display: true,
      position: 'bottom',
      labels: { font: { size: 13 }, color: INK, boxWidth: 28, boxHeight: 11, padding: 14 },
    },
    tooltip: { enabled: false },
    kolmo: plugin,
  };
}

/** A value axis with ticks at whole multiples of the range's step, a grid and its title. */
export function valueAxis(r: { min: number; max: number; step: number }, title: string, opts: { position?: 'right'; includeBounds?: false } = {}) {
  return {
    type: 'linear' as const,
    ...(opts.position ? { position: opts.position } : {}),
    min: r.min,
    max: r.max,
    ticks: { stepSize: r.step, ...(opts.includeBounds === false ? { includeBounds: false } : {}), autoSkip: false, font: TICK_FONT, color: INK, format: tickFormat(r.step) },
    grid: { color: GRID },
    title: { display: true, text: title, font: AXIS_TITLE_FONT, color: INK },
  };
}
