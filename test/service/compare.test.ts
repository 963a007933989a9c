/**
 * `compare A ; B ; …`: each part inherits the previous part's terms and overrides what it states,
 * legs written replace the legs; up to six checks; one answer with a column each, one chart, one
 * log entry.
 *
 * What the checks rest on:
 * - identities: a part means the check written out with the inherited terms (docs/design.md §2), so
 *   its figures equal that check asked on its own; put-call parity C − P = S e^{−qT} − K e^{−rT}
 *   (Hull, Options, Futures, and Other Derivatives, put-call parity for European options);
 * - Hull, Options, Futures, and Other Derivatives, the Black-Scholes-Merton worked example
 *   (S0 = 42, K = 40, r = 10%, σ = 20%, T = 0.5: c = 4.76, p = 0.81 — from memory).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { money, pct } from '../../src/report/format.js';
import { SPREAD, answered, ask, desk, figures, numbersIn, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

type CheckOut = Record<string, unknown> & { outcome: { probProfit: number; expectedPnl: number }; position: { value: number; cost: number } };
const checksOf = (a: { json: Record<string, unknown> }) => a.json.checks as CheckOut[];

describe('compare', () => {
  it('each part inherits the one before and overrides what it states: every column equals its check asked on its own', async () => {
    const a = answered(await ask(d.store, `compare ${SPREAD} ; drift 0% ; vol 40% horizon 2027-02-15`));
    const parts = checksOf(a);
    expect(parts).toHaveLength(3);
    const direct = await Promise.all(
      [SPREAD, SPREAD.replace('drift 9%', 'drift 0%'), SPREAD.replace('drift 9%', 'drift 0%') + ' vol 40% horizon 2027-02-15'].map(async (t) => answered(await ask(null, t)).json),
    );
    parts.forEach((p, k) => expect(figures(p)).toEqual(figures(direct[k])));
  });

  it('legs written in a part replace the legs; its terms are still inherited', async () => {
    const a = answered(await ask(d.store, `compare ${SPREAD} ; +1 put 95 2027-03-19 @2.00 iv 31%`));
    const [first, second] = checksOf(a);
    expect((first.legs as unknown[]).length).toBe(2);
    expect(second.legs).toHaveLength(1);
    expect((second.legs as { type: string; strike: number }[])[0]).toMatchObject({ type: 'put', strike: 95 });
    expect(second.market).toEqual(first.market);
    expect(second.view).toMatchObject({ drift: 0.09 });
  });

  it('one answer: a column per check with cost, fair value, chance of profit, expected P&L, view edge, p05, p95, worst-5% average, max loss', async () => {
    const a = answered(await ask(d.store, `compare ${SPREAD} ; drift 0% ; drift 15%`));
    const rows = a.text.split('\n');
    const row = (label: string) => rows.find((l) => l.startsWith(label))!;
    for (const label of ['cost', 'fair value', 'chance of profit', 'expected P&L', 'view edge', 'P&L p05', 'P&L p95', 'worst-5% average', 'max loss']) {
      expect(row(label), label).toBeDefined();
    }
    const cells = (label: string) => row(label).slice(label.length).trim().split(/\s{2,}/);
    const cs = checksOf(a);
    expect(cells('chance of profit')).toEqual(cs.map((c) => pct(c.outcome.probProfit)));
    expect(cells('expected P&L')).toEqual(cs.map((c) => money(c.outcome.expectedPnl, { sign: true })));
    expect(a.headline).toContain('comparison of 3');
    expect(a.chart).toMatchObject({ kind: 'compare' });
    expect((a.chart as { inputs: unknown[] }).inputs).toHaveLength(3);
    expect(numbersIn(a.json).every(Number.isFinite)).toBe(true);
  });

  it('is logged as one entry, and up to six checks are accepted', async () => {
    const six = `compare ${SPREAD} ; drift 1% ; drift 2% ; drift 3% ; drift 4% ; drift 5%`;
    const a = answered(await ask(d.store, six));
    expect(checksOf(a)).toHaveLength(6);
    expect(a.logNumber).toBe(1);
    const entries = (await d.store.recent('C0DESKA', 10));
    expect(entries).toHaveLength(1);
    expect(entries[0]).toMatchObject({ verb: 'compare', text: six });
    expect((entries[0].summary.parts as unknown[]).length).toBe(6);
    expect(a.text.split('\n').find((l) => /^\s+1\s+2\s+3\s+4\s+5\s+6$/.test(l))).toBeDefined();
  });

  it('the seventh check is rejected clearly, with the caret on it, and nothing is logged', async () => {
    const seven = `compare ${SPREAD} ; drift 1% ; drift 2% ; drift 3% ; drift 4% ; drift 5% ; drift 6%`;
    const r = rejected(await ask(d.store, seven));
    expect(r.message).toContain('at most 6 checks');
    expect(r.message).toContain('has 7');
    expect(r.at).toBe(seven.indexOf('drift 6%'));
    // the example is the asker's own comparison without the parts beyond six
    expect(r.message.split('\n').at(-1)).toBe(`Example: compare ${SPREAD} ; drift 1% ; drift 2% ; drift 3% ; drift 4% ; drift 5%`);
    expect(await d.store.recent('C0DESKA', 10)).toEqual([]);
  });

  it('a part that cannot be resolved is named, with the caret in the whole request', async () => {
    const text = `compare ${SPREAD} ; horizon 2027-06-01`;
    const r = rejected(await ask(d.store, text));
    expect(r.message).toContain('part 2 of the comparison');
    expect(r.at).toBeGreaterThanOrEqual(text.indexOf('horizon 2027-06-01'));
    expect(await d.store.recent('C0DESKA', 10)).toEqual([]);
  });

  it('a call beside a put satisfies put-call parity and matches the textbook example', async () => {
    // T = 182/365 instead of Hull's 0.5 moves c and p by about θ × 0.0014 ≈ 0.006, inside the tolerance
    const a = answered(await ask(d.store, 'compare +1 call 40 2027-07-02 iv 20% spot 42 rate 10% asof 2027-01-01 ; +1 put 40 2027-07-02 iv 20%'));
    const [c, p] = checksOf(a);
    const T = 182 / 365;
    const parity = 100 * (42 - 40 * Math.exp(-0.1 * T));
    expect(c.position.value - p.position.value).toBeCloseTo(parity, 8);
    expect(Math.abs(c.position.value / 100 - 4.76)).toBeLessThan(0.015);
    expect(Math.abs(p.position.value / 100 - 0.81)).toBeLessThan(0.015);
  });
});
