/** The comparison chart: P&L distributions of several checks, overlaid (design: ../chart.ts). */
import type { ChartConfiguration, ChartDataset } from 'chart.js';
import { fmtMoney, fmtPct, isNum } from '../format.js';
import { type ChartMarker, type ChartStem, type KolmoPluginOptions, type CompareChartItem, type ChartSize, DEFAULT_SIZE, MUTED, COMPARE_STYLES, MAX_COMPARE, MAX_POINTS } from './style.js';
import { niceRange, decimalsOf, trapezoid, sampledQuantiles, thinIndices } from './scale.js';
import { AXIS_TITLE_FONT, TICK_FONT, baseOptions, chartPlugins, densityAxis, emptyPluginOptions, valueAxis } from './axes.js';

// ---------------------------------------------------------------------------------------------
// The comparison chart: P&L distributions of several checks, overlaid.

export interface CompareChartOptions {
  /** heading; default "P&L at horizon under each check's view" */
  title?: string;
  currency?: string;
}

interface Clean {
  x: number[];
  d: number[];
  atoms: { x: number; prob: number }[];
  mass: number;
}

type Points = { x: number; y: number }[];

/** One check's P&L density with its bad samples dropped, its atoms and its total mass. */
function cleanItem(it: CompareChartItem): Clean {
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
}

/** The x range: 0.5%–99.5% quantiles of every density, atoms of 0.5% or more, zero and the means. */
function pnlRange(list: CompareChartItem[], cleaned: Clean[]) {
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
  return niceRange(lo, hi, 10);
}

/** One line a check (inside the range, thinned), and the tallest density and atom drawn. */
function compareDatasets(list: CompareChartItem[], cleaned: Clean[], xr: { min: number; max: number; step: number }, cur: string | undefined) {
  // the density axis reads as "chance per one x step of P&L": densities scaled by the step
  const per = xr.step;
  let dMax = 0;
  let aMax = 0;
  const datasets: ChartDataset<'line', Points>[] = cleaned.map((c, k) => {
    let i0 = 0;
    let i1 = c.x.length - 1;
    while (i0 < i1 && c.x[i0 + 1] <= xr.min) i0++;
    while (i1 > i0 && c.x[i1 - 1] >= xr.max) i1--;
    const sx = c.x.slice(i0, i1 + 1);
    const sd = c.d.slice(i0, i1 + 1);
    const keep = sx.length ? thinIndices(sx, [sd], MAX_POINTS, [0]) : [];
    for (const i of keep) if (sx[i] >= xr.min && sx[i] <= xr.max) dMax = Math.max(dMax, sd[i] * per);
    for (const a of c.atoms) aMax = Math.max(aMax, a.prob);
    const st = COMPARE_STYLES[k];
    const it = list[k];
    return {
      label: `${it?.label || `check ${k + 1}`} · expected ${fmtMoney(it?.expectedPnl, cur)}`,
      data: keep.map((i) => ({ x: sx[i], y: sd[i] * per })),
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
  return { datasets, dMax, aMax };
}

/** Stems at the atoms inside the range; markers at zero and at each check's expected P&L. */
function compareMarks(list: CompareChartItem[], cleaned: Clean[], xr: { min: number; max: number }) {
  const stems: ChartStem[] = [];
  cleaned.forEach((c, k) => {
    for (const a of c.atoms) {
      if (a.x < xr.min || a.x > xr.max) continue;
      stems.push({ x: a.x, y: a.prob, axis: 'yAtom', color: COMPARE_STYLES[k].color, label: `${fmtPct(Math.round(a.prob * 1000) / 1000)}` });
    }
  });
  // equal atoms of several checks (the same max loss under three views) share one place: values
  // within a billionth of the axis span are one P&L
  const same = 1e-9 * (xr.max - xr.min);
  const order = stems.map((_, i) => i).sort((i, j) => stems[i].x - stems[j].x);
  for (let a = 0; a < order.length; ) {
    let b = a + 1;
    while (b < order.length && stems[order[b]].x - stems[order[a]].x <= same) b++;
    if (b - a > 1) {
      for (let k = a; k < b; k++) {
        stems[order[k]].x = stems[order[a]].x;
        stems[order[k]].together = true;
      }
    }
    a = b;
  }
  const markers: ChartMarker[] = [{ x: 0, label: 'P&L 0', kind: 'zero' }];
  list.forEach((it, k) => {
    if (isNum(it?.expectedPnl)) markers.push({ x: it.expectedPnl, label: '', kind: 'mean', color: COMPARE_STYLES[k].color });
  });
  return { stems, markers };
}

/** The right axis of the atoms' chances (shown only when there are stems). */
function atomAxis(aMax: number, shown: boolean) {
  const ar = niceRange(0, aMax > 0 ? Math.min(1, aMax * 1.15) : 1, 5);
  const d = Math.max(0, decimalsOf(ar.step) - 2);
  return {
    type: 'linear',
    position: 'right',
    display: shown,
    min: 0,
    max: ar.max,
    ticks: { stepSize: ar.step, font: TICK_FONT, color: MUTED, format: { style: 'percent', minimumFractionDigits: d, maximumFractionDigits: d } },
    grid: { display: false },
    title: { display: true, text: 'chance of exact value', font: AXIS_TITLE_FONT, color: MUTED },
  };
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
): ChartConfiguration<'line', Points> {
  const cur = opts.currency && /^[A-Za-z]{2,5}$/.test(opts.currency) ? opts.currency.toUpperCase() : undefined;
  const list = (inputs ?? []).slice(0, MAX_COMPARE);
  const dropped = Math.max(0, (inputs ?? []).length - MAX_COMPARE);
  const cleaned = list.map(cleanItem);
  let empty: string | undefined;
  if (list.length === 0) empty = 'no chart: nothing to compare';
  else if (cleaned.every((c) => !(c.mass > 0))) empty = 'no chart: the checks carry no P&L distribution';
  const xr = pnlRange(list, cleaned);
  const { datasets, dMax, aMax } = compareDatasets(list, cleaned, xr, cur);
  const { stems, markers } = compareMarks(list, cleaned, xr);
  const plugin: KolmoPluginOptions = {
    ...emptyPluginOptions(size),
    markers,
    stems,
    labelStrip: 22,
    ...(empty ? { empty } : {}),
  };
  const unit = cur ? ` (${cur})` : '';
  const subtitle =
    "How likely each P&L is at the horizon under each check's view; ▲ marks the expected P&L" +
    (stems.length ? '; a stem is the chance of one exact P&L, such as the most a position can lose (right axis)' : '') +
    (dropped ? `; first ${MAX_COMPARE} of ${list.length + dropped} shown` : '');
  return {
    type: 'line',
    data: { datasets },
    options: {
      ...baseOptions(),
      scales: {
        x: valueAxis(xr, `P&L at horizon${unit}`),
        yDensity: (() => {
          const dr = niceRange(0, dMax > 0 ? dMax * 1.12 : 1, 5);
          const d = Math.max(0, decimalsOf(dr.step) - 2);
          return {
            ...densityAxis(dMax, `chance per ${xr.step.toLocaleString('en-US', { maximumFractionDigits: decimalsOf(xr.step) })} of P&L`),
            min: 0,
            max: dr.max,
            ticks: { display: true, stepSize: dr.step, font: TICK_FONT, color: MUTED, format: { style: 'percent', minimumFractionDigits: d, maximumFractionDigits: d } },
          };
        })(),
        yAtom: atomAxis(aMax, stems.length > 0),
      },
      plugins: chartPlugins(opts.title || "P&L at horizon under each check's view", subtitle, 12, plugin),
    } as ChartConfiguration<'line', Points>['options'],
  };
}

