/**
 * The drift's uncertainty and price histories: what `drift 9% ± 6%` adds to a check (the
 * predictive law itself is free, the known-drift comparison runs the outcome again), the cost
 * of touch averaged over the drift (closed form over the quadrature nodes), and the estimator on
 * 20 years of daily closes — each as a ratio against a baseline measured in the same process.
 */
import { estimateHistory } from '../../src/core/history.js';
import { runCheck } from '../../src/core/outcome.js';
import { knownDriftFigures, touchProbPredictive } from '../../src/core/predictive.js';
import { touchProb } from '../../src/core/touch.js';
import type { CheckInput } from '../../src/core/types.js';
import { measure, report, sink } from './harness.js';

const check: CheckInput = {
  market: { spot: 84.2, rate: 0.045, yield: 0.012 },
  mult: 100,
  style: 'european',
  horizonYears: 30 / 365,
  view: { drift: 0.1, vol: 0.3 },
  legs: [
    { qty: 1, kind: 'put', strike: 75, years: 60 / 365, iv: 0.33, entry: 1.1 },
    { qty: -2, kind: 'put', strike: 80, years: 60 / 365, iv: 0.31, entry: 2.2 },
    { qty: -1, kind: 'call', strike: 90, years: 90 / 365, iv: 0.28, entry: 2.3 },
    { qty: 2, kind: 'call', strike: 95, years: 120 / 365, iv: 0.27, entry: 1.9 },
  ],
};
const unsure: CheckInput = { ...check, view: { ...check.view, driftSe: 0.06 } };

export function run(): void {
  const base = measure('baseline: runCheck four legs before expiry', () => runCheck(check), 1);
  report(base);
  report(measure('  with drift ± 6% (predictive law)', () => runCheck(unsure), 1), base);
  report(measure('  + the known-drift comparison', () => [runCheck(unsure), knownDriftFigures(unsure)], 1), base);

  const t0 = measure('baseline: touchProb closed form ×100', () => {
    let s = 0;
    for (let i = 0; i < 100; i++) s += touchProb({ S: 84.2, level: 95 + i * 0.01, T: 0.5, drift: 0.09, q: 0.012, sigma: 0.3 });
    return s;
  }, 100);
  report(t0);
  report(measure('touch averaged over drift ± 6% ×100', () => {
    let s = 0;
    for (let i = 0; i < 100; i++) s += touchProbPredictive({ S: 84.2, level: 95 + i * 0.01, T: 0.5, drift: 0.09, q: 0.012, sigma: 0.3, driftSe: 0.06 });
    return s;
  }, 100), t0);

  const closes = Array.from({ length: 20 * 252 + 1 }, (_, i) => ({ close: 80 * Math.exp(0.02 * Math.sin(i * 0.7) + i * 1e-4) }));
  report(measure('estimateHistory, 20 years of daily closes', () => estimateHistory(closes), 1), base);
  sink(closes.length);
}
