/**
 * The compute budget's estimate (src/chat/budget.ts) against what it must respect: cost grows with
 * legs, early exercise and jump rate × time, a horizon before expiry with jumps costs more than at
 * expiry (nested Poisson series), a comparison costs the sum of its parts, and `again N` is costed
 * with its changes applied to the logged check — so a cheap logged check cannot be rerun into an
 * expensive one past the budget. The pathological case (one leg, jumps at 100 a year over 30
 * years, horizon 13 years out) measured about 51 s of computing before the budget existed.
 */
import { describe, it, expect } from 'vitest';
import { COMPUTE_BUDGET_DEFAULT, overBudget, requestCost } from '../../src/verbs/ask.js';

const NOW = new Date('2027-01-04T12:00:00Z');
const base = 'check +1 c 100 2028-01-04 iv 30% spot 100 rate 4% drift 8% asof 2027-01-04';
const legs = (n: number) => `check ${Array.from({ length: n }, (_, i) => `+1 c ${80 + i}`).join(' ')} exp 2028-01-04 iv 30% spot 100 rate 4% asof 2027-01-04`;
const cost = (t: string) => requestCost(t, { now: NOW }).units;
const PATHOLOGICAL = 'check +1 c 100 2056-12-01 iv 30% spot 100 rate 4% drift 8% asof 2027-01-04 jumps 100/yr -10% 200% horizon 2040-01-01';

describe('compute budget estimate', () => {
  it('grows with legs, early exercise, jump rate and time', () => {
    expect(cost(legs(2))).toBeLessThan(cost(legs(20)));
    expect(cost(legs(20))).toBeLessThan(cost(`${legs(20)} style american`));
    expect(cost(`${base} jumps 1/yr -5% 10%`)).toBeGreaterThan(cost(base));
    expect(cost(`${base} jumps 50/yr -5% 10%`)).toBeGreaterThan(cost(`${base} jumps 1/yr -5% 10%`));
    expect(cost(`${base.replace('2028-01-04', '2040-01-04')} jumps 10/yr -5% 10%`)).toBeGreaterThan(cost(`${base} jumps 10/yr -5% 10%`));
    expect(cost(`${base} jumps 10/yr -5% 10% horizon 2027-07-01`)).toBeGreaterThan(cost(`${base} jumps 10/yr -5% 10%`));
    expect(cost('help')).toBe(0);
    expect(cost('check +1 c')).toBe(0); // does not parse: the engine's own rejection applies
  });

  it('a comparison costs the sum of its parts', () => {
    const one = cost(`${legs(10)} style american`);
    const cmp = requestCost(`compare ${legs(10).replace(/^check /, '')} style american ; drift 0% ; drift 5%`, { now: NOW });
    expect(cmp.what).toBe('comparison');
    expect(cmp.units).toBe(3 * one);
  });

  it('refuses the pathological request under the default budget, with a caret under jumps; passes an ordinary check', () => {
    expect(overBudget(base, COMPUTE_BUDGET_DEFAULT, { now: NOW })).toBeNull();
    expect(overBudget(`${legs(50)} style american`, COMPUTE_BUDGET_DEFAULT, { now: NOW })).toBeNull();
    const r = overBudget(PATHOLOGICAL, COMPUTE_BUDGET_DEFAULT, { now: NOW });
    expect(r).not.toBeNull();
    expect(r!.at).toBe(PATHOLOGICAL.indexOf('jumps'));
    expect(r!.message).toMatch(/units of computing/);
    expect(r!.message).toContain('^^^^^');
  });

  it('costs `again N` with its changes applied to the logged check', () => {
    const logged = (n: number) => (n === 1 ? base.replace('2028-01-04', '2056-12-01') : undefined);
    expect(overBudget('again 1', COMPUTE_BUDGET_DEFAULT, { now: NOW, logged })).toBeNull();
    const r = overBudget('again 1 jumps 100/yr -10% 200% horizon 2040-01-01', COMPUTE_BUDGET_DEFAULT, { now: NOW, logged });
    expect(r?.message).toMatch(/this rerun needs about/);
    expect(overBudget('again 2 jumps 100/yr -10% 200%', COMPUTE_BUDGET_DEFAULT, { now: NOW, logged })).toBeNull(); // no such entry: the engine says so
  });
});
