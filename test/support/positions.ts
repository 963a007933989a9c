/**
 * A position's P&L at the horizon written independently of the outcome engine, straight from its
 * definition (docs/design.md §3): legs expiring at the horizon at intrinsic value, live legs revalued
 * by Black-Scholes-Merton with their own iv and remaining time, shares at the spot; entries at
 * fair value where none is given.
 */
import { bsmValue } from '../../src/core/bsm.js';
import type { CheckInput } from '../../src/core/types.js';

export function pnlFn(input: CheckInput): (S: number) => number {
  const { spot, rate, yield: q } = input.market;
  const h = input.horizonYears;
  const parts = input.legs.map((l) => {
    const m = l.kind === 'shares' ? 1 : input.mult;
    const fair = l.kind === 'shares' ? spot : bsmValue({ kind: l.kind, S: spot, K: l.strike, T: l.years, r: rate, q, sigma: l.iv });
    const entry = l.entry ?? fair;
    const value = (S: number): number => {
      if (l.kind === 'shares') return S;
      if (l.years - h <= 1e-9) return l.kind === 'call' ? Math.max(S - l.strike, 0) : Math.max(l.strike - S, 0);
      return bsmValue({ kind: l.kind, S, K: l.strike, T: l.years - h, r: rate, q, sigma: l.iv });
    };
    return { c: l.qty * m, entry, value };
  });
  return (S) => parts.reduce((t, p) => t + p.c * (p.value(S) - p.entry), 0);
}
