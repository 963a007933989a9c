/**
 * Targets and stops (src/core/exit-chances.ts): median time of the exit figures of a four-leg
 * European position under both walks (goal ≤ 20 ms at 1e-4 on the probabilities), as ratios
 * against the outcome engine's check of the same position in the same process; the convergence
 * table of the finite differences against a much finer grid; and the Monte Carlo used with jumps.
 */
import { exitChances } from '../../src/core/models.js';
import { exitFiguresPde, exitGrid } from '../../src/core/exits.js';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput, Walk } from '../../src/core/types.js';
import { measure, report, sink } from './harness.js';

const market = { spot: 84.2, rate: 0.045, yield: 0.012 };
const view: Walk = { drift: 0.1, vol: 0.3 };
const marketWalk: Walk = { drift: 0.045, vol: 0.29 };
const d = (n: number): number => n / 365;

/** An iron condor on an invented freight company (FERNWK), every leg expiring at the horizon. */
const condor: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: d(45),
  view,
  legs: [
    { qty: 1, kind: 'put', strike: 72, years: d(45), iv: 0.34, entry: 0.55 },
    { qty: -1, kind: 'put', strike: 78, years: d(45), iv: 0.31, entry: 1.4 },
    { qty: -1, kind: 'call', strike: 90, years: d(45), iv: 0.28, entry: 1.25 },
    { qty: 1, kind: 'call', strike: 96, years: d(45), iv: 0.27, entry: 0.45 },
  ],
};
const condorLevels = { target: 80, stop: -200 };

/** Four legs with staggered expiries, checked a month before the first one. */
const staggered: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: d(30),
  view,
  legs: [
    { qty: 1, kind: 'put', strike: 75, years: d(60), iv: 0.33, entry: 1.1 },
    { qty: -2, kind: 'put', strike: 80, years: d(60), iv: 0.31, entry: 2.2 },
    { qty: -1, kind: 'call', strike: 90, years: d(90), iv: 0.28, entry: 2.3 },
    { qty: 2, kind: 'call', strike: 95, years: d(120), iv: 0.27, entry: 1.9 },
  ],
};
const staggeredLevels = { target: 150, stop: -150 };

function convergence(name: string, input: CheckInput, lv: { target: number; stop: number }): void {
  const ref = exitGrid(input, lv, [view, marketWalk], { nx: 1600, nt: 3200 });
  const rv = exitFiguresPde(ref, view, input.market.yield);
  const rm = exitFiguresPde(ref, marketWalk, input.market.yield);
  console.log(`  convergence (${name}), errors against nx 1600, nt 3200 (view target ${rv.probTarget.toFixed(6)}, stop ${rv.probStop.toFixed(6)}):`);
  console.log('     nx    nt  view target  view stop   mkt target   mkt stop    E[exit P&L]');
  for (const [nx, nt] of [
    [50, 100],
    [100, 200],
    [200, 400],
    [400, 800],
    [800, 1600],
  ]) {
    const g = exitGrid(input, lv, [view, marketWalk], { nx, nt });
    const v = exitFiguresPde(g, view, input.market.yield);
    const m = exitFiguresPde(g, marketWalk, input.market.yield);
    const e = (x: number): string => x.toExponential(2).padStart(11);
    console.log(
      `  ${String(nx).padStart(5)} ${String(nt).padStart(5)} ${e(v.probTarget - rv.probTarget)} ${e(v.probStop - rv.probStop)} ${e(m.probTarget - rm.probTarget)} ${e(m.probStop - rm.probStop)} ${e(v.expectedPnl - rv.expectedPnl)}${nx === 100 && nt === 200 ? '   ← default' : ''}`,
    );
  }
}

export function run(): void {
  const viewOnly = { marketFigures: false };
  for (const [name, input, lv] of [
    ['iron condor at expiry', condor, condorLevels],
    ['staggered expiries', staggered, staggeredLevels],
  ] as const) {
    console.log(`\n-- ${name}: target ${lv.target}, stop ${lv.stop}`);
    const base = measure(`runCheck (${name})`, () => runCheck(input, viewOnly), 1);
    report(base);
    const m = measure('exitChances, both walks', () => exitChances(input, lv, marketWalk), 1);
    report(m, base, '≤ 20 ms');
    const ex = exitChances(input, lv, marketWalk);
    console.log(
      `  view: target ${ex.view.probTarget.toFixed(5)}, stop ${ex.view.probStop.toFixed(5)}, neither ${ex.view.probNeither.toFixed(5)}, ` +
        `E[exit P&L] ${ex.view.expectedPnl.toFixed(2)}, median ${ex.view.medianExitYears === null ? '—' : (ex.view.medianExitYears * 365).toFixed(1) + ' d'}`,
    );
    convergence(name, input, lv);
  }
  const jumps = { intensity: 2, mean: -0.05, sd: 0.08 };
  const withJumps: CheckInput = { ...staggered, view: { ...view, jumps } };
  console.log('\n-- with jumps (Monte Carlo, 20 000 paths, both walks)');
  const base = measure('runCheck with jumps', () => runCheck(withJumps, viewOnly), 1);
  report(base);
  report(measure('exitChances with jumps', () => exitChances(withJumps, staggeredLevels, marketWalk), 1, 3), base);
  const ex = exitChances(withJumps, staggeredLevels, marketWalk);
  sink(ex.view.probTarget);
  console.log(`  view: target ${ex.view.probTarget.toFixed(4)} ± ${ex.view.stderr!.probTarget.toFixed(4)}, stop ${ex.view.probStop.toFixed(4)} ± ${ex.view.stderr!.probStop.toFixed(4)}`);
}
