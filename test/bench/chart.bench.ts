/**
 * Chart rendering: median time per chart and charts per second on one core (goal ≤ 40 ms per
 * 900×500 chart), with ratios against baselines rendered in the same process by the same
 * chartjs-node-canvas: a bare one-line chart.js chart through Kolmo's renderer, and Kolmo's
 * density chart through chartjs-node-canvas' own PNG encoder (renderToBuffer).
 * Curves: engine results (src/core/outcome.ts runCheck: call spread, calendar), and closed-form
 * lognormal densities with a straddle's P&L on a finer 801-point grid (thinned to ≤ 400 points).
 */
import { createRequire } from 'node:module';
import type { ChartConfiguration } from 'chart.js';
import type { ChartJSNodeCanvas as CJNC } from 'chartjs-node-canvas';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput } from '../../src/core/types.js';
import { chartInputFromCheck, checkChartConfig, compareChartConfig, type ChartInput } from '../../src/report/chart.js';
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

const NEAR = 46 / 365;
const spreadCheck: CheckInput = {
  market: { spot: 84.2, rate: 0.045, yield: 0.012 },
  legs: [
    { qty: 2, kind: 'call', strike: 85, years: NEAR, iv: 0.32, entry: 3.55 },
    { qty: -2, kind: 'call', strike: 95, years: NEAR, iv: 0.29, entry: 0.75 },
  ],
  mult: 100,
  style: 'european',
  horizonYears: NEAR,
  view: { drift: 0.11, vol: 0.31 },
};
const calendarCheck: CheckInput = {
  ...spreadCheck,
  legs: [
    { qty: -3, kind: 'call', strike: 85, years: NEAR, iv: 0.31, entry: null },
    { qty: 3, kind: 'call', strike: 85, years: 102 / 365, iv: 0.3, entry: null },
  ],
};

/**
 * Medians (and p99) of awaited calls, taken round-robin over all the cases (one call of each in
 * turn, `n` rounds after `warm` warm-up rounds), so that load from other processes on the machine
 * falls on every case alike and the ratios stay meaningful.
 */
async function measureInterleaved(
  cases: { name: string; f: () => Promise<unknown> }[],
  n = 60,
  warm = 5,
): Promise<(Measure & { cpu: number })[]> {
  const times = cases.map(() => [] as number[]);
  const cpus = cases.map(() => [] as number[]);
  for (let r = 0; r < warm + n; r++) {
    for (let c = 0; c < cases.length; c++) {
      const u0 = process.cpuUsage();
      const t0 = process.hrtime.bigint();
      sink(await cases[c].f());
      const t1 = process.hrtime.bigint();
      const u = process.cpuUsage(u0);
      if (r >= warm) {
        times[c].push(Number(t1 - t0) / 1e9);
        cpus[c].push((u.user + u.system) / 1e6);
      }
    }
  }
  const med = (t: number[]) => [...t].sort((a, b) => a - b)[Math.floor(t.length / 2)];
  return cases.map((c, i) => {
    const t = [...times[i]].sort((a, b) => a - b);
    const perOp = t[Math.floor(t.length / 2)];
    return {
      name: c.name,
      perOp,
      opsPerSec: 1 / perOp,
      p99: t[Math.min(t.length - 1, Math.floor(t.length * 0.99))],
      samples: t.length,
      cpu: med(cpus[i]),
    };
  });
}

export async function run(): Promise<void> {
  const spreadCore = runCheck(spreadCheck);
  const spreadIn = chartInputFromCheck(spreadCheck, spreadCore, { position: 'FERNWK +2/−2 call spread 85/95', horizon: '2027-02-19', currency: 'USD' });
  const cfg = checkChartConfig(spreadIn);
  const calendar = checkChartConfig(
    chartInputFromCheck(calendarCheck, runCheck(calendarCheck), { position: 'FERNWK call calendar 85', horizon: '2027-02-19', currency: 'USD' }),
  );
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

  report(measure(`config: checkChartConfig (engine, ${spreadIn.curves.spot.length} points)`, () => checkChartConfig(spreadIn), 1, 0.5));
  report(measure('config: checkChartConfig (801-point grid)', () => checkChartConfig(input), 1, 0.5));

  const { ChartJSNodeCanvas } = require('chartjs-node-canvas') as { ChartJSNodeCanvas: new (o: object) => CJNC };
  const plain = new ChartJSNodeCanvas({ width: 900, height: 500, backgroundColour: '#ffffff' });
  const [base, own, cal, str, cmpM, theirs] = await measureInterleaved([
    { name: 'baseline: bare one-line chart, renderPng', f: () => renderPng(bare) },
    { name: 'call spread (engine) 900×500, renderPng', f: () => renderPng(cfg) },
    { name: 'calendar (engine) 900×500, renderPng', f: () => renderPng(calendar) },
    { name: 'straddle (801-pt grid) 900×500, renderPng', f: () => renderPng(straddle) },
    { name: 'comparison of 6 checks, renderPng', f: () => renderPng(cmp) },
    { name: 'same call spread, canvas PNG encoder, no plugin', f: () => plain.renderToBuffer(structuredClone(cfg) as never) },
  ]);

  console.log('wall-clock medians (machine shared with other work; ratios are the stable figures):');
  for (const m of [base, own, cal, str, cmpM, theirs]) {
    report(m, m === base ? undefined : base, m === base || m === theirs ? undefined : '≤ 40 ms');
  }
  console.log('CPU time per chart (all threads of this process, median), and charts per second of one core at that cost:');
  for (const m of [base, own, cal, str, cmpM, theirs]) {
    console.log(`${m.name.padEnd(48)} ${fmtTime(m.cpu).padStart(11)} CPU  ${fmtRate(1 / m.cpu).padStart(9)}  ${(m.cpu / base.cpu).toFixed(2)}× baseline`);
  }
  console.log(
    `call-spread chart: median ${fmtTime(own.perOp)} wall, ${fmtTime(own.cpu)} CPU, p99 ${fmtTime(own.p99)}; ` +
      `${fmtRate(1 / own.cpu)} charts per core; Kolmo PNG encoder vs canvas encoder (CPU): ${(own.cpu / theirs.cpu).toFixed(2)}×`,
  );
}
