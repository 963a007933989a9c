/** The density chart of one check (design: ../chart.ts). */
import type { ChartConfiguration, ChartDataset } from 'chart.js';
import type { CheckCore, CheckInput, Curves } from '../../core/types.js';
import { describeView, fmtChance, fmtMoney, fmtPct, fmtPrice, isNum } from '../format.js';
import { type ChartMarker, type KolmoPluginOptions, type ChartInput, type ChartSize, DEFAULT_SIZE, VIEW_LINE, VIEW_FILL, RN_LINE, PNL_LINE, PROFIT_BAND, TARGET_LINE, STOP_LINE, MAX_POINTS } from './style.js';
import { niceRange, trapezoid, sampledQuantiles, thinIndices } from './scale.js';
import { baseOptions, chartPlugins, densityAxis, emptyPluginOptions, profitBands, valueAxis } from './axes.js';

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
  const n = Math.min(c.spot.length, c.densityView?.length ?? 0, c.densityMarket?.length ?? 0, c.pnl?.length ?? 0);
  let last = -Infinity;
  for (let i = 0; i < n; i++) {
    const s = c.spot[i];
    const a = c.densityView[i];
    const b = c.densityMarket[i];
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

/** Why there is nothing to draw, if so. */
function emptyReason(c: CleanCurves, areaV: number, areaR: number): string | undefined {
  if (c.spot.length < 2) return 'no chart: the result carries no sampled curves';
  if (!(areaV > 0) && !(areaR > 0)) return 'no chart: the spot at the horizon has no spread to draw (a horizon of today or a zero volatility)';
  if (c.pnl.every((v) => v === 0)) return 'no chart: the position has no exposure (its legs cancel; P&L is zero at every spot)';
  return undefined;
}

interface Levels {
  spot: number;
  strikes: number[];
  breakevens: number[];
}

/** The x range: 0.5%–99.5% quantiles of both densities, today's spot, strikes and breakevens. */
function xWindow(c: CleanCurves, lv: Levels, areas: { v: number; r: number }, empty: string | undefined) {
  const want: number[] = [];
  if (!empty) {
    if (areas.v > 0) want.push(...sampledQuantiles(c.spot, c.dv, [0.005, 0.995]));
    if (areas.r > 0) want.push(...sampledQuantiles(c.spot, c.drn, [0.005, 0.995]));
  }
  want.push(...lv.strikes, ...lv.breakevens);
  if (isNum(lv.spot)) want.push(lv.spot);
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
  return { xMin, xMax, step: xr.step };
}

/** The samples inside [xMin, xMax] (and one either side so lines reach the edges), thinned. */
function windowSamples(c: CleanCurves, xMin: number, xMax: number, lv: Levels, empty: string | undefined) {
  let i0 = 0;
  let i1 = c.spot.length - 1;
  while (i0 < i1 && c.spot[i0 + 1] <= xMin) i0++;
  while (i1 > i0 && c.spot[i1 - 1] >= xMax) i1--;
  const sx = c.spot.slice(i0, i1 + 1);
  const sv = c.dv.slice(i0, i1 + 1);
  const sr = c.drn.slice(i0, i1 + 1);
  const sp = c.pnl.slice(i0, i1 + 1);
  const keep = empty ? [] : thinIndices(sx, [sp], MAX_POINTS, [...lv.strikes, ...lv.breakevens, lv.spot]);
  return { sx, sv, sr, sp, keep };
}

/** Axes: densities from zero with headroom; P&L nicely rounded, always holding zero. */
function yRanges(w: ReturnType<typeof windowSamples>, xMin: number, xMax: number, exits: ChartInput['exits']) {
  const inRange = w.keep.filter((i) => w.sx[i] >= xMin && w.sx[i] <= xMax);
  const dMax = Math.max(0, ...inRange.map((i) => Math.max(w.sv[i], w.sr[i])));
  const pVals = inRange.map((i) => w.sp[i]);
  const levels = [exits?.target, exits?.stop].filter((v): v is number => isNum(v));
  const pLo = Math.min(0, ...pVals, ...levels);
  const pHi = Math.max(0, ...pVals, ...levels);
  const allZero = pVals.length > 0 && pVals.every((v) => v === 0);
  const span = pHi - pLo;
  const pr = span > 0 ? niceRange(pLo - span * 0.03, pHi + span * 0.06, 8) : niceRange(-1, 1, 4);
  return { dMax, pr, allZero };
}

/** Markers, labelled in the strip above the plot. */
function levelMarkers(lv: Levels): ChartMarker[] {
  const markers: ChartMarker[] = [];
  if (isNum(lv.spot)) markers.push({ x: lv.spot, label: `spot ${fmtPrice(lv.spot)}`, kind: 'spot' });
  for (const k of lv.strikes) markers.push({ x: k, label: `K ${fmtPrice(k)}`, kind: 'strike' });
  for (const b of lv.breakevens) markers.push({ x: b, label: `BE ${fmtPrice(b)}`, kind: 'breakeven' });
  return markers;
}

type Points = { x: number; y: number }[];

function checkDatasets(pts: (ys: number[]) => Points, w: ReturnType<typeof windowSamples>, view: ChartInput['view'] | undefined, exits: ChartInput['exits'], marketVol?: number): ChartDataset<'line', Points>[] {
  const datasets: ChartDataset<'line', Points>[] = [
    {
      label: isNum(view?.driftSe) && view.driftSe > 0 ? 'your view: predictive spot density (drift uncertain)' : 'your view: spot density',
      data: pts(w.sv),
      yAxisID: 'yDensity',
      borderColor: VIEW_LINE,
      backgroundColor: VIEW_FILL,
      borderWidth: 2.2,
      fill: 'origin',
      order: 3,
    },
    {
      label: isNum(marketVol) ? `market walk (drift = rate, vol ${fmtPct(marketVol)}): prices the options` : 'market walk (drift = rate): prices the options',
      data: pts(w.sr),
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
      data: pts(w.sp),
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
    ['target', exits?.target, TARGET_LINE],
    ['stop', exits?.stop, STOP_LINE],
  ] as const) {
    if (!isNum(v)) continue;
    datasets.push({ label: `${name} (P&L level, right axis)`, data: [], yAxisID: 'yPnl', borderColor: color, backgroundColor: 'rgba(0,0,0,0)', borderWidth: 1.8, borderDash: [7, 4], fill: false, order: 5 });
  }
  for (const d of datasets) {
    Object.assign(d, { parsing: false, normalized: true, pointRadius: 0, pointHoverRadius: 0, tension: 0, spanGaps: false });
  }
  return datasets;
}

/** A target and a stop as labelled levels on the P&L axis. */
function exitLines(exits: ChartInput['exits'], cur: string | undefined): KolmoPluginOptions['hlines'] {
  return [
    ...(isNum(exits?.target) ? [{ axis: 'yPnl', y: exits.target, color: TARGET_LINE, dash: [7, 4], width: 1.8, label: `target ${fmtMoney(exits.target, cur)}` }] : []),
    ...(isNum(exits?.stop) ? [{ axis: 'yPnl', y: exits.stop, color: STOP_LINE, dash: [7, 4], width: 1.8, label: `stop ${fmtMoney(exits.stop, cur)}` }] : []),
  ];
}

/**
 * One title line when it fits the width (bold 16 px DejaVu Sans: about 9.5 px a character), else
 * the position on the first line and horizon and view on the second; the figures below it.
 */
function checkTitles(input: ChartInput, size: ChartSize, cur: string | undefined, allZero: boolean) {
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
  return { title, subtitle };
}

/**
 * The density chart of one check: the view's and the market walk's density of the spot at the
 * horizon (left axis), the P&L at the horizon (right axis, money) with its zero line, the profit
 * region shaded, markers at spot, strikes and breakevens. Pure; JSON-serialisable result.
 */
export function checkChartConfig(input: ChartInput, size: ChartSize = DEFAULT_SIZE): ChartConfiguration<'line', Points> {
  const cur = input.currency && /^[A-Za-z]{2,5}$/.test(input.currency) ? input.currency.toUpperCase() : undefined;
  const c = cleanCurves(input.curves);
  const lv: Levels = {
    spot: isNum(input.spot) ? input.spot : NaN,
    strikes: [...new Set((input.strikes ?? []).filter(isNum))].sort((a, b) => a - b),
    breakevens: [...new Set((input.breakevens ?? []).filter(isNum))].sort((a, b) => a - b),
  };
  const areas = { v: trapezoid(c.spot, c.dv), r: trapezoid(c.spot, c.drn) };
  const empty = emptyReason(c, areas.v, areas.r);
  const { xMin, xMax, step } = xWindow(c, lv, areas, empty);
  const w = windowSamples(c, xMin, xMax, lv, empty);
  const pts = (ys: number[]) => w.keep.map((i) => ({ x: w.sx[i], y: ys[i] }));
  const { dMax, pr, allZero } = yRanges(w, xMin, xMax, input.exits);
  const plugin: KolmoPluginOptions = {
    ...emptyPluginOptions(size),
    markers: levelMarkers(lv),
    bands: empty ? [] : profitBands(w.sx, w.sp, lv.breakevens),
    hlines: [{ axis: 'yPnl', y: 0, color: '#7a7a7a', dash: [], width: 1.2 }, ...exitLines(input.exits, cur)],
    labelStrip: 56,
    ...(empty ? { empty } : {}),
  };
  const unit = cur ? ` (${cur})` : '';
  const { title, subtitle } = checkTitles(input, size, cur, allZero);
  return {
    type: 'line',
    data: { datasets: checkDatasets(pts, w, input.view, input.exits, input.marketVol) },
    options: {
      ...baseOptions(),
      scales: {
        x: valueAxis({ min: xMin, max: xMax, step }, `spot at horizon${unit}`, { includeBounds: false }),
        yDensity: densityAxis(dMax, 'likelihood (each density has area 1)'),
        yPnl: valueAxis(pr, `P&L at horizon${unit}`, { position: 'right' }),
      },
      plugins: chartPlugins(title, subtitle, 14, plugin),
    } as ChartConfiguration<'line', Points>['options'],
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

