/**
 * What every chart shares: the serialisable options of Kolmo's own plugin (drawn by
 * ../render.ts), the inputs, the size, the palette and line styles (design: ../chart.ts).
 */
import type { ChartType } from 'chart.js';
import type { Curves, Jumps } from '../../core/types.js';

// ---------------------------------------------------------------------------------------------
// Plugin options (serialisable) read by the renderer's plugin.

export type MarkerKind = 'spot' | 'strike' | 'breakeven' | 'zero' | 'mean';

export interface ChartMarker {
  /** position on the x axis (data units) */
  x: number;
  /** short label drawn above the plot area ('' for none) */
  label: string;
  kind: MarkerKind;
  /** colour override (compare chart: the check's colour) */
  color?: string;
}

export interface ChartStem {
  /** position on the x axis */
  x: number;
  /** height on axis `axis` (a probability) */
  y: number;
  axis: string;
  color: string;
  label: string;
  /** several checks' stems at one P&L (equal atoms): drawn at one place, not side by side */
  together?: boolean;
}

export interface KolmoPluginOptions {
  /** vertical marker lines, labelled above the plot area */
  markers: ChartMarker[];
  /** x-intervals shaded across the plot height (the profit region) */
  bands: { from: number; to: number }[];
  bandColor: string;
  /** horizontal reference lines (the P&L zero line; a target and a stop, labelled at the right) */
  hlines: { axis: string; y: number; color: string; dash: number[]; width: number; label?: string }[];
  /** point masses of a distribution, drawn as stems with a dot */
  stems: ChartStem[];
  /** height in pixels reserved above the plot area for marker labels */
  labelStrip: number;
  /** set when there is nothing worth drawing: the reason, for a text-only answer */
  empty?: string;
  /** the size the configuration was laid out for (the renderer's default) */
  size: ChartSize;
}

declare module 'chart.js' {
  interface PluginOptionsByType<TType extends ChartType> {
    kolmo?: KolmoPluginOptions;
  }
}

// ---------------------------------------------------------------------------------------------
// Inputs.

/** What the density chart reads from a check result. Plain data: it may cross a thread boundary. */
export interface ChartInput {
  /** σ_m of the market walk drawn as the second density (DESIGN.md §4) */
  marketVol?: number;
  /** the position in a few words, e.g. "+2/−2 call spread 105/115" (or give it as `title`) */
  position?: string;
  /** accepted in place of `position` (the same words), for callers that name it so */
  title?: string;
  /** the horizon, ISO date */
  horizon: string;
  /** the view: expected total return and volatility (decimals), jumps if any */
  view: { drift: number; vol: number; jumps?: Jumps; driftSe?: number };
  /** today's spot */
  spot: number;
  /** strikes of the option legs (any order; duplicates allowed) */
  strikes: number[];
  /** spots at the horizon where the P&L crosses zero */
  breakevens: number[];
  /** chance of profit under the view, 0..1 */
  probProfit: number;
  /** expected P&L under the view (money) */
  expectedPnl: number;
  /** the engine's sampled curves */
  curves: Curves;
  /** the underlying's currency, e.g. "USD" (optional; used in axis titles and money) */
  currency?: string;
  /** a target and a stop (money P&L), drawn as levels on the P&L axis */
  exits?: { target: number | null; stop: number | null };
}

/** One check of a comparison. */
export interface CompareChartItem {
  label: string;
  pnlDensity: Curves['pnlDensity'];
  expectedPnl: number;
}

export interface ChartSize {
  width: number;
  height: number;
}

export const DEFAULT_SIZE: ChartSize = { width: 900, height: 500 };

/** Okabe & Ito (2008), "Color Universal Design": the eight colours, black excepted. */
export const OKABE_ITO = {
  orange: '#E69F00',
  skyBlue: '#56B4E9',
  bluishGreen: '#009E73',
  yellow: '#F0E442',
  blue: '#0072B2',
  vermillion: '#D55E00',
  reddishPurple: '#CC79A7',
  black: '#000000',
} as const;

export const INK = '#1f1f1f';
export const GRID = '#e4e4e4';
export const MUTED = '#555555';
export const VIEW_LINE = OKABE_ITO.blue;
export const VIEW_FILL = 'rgba(0,114,178,0.22)';
export const RN_LINE = OKABE_ITO.vermillion;
export const PNL_LINE = '#111111';
export const PROFIT_BAND = 'rgba(0,158,115,0.14)';
/** exit levels on the P&L axis: a target in the profit band's green, a stop in orange, both dashed */
export const TARGET_LINE = OKABE_ITO.bluishGreen;
export const STOP_LINE = OKABE_ITO.orange;

/** Colour and dash of each check in a comparison (up to six). */
export const COMPARE_STYLES: { color: string; dash: number[] }[] = [
  { color: OKABE_ITO.blue, dash: [] },
  { color: OKABE_ITO.vermillion, dash: [9, 4] },
  { color: OKABE_ITO.bluishGreen, dash: [2, 3] },
  { color: OKABE_ITO.reddishPurple, dash: [12, 3, 2, 3] },
  { color: OKABE_ITO.orange, dash: [5, 5] },
  { color: OKABE_ITO.skyBlue, dash: [14, 4, 2, 4, 2, 4] },
];
export const MAX_COMPARE = COMPARE_STYLES.length;

/** Most points per plotted series; more are thinned (never interpolated) to keep rendering fast. */
export const MAX_POINTS = 400;

