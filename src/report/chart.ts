/**
 * Result → chart configuration (pure). The chart reads a check result and never recomputes
 * finance: every density and P&L value drawn is one the engine sampled (docs/design.md §6).
 *
 * Kolmo's chart design (its own, not any trading program's look):
 *  - white background, about 900×500, DejaVu Sans chosen by the renderer (src/report/render.ts);
 *  - colours from the Okabe–Ito palette, which stays distinguishable for the common forms of
 *    colour blindness, and a line style as a second cue:
 *      view density          blue #0072B2, solid, filled;
 *      risk-neutral density  vermillion #D55E00, dashed, unfilled;
 *      P&L at the horizon    near-black, solid, thick, on the right-hand axis, with its zero line;
 *      profit region         pale bluish green #009E73 band over the spots where P&L > 0;
 *      markers               spot (solid grey), strikes (dotted grey), breakevens (dashed green),
 *                            labelled in a strip above the plot so no label covers a curve.
 *  - the configuration is a plain JSON-serialisable object (no functions), so it can be built in
 *    one thread and rendered in another; what chart.js cannot say natively (marker lines with
 *    labels, the profit band, atoms of a P&L distribution) goes to Kolmo's own small plugin under
 *    `options.plugins.kolmo` (drawn by src/report/render.ts).
 */
import type { ChartConfiguration, ChartDataset, ChartType } from 'chart.js';
import type { CheckCore, CheckInput, Curves, Jumps } from '../core/types.js';

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

const INK = '#1f1f1f';
const GRID = '#e4e4e4';
const MUTED = '#555555';
const VIEW_LINE = OKABE_ITO.blue;
const VIEW_FILL = 'rgba(0,114,178,0.22)';
const RN_LINE = OKABE_ITO.vermillion;
const PNL_LINE = '#111111';
const PROFIT_BAND = 'rgba(0,158,115,0.14)';
/** exit levels on the P&L axis: a target in the profit band's green, a stop in orange, both dashed */
const TARGET_LINE = OKABE_ITO.bluishGreen;
const STOP_LINE = OKABE_ITO.orange;

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

// ---------------------------------------------------------------------------------------------
// Small numeric helpers (display only: ranges, ticks, thinning).

const isNum = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

/** A "nice" step (1, 2, 2.5 or 5 × 10^k) near `raw`. */
export function niceStep(raw: number): number {
  if (!(raw > 0) || !Number.isFinite(raw)) return 1;
  const exp = Math.floor(Math.log10(raw));
  const base = Math.pow(10, exp);
  const f = raw / base;
  const m = f <= 1 ? 1 : f <= 2 ? 2 : f <= 2.5 ? 2.5 : f <= 5 ? 5 : 10;
  return m * base;
}

/**
 * Rounded axis bounds and step holding [lo, hi] with at most `maxSpaces` steps
 * (min and max are whole multiples of the step).
 */
export function niceRange(lo: number, hi: number, maxSpaces = 8): { min: number; max: number; step: number } {
  if (!isNum(lo) || !isNum(hi)) return { min: 0, max: 1, step: 0.25 };
  if (hi < lo) [lo, hi] = [hi, lo];
  if (hi - lo <= Math.max(Math.abs(lo), Math.abs(hi)) * 1e-9) {
    const pad = Math.max(Math.abs(lo) * 0.05, 1);
    lo -= pad;
    hi += pad;
  }
  let step = niceStep((hi - lo) / maxSpaces);
  for (let k = 0; k < 8; k++) {
    const min = Math.floor(lo / step + 1e-9) * step;
    const max = Math.ceil(hi / step - 1e-9) * step;
    if (Math.round((max - min) / step) <= maxSpaces) return { min: roundTo(min, step), max: roundTo(max, step), step };
    step = niceStep(step * 1.01);
  }
  const min = Math.floor(lo / step) * step;
  return { min: roundTo(min, step), max: roundTo(Math.ceil(hi / step) * step, step), step };
}

function decimalsOf(step: number): number {
  if (!(step > 0)) return 0;
  for (let d = 0; d <= 15; d++) {
    const v = step * 10 ** d;
    if (Math.round(v) > 0 && Math.abs(Math.round(v) - v) < 1e-9 * v) return d;
  }
  return 15;
}

/** Intl options for tick labels: exactly as many decimals as the step needs, grouped thousands. */
function tickFormat(step: number): Intl.NumberFormatOptions {
  const d = Math.min(decimalsOf(step), 15);
  return { minimumFractionDigits: d, maximumFractionDigits: d };
}

function roundTo(v: number, step: number): number {
  const f = 10 ** decimalsOf(step);
  const r = Math.round(v * f) / f;
  return r === 0 ? 0 : r; // no −0
}

/** Trapezoid area under (x, y). */
export function trapezoid(x: readonly number[], y: readonly number[]): number {
  let s = 0;
  for (let i = 1; i < Math.min(x.length, y.length); i++) s += 0.5 * (y[i] + y[i - 1]) * (x[i] - x[i - 1]);
  return s;
}

/**
 * Lower quantiles inf{x : F(x) ≥ p} of a sampled density (piecewise linear between samples)
 * plus point masses, the whole normalised to total mass 1. Display use only: it places the x
 * range, it is never reported as a figure.
 */
export function sampledQuantiles(
  x: readonly number[],
  density: readonly number[],
  ps: readonly number[],
  atoms: readonly { x: number; prob: number }[] = [],
): number[] {
  const n = Math.min(x.length, density.length);
  // Events: each grid interval's mass (placed uniformly over it) and each atom.
  const cum: number[] = [0];
  for (let i = 1; i < n; i++) cum.push(cum[i - 1] + Math.max(0, 0.5 * (density[i] + density[i - 1]) * (x[i] - x[i - 1])));
  const atomsSorted = atoms.filter((a) => isNum(a.x) && isNum(a.prob) && a.prob > 0).sort((a, b) => a.x - b.x);
  const total = (n > 0 ? cum[n - 1] : 0) + atomsSorted.reduce((s, a) => s + a.prob, 0);
  if (!(total > 0)) return ps.map(() => NaN);
  // F at a point: continuous mass below it plus atoms at or below it.
  const contBelow = (v: number): number => {
    if (n === 0 || v <= x[0]) return 0;
    if (v >= x[n - 1]) return cum[n - 1];
    let lo = 0;
    let hi = n - 1;
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (x[mid] <= v) lo = mid;
      else hi = mid;
    }
    const w = x[hi] - x[lo];
    const t = w > 0 ? (v - x[lo]) / w : 1;
    return cum[lo] + t * (cum[hi] - cum[lo]);
  };
  const F = (v: number): number => {
    let s = contBelow(v);
    for (const a of atomsSorted) if (a.x <= v) s += a.prob;
    return s / total;
  };
  // Candidate points: grid points and atoms; bisect inside the bracketing interval.
  const pts = [...x.slice(0, n), ...atomsSorted.map((a) => a.x)].sort((a, b) => a - b);
  return ps.map((p) => {
    for (let j = 0; j < pts.length; j++) {
      if (F(pts[j]) >= p - 1e-12) {
        if (j === 0) return pts[0];
        let lo = pts[j - 1];
        let hi = pts[j];
        for (let k = 0; k < 50 && hi - lo > 1e-12 * Math.max(1, Math.abs(hi)); k++) {
          const mid = 0.5 * (lo + hi);
          if (F(mid) >= p - 1e-12) hi = mid;
          else lo = mid;
        }
        return hi;
      }
    }
    return pts[pts.length - 1];
  });
}

/**
 * Indices to keep so that at most ~`max` points remain: every k-th, the first and last, the
 * samples either side of each `keepNear` value, and each local extreme and kink of `ys`.
 */
export function thinIndices(xs: readonly number[], ys: readonly number[][], max: number, keepNear: readonly number[]): number[] {
  const n = xs.length;
  if (n <= max) return Array.from({ length: n }, (_, i) => i);
  const keep = new Set<number>([0, n - 1]);
  const k = Math.ceil(n / max);
  for (let i = 0; i < n; i += k) keep.add(i);
  for (const v of keepNear) {
    if (!isNum(v)) continue;
    let lo = 0;
    let hi = n - 1;
    if (v <= xs[0] || v >= xs[n - 1]) continue;
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (xs[mid] <= v) lo = mid;
      else hi = mid;
    }
    keep.add(lo);
    keep.add(hi);
  }
  for (const y of ys) {
    // Turning points and changes of slope larger than the curve's typical bend.
    for (let i = 1; i < n - 1; i++) {
      const d1 = y[i] - y[i - 1];
      const d2 = y[i + 1] - y[i];
      if ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) keep.add(i);
    }
  }
  return [...keep].sort((a, b) => a - b);
}

// ---------------------------------------------------------------------------------------------
// Formatting.

const MINUS = '−';

function fmtNumber(v: number, decimals: number): string {
  const s = Math.abs(v).toLocaleString('en-US', { minimumFractionDigits: decimals, maximumFractionDigits: decimals });
  return (v < 0 && s.replace(/[0.,]/g, '') !== '' ? MINUS : '') + s;
}

/** Price-like number: up to 2 decimals, trailing zeros dropped. */
export function fmtPrice(v: number): string {
  if (!isNum(v)) return '–';
  const d = Math.abs(v) >= 1000 ? 0 : 2;
  const s = fmtNumber(v, d);
  return d > 0 ? s.replace(/\.?0+$/, '') : s;
}

/** Money with an explicit sign: "+1,234", "−56.20", with the currency code after it if known. */
export function fmtMoney(v: number, currency?: string): string {
  if (!isNum(v)) return '–';
  const d = Math.abs(v) >= 100 ? 0 : 2;
  const body = fmtNumber(v, d);
  const signed = v > 0 && body.replace(/[0.,]/g, '') !== '' ? `+${body}` : body;
  return currency ? `${signed} ${currency}` : signed;
}

/** Percentage of a decimal: 0.09 → "9%", 0.265 → "26.5%", −0.05 → "−5%". */
export function fmtPct(v: number): string {
  if (!isNum(v)) return '–';
  const p = v * 100;
  const d = Math.abs(p - Math.round(p)) < 1e-9 ? 0 : Math.abs(p * 10 - Math.round(p * 10)) < 1e-6 ? 1 : 2;
  return `${fmtNumber(p, d)}%`;
}

/** A chance as a percentage to 0.1%, never rounded to a certainty it is not: "< 0.1%", "> 99.9%". */
export function fmtChance(p: number): string {
  if (!isNum(p)) return '–';
  if (p > 0 && p < 0.0005) return '< 0.1%';
  if (p < 1 && p >= 0.9995) return '> 99.9%';
  return fmtPct(Math.round(Math.min(1, Math.max(0, p)) * 1000) / 1000);
}

/** "drift 9%, vol 26%, jumps 0.5/yr mean −5% sd 10%" */
export function describeView(view: ChartInput['view']): string {
  const se = isNum(view.driftSe) && view.driftSe > 0 ? ` ± ${fmtPct(view.driftSe)}` : '';
  let s = `drift ${fmtPct(view.drift)}${se}, vol ${fmtPct(view.vol)}`;
  const j = view.jumps;
  if (j && isNum(j.intensity) && j.intensity > 0) {
    s += `, jumps ${fmtPrice(j.intensity)}/yr mean ${fmtPct(j.mean)} sd ${fmtPct(j.sd)}`;
  }
  return s;
}

// ---------------------------------------------------------------------------------------------
// The density chart of one check.

interface CleanCurves {
  spot: number[];
  dv: number[];
  drn: number[];
  pnl: number[];
}

function cleanCurves(c: Curves | undefined): CleanCurves {
  const out: CleanCurves = { spot: [], dv: [], drn: [], pnl: [] };
  if (!c || !Array.isArray(c.spot)) return out;
  const n = Math.min(c.spot.length, c.densityView?.length ?? 0, c.densityRiskNeutral?.length ?? 0, c.pnl?.length ?? 0);
  let last = -Infinity;
  for (let i = 0; i < n; i++) {
    const s = c.spot[i];
    const a = c.densityView[i];
    const b = c.densityRiskNeutral[i];
    const p = c.pnl[i];
    if (!isNum(s) || !isNum(a) || !isNum(b) || !isNum(p) || s <= last) continue;
    last = s;
    out.spot.push(s);
    out.dv.push(Math.max(0, a));
    out.drn.push(Math.max(0, b));
    out.pnl.push(p);
  }
  return out;
}

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

const AXIS_TITLE_FONT = { size: 13 };
const TICK_FONT = { size: 13 };

function baseOptions() {
  return {
    responsive: false,
    animation: false as const,
    devicePixelRatio: 1,
    locale: 'en-US',
    color: INK,
    layout: { padding: { left: 8, right: 12, top: 6, bottom: 4 } },
  };
}

function emptyPluginOptions(size: ChartSize): KolmoPluginOptions {
  return { markers: [], bands: [], bandColor: PROFIT_BAND, hlines: [], stems: [], labelStrip: 0, size: { width: size.width, height: size.height } };
}

/** The left axis of a density: unlabelled ticks (only shapes and areas matter), headroom above the peak. */
function densityAxis(dMax: number, title: string) {
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

/**
 * The density chart of one check: the view's and the risk-neutral density of the spot at the
 * horizon (left axis), the P&L at the horizon (right axis, money) with its zero line, the profit
 * region shaded, markers at spot, strikes and breakevens. Pure; JSON-serialisable result.
 */
export function checkChartConfig(input: ChartInput, size: ChartSize = DEFAULT_SIZE): ChartConfiguration<'line', { x: number; y: number }[]> {
  const cur = input.currency && /^[A-Za-z]{2,5}$/.test(input.currency) ? input.currency.toUpperCase() : undefined;
  const c = cleanCurves(input.curves);
  const spot = isNum(input.spot) ? input.spot : NaN;
  const strikes = [...new Set((input.strikes ?? []).filter(isNum))].sort((a, b) => a - b);
  const breakevens = [...new Set((input.breakevens ?? []).filter(isNum))].sort((a, b) => a - b);

  const areaV = trapezoid(c.spot, c.dv);
  const areaR = trapezoid(c.spot, c.drn);
  let empty: string | undefined;
  if (c.spot.length < 2) empty = 'no chart: the result carries no sampled curves';
  else if (!(areaV > 0) && !(areaR > 0)) {
    empty = 'no chart: the spot at the horizon has no spread to draw (a horizon of today or a zero volatility)';
  } else if (c.pnl.every((v) => v === 0)) {
    empty = 'no chart: the position has no exposure (its legs cancel; P&L is zero at every spot)';
  }

  // x range: 0.5%–99.5% quantiles of both densities, today's spot, strikes and breakevens.
  const want: number[] = [];
  if (!empty) {
    if (areaV > 0) want.push(...sampledQuantiles(c.spot, c.dv, [0.005, 0.995]));
    if (areaR > 0) want.push(...sampledQuantiles(c.spot, c.drn, [0.005, 0.995]));
  }
  want.push(...strikes, ...breakevens);
  if (isNum(spot)) want.push(spot);
  const finiteWant = want.filter(isNum);
  let lo = finiteWant.length ? Math.min(...finiteWant) : 0;
  let hi = finiteWant.length ? Math.max(...finiteWant) : 1;
  const pad = (hi - lo) * 0.04;
  lo -= pad;
  hi += pad;
  if (lo < 0 && Math.min(...finiteWant, Infinity) >= 0) lo = 0; // spot never goes below zero
  const xr = niceRange(lo, hi, 10);
  // The axis ends where the sampled curves end when they already hold everything needed, so
  // the curves reach both edges; ticks stay at whole multiples of the step.
  let xMin = xr.min;
  let xMax = xr.max;
  if (!empty && finiteWant.length) {
    const g0 = c.spot[0];
    const g1 = c.spot[c.spot.length - 1];
    if (g0 > xMin && g0 <= Math.min(...finiteWant)) xMin = g0;
    if (g1 < xMax && g1 >= Math.max(...finiteWant)) xMax = g1;
  }

  // Keep the samples inside the range (and one either side so lines reach the edges).
  let i0 = 0;
  let i1 = c.spot.length - 1;
  while (i0 < i1 && c.spot[i0 + 1] <= xMin) i0++;
  while (i1 > i0 && c.spot[i1 - 1] >= xMax) i1--;
  const sx = c.spot.slice(i0, i1 + 1);
  const sv = c.dv.slice(i0, i1 + 1);
  const sr = c.drn.slice(i0, i1 + 1);
  const sp = c.pnl.slice(i0, i1 + 1);
  const keep = empty ? [] : thinIndices(sx, [sp], MAX_POINTS, [...strikes, ...breakevens, spot]);
  const pts = (ys: number[]) => keep.map((i) => ({ x: sx[i], y: ys[i] }));

  // Axes: densities from zero with headroom; P&L nicely rounded, always holding zero.
  const inRange = keep.filter((i) => sx[i] >= xMin && sx[i] <= xMax);
  const dMax = Math.max(0, ...inRange.map((i) => Math.max(sv[i], sr[i])));
  const pVals = inRange.map((i) => sp[i]);
  const levels = [input.exits?.target, input.exits?.stop].filter((v): v is number => isNum(v));
  const pLo = Math.min(0, ...pVals, ...levels);
  const pHi = Math.max(0, ...pVals, ...levels);
  const allZero = pVals.length > 0 && pVals.every((v) => v === 0);
  const span = pHi - pLo;
  const pr = span > 0 ? niceRange(pLo - span * 0.03, pHi + span * 0.06, 8) : niceRange(-1, 1, 4);

  const bands = empty ? [] : profitBands(sx, sp, breakevens);

  // Markers, labelled in the strip above the plot.
  const markers: ChartMarker[] = [];
  if (isNum(spot)) markers.push({ x: spot, label: `spot ${fmtPrice(spot)}`, kind: 'spot' });
  for (const k of strikes) markers.push({ x: k, label: `K ${fmtPrice(k)}`, kind: 'strike' });
  for (const b of breakevens) markers.push({ x: b, label: `BE ${fmtPrice(b)}`, kind: 'breakeven' });

  const plugin: KolmoPluginOptions = {
    ...emptyPluginOptions(size),
    markers,
    bands,
    hlines: [
      { axis: 'yPnl', y: 0, color: '#7a7a7a', dash: [], width: 1.2 },
      ...(isNum(input.exits?.target) ? [{ axis: 'yPnl', y: input.exits.target, color: TARGET_LINE, dash: [7, 4], width: 1.8, label: `target ${fmtMoney(input.exits.target, cur)}` }] : []),
      ...(isNum(input.exits?.stop) ? [{ axis: 'yPnl', y: input.exits.stop, color: STOP_LINE, dash: [7, 4], width: 1.8, label: `stop ${fmtMoney(input.exits.stop, cur)}` }] : []),
    ],
    labelStrip: 56,
    ...(empty ? { empty } : {}),
  };

  const datasets: ChartDataset<'line', { x: number; y: number }[]>[] = [
    {
      label: isNum(input.view?.driftSe) && input.view.driftSe > 0 ? 'your view: predictive spot density (drift uncertain)' : 'your view: spot density',
      data: pts(sv),
      yAxisID: 'yDensity',
      borderColor: VIEW_LINE,
      backgroundColor: VIEW_FILL,
      borderWidth: 2.2,
      fill: 'origin',
      order: 3,
    },
    {
      label: 'risk-neutral: prices the options',
      data: pts(sr),
      yAxisID: 'yDensity',
      borderColor: RN_LINE,
      backgroundColor: 'rgba(213,94,0,0)',
      borderWidth: 2.4,
      borderDash: [8, 5],
      fill: false,
      order: 2,
    },
    {
      label: 'P&L (right axis)',
      data: pts(sp),
      yAxisID: 'yPnl',
      borderColor: PNL_LINE,
      backgroundColor: 'rgba(17,17,17,0)',
      borderWidth: 2.6,
      fill: false,
      order: 1,
    },
    {
      label: 'profit region',
      data: [],
      yAxisID: 'yPnl',
      borderColor: 'rgba(0,158,115,0.55)',
      backgroundColor: PROFIT_BAND,
      borderWidth: 1,
      fill: false,
      order: 4,
    },
  ];
  // legend entries of the exit levels (the lines themselves are the plugin's)
  for (const [name, v, color] of [
    ['target', input.exits?.target, TARGET_LINE],
    ['stop', input.exits?.stop, STOP_LINE],
  ] as const) {
    if (!isNum(v)) continue;
    datasets.push({ label: `${name} (P&L level, right axis)`, data: [], yAxisID: 'yPnl', borderColor: color, backgroundColor: 'rgba(0,0,0,0)', borderWidth: 1.8, borderDash: [7, 4], fill: false, order: 5 });
  }
  for (const d of datasets) {
    Object.assign(d, { parsing: false, normalized: true, pointRadius: 0, pointHoverRadius: 0, tension: 0, spanGaps: false });
  }

  const unit = cur ? ` (${cur})` : '';
  // One title line when it fits the width (bold 16 px DejaVu Sans: about 9.5 px a character),
  // else the position on the first line and horizon and view on the second.
  const maxChars = Math.max(30, Math.floor((isNum(size?.width) ? size.width : DEFAULT_SIZE.width) / 9.5));
  const clip = (t: string) => (t.length > maxChars ? `${t.slice(0, maxChars - 1)}…` : t);
  const posWords = (input.position || input.title || 'position').replace(/\s+/g, ' ').trim();
  const when = `horizon ${input.horizon || '–'}  ·  view: ${describeView(input.view ?? { drift: NaN, vol: NaN })}`;
  const oneLine = `${posWords}  ·  ${when}`;
  const title: string | string[] = oneLine.length <= maxChars ? oneLine : [clip(posWords), clip(when)];
  const subtitle =
    `chance of profit ${fmtChance(input.probProfit)}` +
    `  ·  expected P&L ${fmtMoney(input.expectedPnl, cur)} under your view` +
    (allZero ? '  ·  P&L is zero at every spot' : '');

  return {
    type: 'line',
    data: { datasets },
    options: {
      ...baseOptions(),
      scales: {
        x: {
          type: 'linear',
          min: xMin,
          max: xMax,
          ticks: { stepSize: xr.step, includeBounds: false, autoSkip: false, font: TICK_FONT, color: INK, format: tickFormat(xr.step) },
          grid: { color: GRID },
          title: { display: true, text: `spot at horizon${unit}`, font: AXIS_TITLE_FONT, color: INK },
        },
        yDensity: densityAxis(dMax, 'likelihood (each density has area 1)'),
        yPnl: {
          type: 'linear',
          position: 'right',
          min: pr.min,
          max: pr.max,
          ticks: { stepSize: pr.step, autoSkip: false, font: TICK_FONT, color: INK, format: tickFormat(pr.step) },
          grid: { color: GRID },
          title: { display: true, text: `P&L at horizon${unit}`, font: AXIS_TITLE_FONT, color: INK },
        },
      },
      plugins: {
        title: { display: true, text: title, font: { size: 16, weight: 'bold' }, color: INK, padding: { top: 4, bottom: 2 } },
        subtitle: { display: true, text: subtitle, font: { size: 14 }, color: MUTED, padding: { top: 0, bottom: plugin.labelStrip } },
        legend: {
          display: true,
          position: 'bottom',
          labels: { font: { size: 13 }, color: INK, boxWidth: 28, boxHeight: 11, padding: 14 },
        },
        tooltip: { enabled: false },
        kolmo: plugin,
      },
    } as ChartConfiguration<'line', { x: number; y: number }[]>['options'],
  };
}

// ---------------------------------------------------------------------------------------------
// The comparison chart: P&L distributions of several checks, overlaid.

export interface CompareChartOptions {
  /** heading; default "P&L at horizon under each check's view" */
  title?: string;
  currency?: string;
}

/**
 * Overlaid densities of P&L at the horizon (not of spot) for up to six checks, one legend entry
 * per check; point masses (e.g. a vertical spread's capped gain and loss at expiry) drawn as
 * stems on a right-hand probability axis; a zero line and each check's expected P&L marked.
 */
export function compareChartConfig(
  inputs: CompareChartItem[],
  opts: CompareChartOptions = {},
  size: ChartSize = DEFAULT_SIZE,
): ChartConfiguration<'line', { x: number; y: number }[]> {
  const cur = opts.currency && /^[A-Za-z]{2,5}$/.test(opts.currency) ? opts.currency.toUpperCase() : undefined;
  const list = (inputs ?? []).slice(0, MAX_COMPARE);
  const dropped = Math.max(0, (inputs ?? []).length - MAX_COMPARE);

  interface Clean { x: number[]; d: number[]; atoms: { x: number; prob: number }[]; mass: number }
  const cleaned: Clean[] = list.map((it) => {
    const x: number[] = [];
    const d: number[] = [];
    const pd = it?.pnlDensity;
    const n = Math.min(pd?.x?.length ?? 0, pd?.density?.length ?? 0);
    let last = -Infinity;
    for (let i = 0; i < n; i++) {
      const xv = pd.x[i];
      const dv = pd.density[i];
      if (!isNum(xv) || !isNum(dv) || xv <= last) continue;
      last = xv;
      x.push(xv);
      d.push(Math.max(0, dv));
    }
    const atoms = (pd?.atoms ?? []).filter((a) => isNum(a?.x) && isNum(a?.prob) && a.prob > 0);
    const mass = trapezoid(x, d) + atoms.reduce((s, a) => s + a.prob, 0);
    return { x, d, atoms, mass };
  });

  let empty: string | undefined;
  if (list.length === 0) empty = 'no chart: nothing to compare';
  else if (cleaned.every((c) => !(c.mass > 0))) empty = 'no chart: the checks carry no P&L distribution';

  const want: number[] = [0];
  for (const c of cleaned) {
    if (!(c.mass > 0)) continue;
    want.push(...sampledQuantiles(c.x, c.d, [0.005, 0.995], c.atoms).filter(isNum));
    for (const a of c.atoms) if (a.prob >= 0.005) want.push(a.x);
  }
  for (const it of list) if (isNum(it?.expectedPnl)) want.push(it.expectedPnl);
  let lo = Math.min(...want);
  let hi = Math.max(...want);
  const pad = (hi - lo) * 0.04;
  lo -= pad;
  hi += pad;
  const xr = niceRange(lo, hi, 10);

  const styles = COMPARE_STYLES;
  let dMax = 0;
  let aMax = 0;
  const datasets: ChartDataset<'line', { x: number; y: number }[]>[] = cleaned.map((c, k) => {
    let i0 = 0;
    let i1 = c.x.length - 1;
    while (i0 < i1 && c.x[i0 + 1] <= xr.min) i0++;
    while (i1 > i0 && c.x[i1 - 1] >= xr.max) i1--;
    const sx = c.x.slice(i0, i1 + 1);
    const sd = c.d.slice(i0, i1 + 1);
    const keep = sx.length ? thinIndices(sx, [sd], MAX_POINTS, [0]) : [];
    for (const i of keep) if (sx[i] >= xr.min && sx[i] <= xr.max) dMax = Math.max(dMax, sd[i]);
    for (const a of c.atoms) aMax = Math.max(aMax, a.prob);
    const st = styles[k];
    const it = list[k];
    return {
      label: `${it?.label || `check ${k + 1}`} · expected ${fmtMoney(it?.expectedPnl, cur)}`,
      data: keep.map((i) => ({ x: sx[i], y: sd[i] })),
      yAxisID: 'yDensity',
      borderColor: st.color,
      backgroundColor: 'rgba(255,255,255,0)',
      borderWidth: 2.4,
      borderDash: st.dash,
      fill: false,
      parsing: false,
      normalized: true,
      pointRadius: 0,
      pointHoverRadius: 0,
      tension: 0,
    };
  });

  const stems: ChartStem[] = [];
  cleaned.forEach((c, k) => {
    for (const a of c.atoms) {
      if (a.x < xr.min || a.x > xr.max) continue;
      stems.push({ x: a.x, y: a.prob, axis: 'yAtom', color: styles[k].color, label: `${fmtPct(Math.round(a.prob * 1000) / 1000)}` });
    }
  });
  const markers: ChartMarker[] = [{ x: 0, label: 'P&L 0', kind: 'zero' }];
  list.forEach((it, k) => {
    if (isNum(it?.expectedPnl)) markers.push({ x: it.expectedPnl, label: '', kind: 'mean', color: styles[k].color });
  });
  const ar = niceRange(0, aMax > 0 ? Math.min(1, aMax * 1.15) : 1, 5);

  const plugin: KolmoPluginOptions = {
    ...emptyPluginOptions(size),
    markers,
    stems,
    labelStrip: 22,
    ...(empty ? { empty } : {}),
  };
  const unit = cur ? ` (${cur})` : '';
  const subtitle =
    'density of P&L under each view (area = chance of a continuous outcome); ▲ expected P&L' +
    (stems.length ? '; stems: chance of one exact P&L (right axis)' : '') +
    (dropped ? `; first ${MAX_COMPARE} of ${list.length + dropped} shown` : '');

  return {
    type: 'line',
    data: { datasets },
    options: {
      ...baseOptions(),
      scales: {
        x: {
          type: 'linear',
          min: xr.min,
          max: xr.max,
          ticks: { stepSize: xr.step, autoSkip: false, font: TICK_FONT, color: INK, format: tickFormat(xr.step) },
          grid: { color: GRID },
          title: { display: true, text: `P&L at horizon${unit}`, font: AXIS_TITLE_FONT, color: INK },
        },
        yDensity: densityAxis(dMax, 'likelihood of P&L'),
        yAtom: {
          type: 'linear',
          position: 'right',
          display: stems.length > 0,
          min: 0,
          max: ar.max,
          ticks: { stepSize: ar.step, font: TICK_FONT, color: MUTED, format: { style: 'percent', minimumFractionDigits: Math.max(0, decimalsOf(ar.step) - 2), maximumFractionDigits: Math.max(0, decimalsOf(ar.step) - 2) } },
          grid: { display: false },
          title: { display: true, text: 'chance of exact value', font: AXIS_TITLE_FONT, color: MUTED },
        },
      },
      plugins: {
        title: { display: true, text: opts.title || "P&L at horizon under each check's view", font: { size: 16, weight: 'bold' }, color: INK, padding: { top: 4, bottom: 2 } },
        subtitle: { display: true, text: subtitle, font: { size: 12 }, color: MUTED, padding: { top: 0, bottom: plugin.labelStrip } },
        legend: {
          display: true,
          position: 'bottom',
          labels: { font: { size: 13 }, color: INK, boxWidth: 28, boxHeight: 11, padding: 14 },
        },
        tooltip: { enabled: false },
        kolmo: plugin,
      },
    } as ChartConfiguration<'line', { x: number; y: number }[]>['options'],
  };
}

// ---------------------------------------------------------------------------------------------
// Assembling the chart input from the core's records.

/**
 * The chart input of a check from the core's input and result plus the words only the shell
 * knows (the position in words, the horizon date, the currency).
 */
export function chartInputFromCheck(
  input: CheckInput,
  core: CheckCore,
  words: { position: string; horizon: string; currency?: string },
): ChartInput {
  return {
    position: words.position,
    horizon: words.horizon,
    view: { drift: input.view.drift, vol: input.view.vol, ...(input.view.jumps ? { jumps: input.view.jumps } : {}) },
    spot: input.market.spot,
    strikes: input.legs.filter((l) => l.kind !== 'shares').map((l) => l.strike),
    breakevens: core.outcome.breakevens,
    probProfit: core.outcome.probProfit,
    expectedPnl: core.outcome.expectedPnl,
    curves: core.curves,
    ...(words.currency ? { currency: words.currency } : {}),
  };
}
