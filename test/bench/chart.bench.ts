/**
 * Chart rendering: median time per chart and charts per second on one core (goal ≤ 40 ms per
 * 900×500 chart), with ratios against baselines rendered in the same process by the same
 * chartjs-node-canvas: a bare one-line chart.js chart through Kolmo's renderer, and Kolmo's
 * density chart through chartjs-node-canvas' own PNG encoder (renderToBuffer).
 * Curves: closed-form lognormal densities and a call spread's P&L on an 801-point grid.
 */
import { createRequire } from 'node:module';
import type { ChartConfiguration } from 'chart.js';
import type { ChartJSNodeCanvas as CJNC } from 'chartjs-node-canvas';
import { checkChartConfig, compareChartConfig, type ChartInput } from '../../src/report/chart.js';
import { renderPng } from '../../src/report/render.js';
import { callSpread, closedFormCurves, shortStraddle } from '../report/chart-closed-forms.js';
import { fmtRate, fmtTime, measure, report, sink, type Measure } from './harness.js';

const require = createRequire(import.meta.url);

const G = { s0: 100, mu: 0.09, r: 0.045, q: 0.01, sigma: 0.26, t: 42 / 365 };
const input: ChartInput = {
  position: 'FERNWK +2/−2 call spread 105/115',
  horizon: '2027-02-15',
  view: { drift: 0.09, vol: 0.26 },
  spot: 100,
  strikes: callSpread.strikes,
  breakevens: callSpread.breakevens,
  probProfit: 0.31,
  expectedPnl: -18,
  curves: closedFormCurves(G, callSpread.pnl),
  currency: 'USD',
};

/** Median (and p99) of `n` sequential awaited calls after `warm` warm-up calls. */
async function measureAsync(name: string, f: () => Promise<unknown>, n = 60, warm = 5): Promise<Measure> {
  for (let i = 0; i < warm; i++) sink(await f());
  const times: number[] = [];
  for (let i = 0; i < n; i++) {
    const t0 = process.hrtime.bigint();
    sink(await f());
    times.push(Number(process.hrtime.bigint() - t0) / 1e9);
  }
  times.sort((a, b) => a - b);
  const perOp = times[Math.floor(times.length / 2)];
  return { name, perOp, opsPerSec: 1 / perOp, p99: times[Math.min(times.length - 1, Math.floor(times.length * 0.99))], samples: n };
}

export async function run(): Promise<void> {
  const cfg = checkChartConfig(input);
  const straddle = checkChartConfig({ ...input, strikes: shortStraddle.strikes, breakevens: shortStraddle.breakevens, curves: closedFormCurves(G, shortStraddle.pnl) });
  const norm = (m: number, s: number) => {
    const x = Array.from({ length: 301 }, (_, i) => m - 5 * s + (10 * s * i) / 300);
    return { x, density: x.map((v) => Math.exp(-0.5 * ((v - m) / s) ** 2) / (s * Math.sqrt(2 * Math.PI))), atoms: [] };
  };
  const cmp = compareChartConfig(Array.from({ length: 6 }, (_, k) => ({ label: `drift ${k * 3}%`, pnlDensity: norm(k * 40, 400), expectedPnl: k * 40 })));

  const bare: ChartConfiguration = {
    type: 'line',
    data: { datasets: [{ data: cfg.data.datasets[0].data, parsing: false, pointRadius: 0 } as never] },
    options: { scales: { x: { type: 'linear' } }, plugins: { legend: { display: false } } },
  };

  const build = measure('config: checkChartConfig (801-point grid)', () => checkChartConfig(input), 1, 0.5);
  report(build);

  const base = await measureAsync('baseline: bare one-line chart, renderPng', () => renderPng(bare));
  const own = await measureAsync('density chart 900×500, renderPng', () => renderPng(cfg));
  const str = await measureAsync('straddle chart 900×500, renderPng', () => renderPng(straddle));
  const cmpM = await measureAsync('comparison of 6 checks, renderPng', () => renderPng(cmp));

  const { ChartJSNodeCanvas } = require('chartjs-node-canvas') as { ChartJSNodeCanvas: new (o: object) => CJNC };
  const plain = new ChartJSNodeCanvas({ width: 900, height: 500, backgroundColour: '#ffffff' });
  const theirs = await measureAsync('same chart, canvas PNG encoder (no plugin)', () => plain.renderToBuffer(structuredClone(cfg) as never));

  for (const m of [base, own, str, cmpM, theirs]) {
    report(m, m === base ? undefined : base, m === own || m === str || m === cmpM ? '≤ 40 ms' : undefined);
  }
  console.log(
    `density chart: median ${fmtTime(own.perOp)}, p99 ${fmtTime(own.p99)}, ${fmtRate(own.opsPerSec)} charts on one core; ` +
      `Kolmo encoder vs canvas encoder: ${(own.perOp / theirs.perOp).toFixed(2)}×`,
  );
}
