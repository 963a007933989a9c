/**
 * Early exercise and jumps inside the outcome engine: identities that hold whatever the numbers.
 */
import { describe, expect, it } from 'vitest';
import { runCheck } from '../../src/core/outcome.js';
import { americanImpliedVol } from '../../src/core/american.js';
import { mertonImpliedVol } from '../../src/core/merton.js';
import type { CheckCore, CheckInput, LegInput } from '../../src/core/types.js';

const legs: LegInput[] = [
  { qty: 1, kind: 'put', strike: 90, years: 90 / 365, iv: 0.3, entry: null },
  { qty: -1, kind: 'put', strike: 95, years: 90 / 365, iv: 0.3, entry: null },
  { qty: -1, kind: 'call', strike: 105, years: 90 / 365, iv: 0.3, entry: null },
  { qty: 1, kind: 'call', strike: 110, years: 90 / 365, iv: 0.3, entry: null },
];
const base: CheckInput = {
  market: { spot: 100, rate: 0.05, yield: 0.0 },
  mult: 100,
  style: 'european',
  horizonYears: 30 / 365,
  view: { drift: 0.1, vol: 0.3 },
  legs,
};

function close(a: CheckCore, b: CheckCore, tol: number, probTol = 1e-9): void {
  const o = a.outcome;
  const p = b.outcome;
  expect(Math.abs(o.probProfit - p.probProfit)).toBeLessThan(probTol);
  for (const k of ['expectedPnl', 'expectedPnlAtRate', 'tailMean05'] as const) expect(Math.abs(o[k] - p[k])).toBeLessThan(tol);
  for (const k of ['p05', 'p50', 'p95'] as const) expect(Math.abs(o.pnlQuantiles[k] - p.pnlQuantiles[k])).toBeLessThan(tol);
  a.legs.forEach((l, i) => expect(Math.abs(l.value - b.legs[i].value)).toBeLessThan(tol / 100));
}

describe('Merton jumps in a check', () => {
  it('with zero intensity every figure equals the lognormal answer', () => {
    const a = runCheck(base);
    const b = runCheck({ ...base, view: { ...base.view, jumps: { intensity: 0, mean: -0.1, sd: 0.15 } } });
    close(a, b, 1e-9);
  });

  it('risk-neutral identity holds under jumps: drift = rate, vol = iv, entries at fair ⇒ expected P&L = entry vs fair + carry', () => {
    // the Merton price is the discounted expectation under the compensated jump walk (Merton 1976),
    // so the discounted price revalued at the horizon is a martingale under that walk
    const jumps = { intensity: 0.8, mean: -0.08, sd: 0.12 };
    const c = runCheck({ ...base, view: { drift: 0.05, vol: 0.3, jumps } });
    const a = c.outcome.attribution;
    expect(Math.abs(c.outcome.expectedPnl - (a.entryVsFair + a.carry))).toBeLessThan(1e-6 * 4 * 100 * 100);
    expect(Math.abs(a.legIv)).toBeLessThan(1e-6 * 4 * 100 * 100);
  });

  it('jumps fatten the tails: the worst-5% average of a short strangle is worse', () => {
    const strangle: CheckInput = {
      ...base,
      horizonYears: 90 / 365,
      legs: [
        { qty: -1, kind: 'put', strike: 90, years: 90 / 365, iv: 0.25, entry: 1.5 },
        { qty: -1, kind: 'call', strike: 110, years: 90 / 365, iv: 0.25, entry: 1.5 },
      ],
      view: { drift: 0.05, vol: 0.25 },
    };
    const plain = runCheck(strangle);
    const fat = runCheck({ ...strangle, view: { ...strangle.view, jumps: { intensity: 2, mean: -0.05, sd: 0.1 } } });
    expect(fat.outcome.tailMean05).toBeLessThan(plain.outcome.tailMean05);
  });

  it('the diffusion iv recovered from a Merton leg value is the leg iv', () => {
    const jumps = { intensity: 0.8, mean: -0.08, sd: 0.12 };
    const c = runCheck({ ...base, view: { drift: 0.05, vol: 0.3, jumps } });
    const r = mertonImpliedVol({ kind: 'put', S: 100, K: 90, T: 90 / 365, r: 0.05, q: 0 }, c.legs[0].value, jumps);
    expect(r.ok && r.iv).toBeCloseTo(0.3, 7);
  });
});

describe('American exercise in a check', () => {
  it('an American call on a stock without yield is the European call, in value and outcome (Merton 1973)', () => {
    const calls: CheckInput = {
      ...base,
      legs: [
        { qty: 1, kind: 'call', strike: 100, years: 120 / 365, iv: 0.3, entry: 6 },
        { qty: -1, kind: 'call', strike: 110, years: 120 / 365, iv: 0.28, entry: 2.5 },
      ],
    };
    const eu = runCheck(calls);
    const am = runCheck({ ...calls, style: 'american' });
    close(eu, am, 5e-4 * 100, 1e-4); // solver accuracy ~1e-4 per share, × multiplier (issue 6)
  });

  it('an American put is worth at least the European put', () => {
    const p: CheckInput = { ...base, legs: [{ qty: 1, kind: 'put', strike: 105, years: 180 / 365, iv: 0.3, entry: null }] };
    const eu = runCheck(p).legs[0].value;
    const am = runCheck({ ...p, style: 'american' }).legs[0].value;
    expect(am).toBeGreaterThan(eu);
  });

  it('the discounted American put is a supermartingale: with drift = rate and vol = iv the early exercise given up is ≤ 0 and there is no vol part', () => {
    // early exercise makes e^{−rt}V(t) a supermartingale under the risk-neutral walk (optimal stopping)
    const p: CheckInput = {
      ...base,
      market: { spot: 100, rate: 0.08, yield: 0 },
      view: { drift: 0.08, vol: 0.3 },
      horizonYears: 60 / 365,
      legs: [{ qty: 1, kind: 'put', strike: 110, years: 180 / 365, iv: 0.3, entry: null }],
    };
    const c = runCheck({ ...p, style: 'american' });
    expect(c.outcome.attribution.earlyExercise).toBeLessThanOrEqual(1e-6);
    // and strictly so for a put this deep with a high rate: exercise has value
    expect(c.outcome.attribution.earlyExercise).toBeLessThan(-0.01);
    expect(Math.abs(c.outcome.attribution.vol)).toBeLessThan(1e-9);
    expect(Math.abs(c.outcome.attribution.legIv)).toBeLessThan(1e-6);
  });

  it('the American iv recovered from the leg value is the leg iv', () => {
    const p: CheckInput = { ...base, style: 'american', legs: [{ qty: 1, kind: 'put', strike: 105, years: 180 / 365, iv: 0.32, entry: null }] };
    const v = runCheck(p).legs[0].value;
    const r = americanImpliedVol({ kind: 'put', S: 100, K: 105, T: 180 / 365, r: 0.05, q: 0 }, v);
    expect(r.ok && r.iv).toBeCloseTo(0.32, 4);
  });

  it('with jumps too: an American call without yield is the European (Merton) call, and an American put is worth more', () => {
    // no early exercise of a call on a stock paying nothing holds for any walk (Merton 1973)
    const jumps = { intensity: 0.6, mean: -0.07, sd: 0.1 };
    const calls: CheckInput = {
      ...base,
      view: { drift: 0.1, vol: 0.3, jumps },
      legs: [{ qty: 1, kind: 'call', strike: 100, years: 120 / 365, iv: 0.3, entry: 6 }],
    };
    const eu = runCheck(calls);
    const am = runCheck({ ...calls, style: 'american' });
    close(eu, am, 1e-3 * 100, 1e-4);
    const put: CheckInput = { ...calls, legs: [{ qty: 1, kind: 'put', strike: 105, years: 180 / 365, iv: 0.3, entry: null }] };
    expect(runCheck({ ...put, style: 'american' }).legs[0].value).toBeGreaterThan(runCheck(put).legs[0].value);
  });
});
