/**
 * The market column computed inside one run equals a separate run whose view is the market walk
 * (identity: DESIGN.md §4 defines it as drift = rate with the market vol and the view's jumps), and
 * the expected P&L at the rate equals a separate run whose view is drift = rate with the view's vol.
 */
import { describe, expect, it } from 'vitest';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput } from '../../src/core/types.js';

const base: CheckInput = {
  market: { spot: 100, rate: 0.045, yield: 0.01 },
  mult: 100,
  style: 'european',
  horizonYears: 30 / 365,
  view: { drift: 0.12, vol: 0.3 },
  legs: [
    { qty: 1, kind: 'put', strike: 90, years: 60 / 365, iv: 0.32, entry: 1.2 },
    { qty: -1, kind: 'put', strike: 95, years: 60 / 365, iv: 0.3, entry: 2.1 },
    { qty: -1, kind: 'call', strike: 105, years: 30 / 365, iv: 0.27, entry: 1.9 },
    { qty: 1, kind: 'call', strike: 110, years: 30 / 365, iv: 0.26, entry: 0.8 },
  ],
};

describe('market figures from the same run', () => {
  for (const [name, input] of [
    ['four legs, two live at the horizon', base],
    ['all legs expiring at the horizon', { ...base, legs: base.legs.map((l) => ({ ...l, years: 30 / 365 })) }],
  ] as const) {
    it(name, () => {
      const one = runCheck(input);
      // the market vol: the iv of the leg nearest the money (105 call: |ln 1.05| < |ln 0.95|)
      expect(one.marketVol).toBe(0.27);
      const twin = runCheck({ ...input, view: { drift: input.market.rate, vol: one.marketVol } });
      const atRate = runCheck({ ...input, view: { drift: input.market.rate, vol: input.view.vol } });
      expect(one.outcome.expectedPnlAtRate).toBeCloseTo(atRate.outcome.expectedPnl, 6);
      const rn = one.outcomeMarket!;
      const scale = 4 * 100 * 100;
      expect(rn.probProfit).toBeCloseTo(twin.outcome.probProfit, 9);
      expect(rn.expectedPnl).toBeCloseTo(twin.outcome.expectedPnl, 6);
      expect(Math.abs(rn.tailMean05 - twin.outcome.tailMean05)).toBeLessThan(1e-6 * scale);
      for (const k of ['p05', 'p25', 'p50', 'p75', 'p95'] as const)
        expect(Math.abs(rn.pnlQuantiles[k] - twin.outcome.pnlQuantiles[k])).toBeLessThan(1e-6 * scale);
    });
  }
});
