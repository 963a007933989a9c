/**
 * The chart of a history answer (pure, JSON-serialisable configuration like every Kolmo chart):
 * on the left the closes, on the right the histogram of the log returns beside the normal with
 * the fitted mean and s.d. — how far the returns are from the walk the estimates assume.
 * Two x axes share the bottom edge (chart.js stacks axes of one position and `stack` side by side,
 * sized by `stackWeight`). Colours: Okabe–Ito, as the check chart.
 */
import type { ChartConfiguration, ChartDataset } from 'chart.js';
import type { HistoryEstimate } from '../core/history.js';
import { DEFAULT_SIZE, OKABE_ITO, niceRange, type ChartSize, type KolmoPluginOptions } from './chart.js';

/** What the history chart reads (plain data: it may cross a process boundary). */
export interface HistoryChartInput {
  kind: 'history';
  symbol: string;
  /** x labels of the closes: dates, or 1…n without dates */
  labels: string[];
  closes: number[];
  logReturns: number[];
  /** the fitted normal of one return: mean and s.d. */
  mean: number;
  sd: number;
  vol: number;
  volSe: number;
  drift: number;
  driftSe: number;
  years: number;
}

export function historyChartInput(symbol: string, closes: { date?: string; close: number }[], e: HistoryEstimate): HistoryChartInput {
  return {
    kind: 'history',
    symbol,
    labels: closes.map((c, i) => c.date ?? String(i + 1)),
    closes: closes.map((c) => c.close),
    logReturns: e.logReturns,
    mean: e.returns > 0 ? e.sumU / e.returns : 0,
    sd: e.sdReturn,
    vol: e.vol,
    volSe: e.volSe,
    drift: e.drift,
    driftSe: e.driftSe,
    years: e.years,
  };
}

const INK = '#1f1f1f';
const GRID = '#e4e4e4';
const MUTED = '#555555';
const TICK_FONT = { size: 12 };
const AXIS_FONT = { size: 13 };

function p1(x: number): string {
  const v = Math.round(x * 1000) / 10;
  return `${v < 0 ? '−' : ''}${Math.abs(v).toFixed(1)}%`;
}

/** Number of histogram bins: Freedman–Diaconis-like √n rule, between 8 and 40 (common practice). */
function binCount(n: number): number {
  return Math.max(8, Math.min(40, Math.round(Math.sqrt(n))));
}

type Pt = { x: number; y: number };

export function historyChartConfig(input: HistoryChartInput, size: ChartSize = DEFAULT_SIZE): ChartConfiguration<'line', (number | Pt)[]> {
  // returns in per cent on the axis (a log return of 0.012 is drawn at 1.2)
  const u = input.logReturns.filter((x) => Number.isFinite(x)).map((x) => 100 * x);
  const sd = input.sd > 0 ? 100 * input.sd : 1e-2;
  const mean = 100 * input.mean;
  const lo0 = Math.min(mean - 4 * sd, ...u);
  const hi0 = Math.max(mean + 4 * sd, ...u);
  const xr = niceRange(lo0, hi0, 6);
  const bins = binCount(u.length);
  const w = (xr.max - xr.min) / bins;
  const counts = new Array<number>(bins).fill(0);
  for (const x of u) counts[Math.min(bins - 1, Math.max(0, Math.floor((x - xr.min) / w)))]++;
  // the histogram as a density (area one), drawn as steps through the bin edges
  const hist: Pt[] = [{ x: xr.min, y: 0 }];
  counts.forEach((c, i) => {
    const y = u.length > 0 ? c / (u.length * w) : 0;
    hist.push({ x: xr.min + i * w, y }, { x: xr.min + (i + 1) * w, y });
  });
  hist.push({ x: xr.max, y: 0 });
  const normal: Pt[] = [];
  for (let i = 0; i <= 160; i++) {
    const x = xr.min + ((xr.max - xr.min) * i) / 160;
    const z = (x - mean) / sd;
    normal.push({ x, y: Math.exp(-0.5 * z * z) / (sd * Math.sqrt(2 * Math.PI)) });
  }
  const dMax = Math.max(...hist.map((p) => p.y), ...normal.map((p) => p.y), 1e-12);
  const dr = niceRange(0, dMax * 1.08, 6);
  const pr = niceRange(Math.min(...input.closes) * 0.99, Math.max(...input.closes) * 1.01, 6);
  const empty = input.closes.length < 2 ? 'no chart: fewer than two closes' : undefined;

  const datasets: ChartDataset<'line', (number | Pt)[]>[] = [
    {
      label: `${input.symbol} closes`,
      data: input.closes,
      xAxisID: 'xDate',
      yAxisID: 'yClose',
      borderColor: OKABE_ITO.blue,
      backgroundColor: 'rgba(0,114,178,0)',
      borderWidth: 1.8,
      fill: false,
    },
    {
      label: 'log returns (histogram)',
      data: hist,
      xAxisID: 'xRet',
      yAxisID: 'yDens',
      borderColor: 'rgba(85,85,85,0.9)',
      backgroundColor: 'rgba(86,180,233,0.35)',
      borderWidth: 1,
      fill: 'origin',
    },
    {
      label: 'fitted normal',
      data: normal,
      xAxisID: 'xRet',
      yAxisID: 'yDens',
      borderColor: OKABE_ITO.vermillion,
      backgroundColor: 'rgba(213,94,0,0)',
      borderWidth: 2.2,
      borderDash: [8, 5],
      fill: false,
    },
  ];
  for (const d of datasets) Object.assign(d, { pointRadius: 0, pointHoverRadius: 0, tension: 0 });
  for (const d of datasets.slice(1)) Object.assign(d, { parsing: false });

  const plugin: KolmoPluginOptions = { markers: [], bands: [], bandColor: 'rgba(0,0,0,0)', hlines: [], stems: [], labelStrip: 8, size, ...(empty ? { empty } : {}) };
  const span = input.labels.length > 1 ? `${input.labels[0]} → ${input.labels[input.labels.length - 1]}` : '';
  return {
    type: 'line',
    data: { labels: input.labels, datasets },
    options: {
      responsive: false,
      animation: false,
      devicePixelRatio: 1,
      layout: { padding: { left: 10, right: 14, top: 6, bottom: 6 } },
      scales: {
        xDate: {
          type: 'category',
          position: 'bottom',
          stack: 'bottom',
          stackWeight: 3,
          ticks: { autoSkip: true, maxTicksLimit: 6, maxRotation: 0, font: TICK_FONT, color: INK },
          grid: { color: GRID },
          title: { display: true, text: input.labels[0]?.includes('-') ? 'date' : 'close number (trading days)', font: AXIS_FONT, color: INK },
        },
        xRet: {
          type: 'linear',
          position: 'bottom',
          stack: 'bottom',
          stackWeight: 2,
          min: xr.min,
          max: xr.max,
          offset: false,
          ticks: { stepSize: xr.step, maxTicksLimit: 8, maxRotation: 0, font: TICK_FONT, color: INK },
          grid: { color: GRID },
          title: { display: true, text: 'log return between closes (%)', font: AXIS_FONT, color: INK },
        },
        yClose: {
          type: 'linear',
          position: 'left',
          min: pr.min,
          max: pr.max,
          ticks: { stepSize: pr.step, font: TICK_FONT, color: INK },
          grid: { drawOnChartArea: false },
          title: { display: true, text: 'close', font: AXIS_FONT, color: INK },
        },
        yDens: {
          type: 'linear',
          position: 'right',
          min: 0,
          max: dr.max,
          ticks: { display: false },
          grid: { drawOnChartArea: false },
          title: { display: true, text: 'density of returns', font: AXIS_FONT, color: INK },
        },
      },
      plugins: {
        title: {
          display: true,
          text: `${input.symbol}: ${input.closes.length} closes${span ? `, ${span}` : ''}`,
          font: { size: 16, weight: 'bold' },
          color: INK,
          padding: { top: 4, bottom: 2 },
        },
        subtitle: {
          display: true,
          text: `vol ${p1(input.vol)} ± ${p1(input.volSe)}  ·  drift ${p1(input.drift)} ± ${p1(input.driftSe)}  ·  ${input.years.toFixed(2)} years`,
          font: { size: 14 },
          color: MUTED,
          padding: { top: 0, bottom: 10 },
        },
        legend: { display: true, position: 'bottom', labels: { font: { size: 13 }, color: INK, boxWidth: 28, boxHeight: 11, padding: 14 } },
        tooltip: { enabled: false },
        kolmo: plugin,
      },
    } as ChartConfiguration<'line', (number | Pt)[]>['options'],
  };
}
