/**
 * Outcome engine (src/core/outcome.ts): median time of one check of a four-leg position at expiry
 * (exact closed forms) and before expiry (numerical integration), as ratios against a baseline
 * of one four-leg Black-Scholes-Merton revaluation in the same process: the view's figures, then
 * with the market column, then with the chart's curves (what the service asks for); and the integration error
 * before expiry against a 10× finer mesh (RunOptions.refine = 10).
 */
import { bsmValue } from '../../src/core/bsm.js';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput, Outcome } from '../../src/core/types.js';
import { measure, report, sink } from './harness.js';

const market = { spot: 84.2, rate: 0.045, yield: 0.012 };
const view = { drift: 0.1, vol: 0.3 };

/** An iron condor on an invented freight company (FERNWK), all legs expiring at the horizon. */
const atExpiry: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: 45 / 365,
  view,
  legs: [
    { qty: 1, kind: 'put', strike: 72, years: 45 / 365, iv: 0.34, entry: 0.55 },
    { qty: -1, kind: 'put', strike: 78, years: 45 / 365, iv: 0.31, entry: 1.4 },
    { qty: -1, kind: 'call', strike: 90, years: 45 / 365, iv: 0.28, entry: 1.25 },
    { qty: 1, kind: 'call', strike: 96, years: 45 / 365, iv: 0.27, entry: 0.45 },
  ],
};

/** A four-leg position with staggered expiries, checked a month before the first one. */
const beforeExpiry: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: 30 / 365,
  view,
  legs: [
    { qty: 1, kind: 'put', strike: 75, years: 60 / 365, iv: 0.33, entry: 1.1 },
    { qty: -2, kind: 'put', strike: 80, years: 60 / 365, iv: 0.31, entry: 2.2 },
    { qty: -1, kind: 'call', strike: 90, years: 90 / 365, iv: 0.28, entry: 2.3 },
    { qty: 2, kind: 'call', strike: 95, years: 120 / 365, iv: 0.27, entry: 1.9 },
  ],
};

/** Mixed: two legs expire at the horizon, two live on. */
const mixed: CheckInput = {
  ...beforeExpiry,
  legs: beforeExpiry.legs.map((l, i) => (i < 2 ? { ...l, years: 30 / 365 } : l)),
};

function outcomeError(a: Outcome, b: Outcome, scale: number): { prob: number; expect: number; quant: number } {
  const expect = Math.max(
    Math.abs(a.expectedPnl - b.expectedPnl),
    Math.abs(a.expectedPnlAtRate - b.expectedPnlAtRate),
    Math.abs(a.tailMean05 - b.tailMean05),
  ) / scale;
  const qa = Object.values(a.pnlQuantiles);
  const qb = Object.values(b.pnlQuantiles);
  const quant = Math.max(...qa.map((x, i) => Math.abs(x - qb[i]))) / scale;
  return { prob: Math.abs(a.probProfit - b.probProfit), expect, quant };
}

export function run(): void {
  const fourValues = () => {
    let t = 0;
    for (const l of beforeExpiry.legs) {
      if (l.kind !== 'shares') t += bsmValue({ kind: l.kind, S: 84.2, K: l.strike, T: l.years, r: 0.045, q: 0.012, sigma: l.iv });
    }
    return t;
  };
  const base = measure('baseline: four-leg BSM revaluation', () => {
    let t = 0;
    for (let i = 0; i < 1000; i++) t += fourValues();
    return t;
  }, 1000);
  report(base);
  // the view's figures alone; then with the market column the answers also show
  // (chance of profit, quantiles and worst-5% average under the market walk); then with the curves
  // the chart draws, as the service calls it
  const figuresOnly = { marketFigures: false, curves: false };
  const withMarket = { curves: false };
  const m1 = measure('runCheck four legs at expiry: figures', () => runCheck(atExpiry, figuresOnly), 1);
  report(m1, base, '≤ 30 µs');
  const m1b = measure('  + market column', () => runCheck(atExpiry, withMarket), 1);
  report(m1b, m1, '≤ 30 µs');
  report(measure('  + chart curves (all)', () => runCheck(atExpiry), 1), m1);
  const m2 = measure('runCheck four legs before expiry: figures', () => runCheck(beforeExpiry, figuresOnly), 1);
  report(m2, base);
  report(measure('  + market column', () => runCheck(beforeExpiry, withMarket), 1), m2, '≤ 400 µs');
  report(measure('  + chart curves (all)', () => runCheck(beforeExpiry), 1), m2, '≤ 400 µs');
  const m3 = measure('runCheck two expiring + two live legs: figures', () => runCheck(mixed, figuresOnly), 1);
  report(m3, base);
  report(measure('  + market column', () => runCheck(mixed, withMarket), 1), m3);
  report(measure('  + chart curves (all)', () => runCheck(mixed), 1), m3);

  for (const [name, input] of [['before expiry', beforeExpiry], ['mixed', mixed]] as const) {
    const scale = input.legs.reduce((s, l) => s + Math.abs(l.qty) * input.mult, 0) * input.market.spot;
    const coarse = runCheck(input).outcome;
    const fine = runCheck(input, { refine: 10 }).outcome;
    const e = outcomeError(coarse, fine, scale);
    console.log(
      `error vs 10× finer mesh (${name}): probability ${e.prob.toExponential(2)}, ` +
        `expectations ${e.expect.toExponential(2)} of scale, quantiles ${e.quant.toExponential(2)} of scale ` +
        `(goal 1e-8, 1e-8, 1e-6)`,
    );
    sink(coarse.expectedPnl + fine.expectedPnl);
  }
}
