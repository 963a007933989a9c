/**
 * Targets and stops through the seam: grammar (money and % of |cost|, either alone), the `exits`
 * JSON under both walks, the text line, refusals with a caret, comparisons and `again`, the chart's
 * levels and the compute budget.
 *
 * What the checks rest on:
 * - the same figures from the core directly (src/core/models.ts exitChances), whose numerics are
 *   checked against the double-barrier series and an independent Monte Carlo in test/core;
 * - identities of the request: `target 50%` means 0.5·|cost| in money, `stop 300` a loss of 300;
 *   a check without a target or a stop answers exactly as before (no `exits`, the same figures);
 * - the chance of the stop first is 0 for a stop at exactly the maximum loss of a long call held
 *   before expiry (its value never reaches zero before expiry: common practice).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { exitChances } from '../../src/core/models.js';
import { checkChartConfig } from '../../src/report/chart.js';
import { checkCost } from '../../src/verbs/budget.js';
import { parse } from '../../src/request/parse.js';
import type { CheckRequest } from '../../src/request/types.js';
import { resolveCheck } from '../../src/request/resolve.js';
import { answered, ask, desk, numbersIn, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

const CONDOR =
  '+1 put 72 45d @0.55 iv 34% -1 put 78 45d @1.40 iv 31% -1 call 90 45d @1.25 iv 28% +1 call 96 45d @0.45 iv 27% spot 84.20 rate 4.5% yield 1.2% drift 10% vol 30% asof 2027-01-04';

type Exits = {
  target: number | null;
  stop: number | null;
  currentPnl: number;
  marketVol: number;
  monitoring: string;
  view: { probTarget: number; probStop: number; probNeither: number; expectedPnl: number; medianExitYears: number | null; method: string; stderr?: Record<string, number> };
  market: { probTarget: number; probStop: number; probNeither: number; expectedPnl: number; method: string };
};
const exitsOf = (j: Record<string, unknown>) => j.exits as Exits;

function parsed(text: string): CheckRequest {
  const p = parse(text);
  if (!p.ok || p.request.verb !== 'check') throw new Error(`did not parse: ${text}`);
  return p.request;
}

describe('grammar', () => {
  it('reads money and percentages, signed or not, and keeps where the value was written', async () => {
    const r = parsed(`${CONDOR} target +400 stop -300`);
    expect(r.terms.target).toMatchObject({ value: 400, pct: false, signed: true });
    expect(r.terms.stop).toMatchObject({ value: -300, pct: false, signed: true });
    const text = `${CONDOR} target 50% stop 100%`;
    const q = parsed(text);
    expect(q.terms.target).toMatchObject({ value: 0.5, pct: true, signed: false });
    expect(q.terms.stop).toMatchObject({ value: 1, pct: true, signed: false });
    expect(text.slice(q.terms.stop!.at, q.terms.stop!.at + q.terms.stop!.len)).toBe('100%');
    expect(parsed(`${CONDOR} stop 300`).terms.target).toBeUndefined();
  });

  it('refuses a level that is missing, not a number, zero or twice, with a caret and a corrected example that itself answers', async () => {
    for (const [text, bad] of [
      [`${CONDOR} target`, ''],
      [`${CONDOR} target high`, 'high'],
      [`${CONDOR} stop 0`, '0'],
      [`${CONDOR} target 80 target 90`, 'target'],
    ] as const) {
      const r = rejected(await ask(d.store, text));
      expect(r.message).toMatch(/\^/);
      if (bad) expect(text.slice(r.at, r.at + bad.length)).toBe(bad);
      const example = /Example: (.*)$/m.exec(r.message)![1];
      expect(answered(await ask(null, example)).kind).toBe('answer');
    }
  });

  it('is not a term of touch or iv', async () => {
    const r = rejected(await ask(d.store, 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25% target 100'));
    expect(r.message).toMatch(/target does not apply to touch/);
  });
});

describe('a check with a target and a stop', () => {
  it('carries `exits` under both walks, the same figures as the core, and one line saying monitoring is continuous', async () => {
    const a = answered(await ask(d.store, `${CONDOR} target +80 stop -200`));
    const e = exitsOf(a.json);
    expect(e.target).toBe(80);
    expect(e.stop).toBe(-200);
    expect(e.monitoring).toBe('continuous');
    expect(e.view.method).toBe('finite-differences');
    expect(Math.abs(e.view.probTarget + e.view.probStop + e.view.probNeither - 1)).toBeLessThan(1e-9);
    expect(Math.abs(e.market.probTarget + e.market.probStop + e.market.probNeither - 1)).toBeLessThan(1e-9);
    // the market walk: drift = rate, vol = the iv of the leg nearest the money (the 90 call, 28%)
    expect(e.marketVol).toBe(0.28);
    const rq = resolveCheck(parsed(CONDOR), { today: '2027-01-04' });
    if (!rq.ok) throw new Error('resolve');
    const core = exitChances(rq.check.input, { target: 80, stop: -200 }, { drift: 0.045, vol: 0.28 });
    expect(e.view.probTarget).toBe(core.view.probTarget);
    expect(e.market.probStop).toBe(core.market.probStop);
    expect(e.currentPnl).toBeCloseTo(core.current, 12);
    const line = a.text.split('\n').find((l) => l.startsWith('Exits'));
    expect(line).toMatch(/monitoring is continuous/);
    expect(line).toMatch(/target \+80\.00 first/);
    expect(line).toMatch(/stop -200\.00 first/);
    expect(numbersIn(a.json).every(Number.isFinite)).toBe(true);
  });

  it('a percentage is of the position’s |cost|; an unsigned stop is a loss; either alone', async () => {
    const base = answered(await ask(null, CONDOR)).json as { position: { cost: number } };
    const cost = Math.abs(base.position.cost);
    const p = exitsOf(answered(await ask(null, `${CONDOR} target 50% stop 100%`)).json);
    expect(p.target).toBeCloseTo(0.5 * cost, 9);
    expect(p.stop).toBeCloseTo(-cost, 9);
    const s = exitsOf(answered(await ask(null, `${CONDOR} stop 300`)).json);
    expect(s.stop).toBe(-300);
    expect(s.target).toBeNull();
    expect(s.view.probTarget).toBe(0);
    const t = exitsOf(answered(await ask(null, `${CONDOR} target 100`)).json);
    expect(t.stop).toBeNull();
    expect(t.view.probStop).toBe(0);
  });

  it('without a target or a stop the answer is exactly today’s (no exits, the same figures and text)', async () => {
    const a = answered(await ask(null, CONDOR));
    expect(a.json.exits).toBeUndefined();
    const b = answered(await ask(null, `${CONDOR} target +80`));
    const { exits: _e, ...rest } = b.json as Record<string, unknown>;
    expect(rest).toEqual(a.json);
    expect(b.text.split('\n').filter((l) => !l.startsWith('Exits'))).toEqual(a.text.split('\n'));
  });

  it('a stop at exactly the maximum loss of a long call held before expiry is never reached before the horizon', async () => {
    const text = '+1 call 100 3m @2.50 iv 30% spot 100 rate 3% drift 8% horizon 1m asof 2027-01-04 stop 100%';
    const e = exitsOf(answered(await ask(null, text)).json);
    expect(e.stop).toBe(-250);
    expect(e.view.probStop).toBeLessThan(1e-9);
  });

  it('with jumps: Monte Carlo with standard errors, and the line says so', async () => {
    const a = answered(await ask(null, '+1 put 80 3m iv 30% spot 84.20 rate 4% drift 6% jumps 0.5/yr -8% 12% asof 2027-01-04 target 100 stop 200'));
    const e = exitsOf(a.json);
    expect(e.view.method).toBe('monte-carlo');
    expect(e.view.stderr!.probTarget).toBeGreaterThan(0);
    expect(a.text).toMatch(/Monte Carlo, 20,000 paths/);
  });
});

describe('levels that make no sense for the position get a caret, the reason and an example that answers', () => {
  const cases: [string, string, RegExp][] = [
    [`${CONDOR} target -50 stop -200`, '-50', /not above the position's P&L now/],
    [`${CONDOR} target 80 stop +10`, '+10', /not below the position's P&L now/],
    [`${CONDOR} target 80 stop -900`, '-900', /below the maximum loss .*can never be reached/],
    [`${CONDOR} style american target 80`, '80', /European exercise only/],
  ];
  for (const [text, bad, why] of cases) {
    it(`${bad}: ${why.source}`, async () => {
      const r = rejected(await ask(d.store, text));
      expect(r.message).toMatch(why);
      expect(text.slice(r.at, r.at + bad.length)).toBe(bad);
      const example = /Example: (.*)$/m.exec(r.message)![1];
      expect(answered(await ask(null, example)).kind).toBe('answer');
    });
  }

  it('a percentage on a position that costs nothing', async () => {
    const text = '+1 call 100 3m @3 iv 30% -1 put 90 3m @3 iv 30% spot 100 asof 2027-01-04 target 50%';
    const r = rejected(await ask(null, text));
    expect(r.message).toMatch(/costs 0\.00/);
    expect(answered(await ask(null, /Example: (.*)$/m.exec(r.message)![1])).kind).toBe('answer');
  });

  it('nothing is logged for a refused level', async () => {
    rejected(await ask(d.store, `${CONDOR} target -50`));
    expect(answered(await ask(d.store, 'log')).text).not.toMatch(/#1/);
  });
});

describe('comparisons, again and the chart', () => {
  it('a comparison inherits the levels and shows them per part', async () => {
    const a = answered(await ask(d.store, `compare ${CONDOR} target 80 stop 200 ; drift 0% ; target 50%`));
    const checks = a.json.checks as Record<string, unknown>[];
    expect(checks.map((c) => exitsOf(c).stop)).toEqual([-200, -200, -200]);
    expect(exitsOf(checks[2]).target).toBeCloseTo(0.5 * 165, 9);
    expect(a.text).toMatch(/target first/);
    expect(a.text).toMatch(/monitoring is continuous/);
    const r = rejected(await ask(d.store, `compare ${CONDOR} ; target -50`));
    expect(r.message).toMatch(/part 2 of the comparison/);
  });

  it('again N takes a target added to a logged check', async () => {
    answered(await ask(d.store, CONDOR));
    const a = answered(await ask(d.store, 'again 1 target 80 stop 200'));
    expect(exitsOf(a.json).target).toBe(80);
  });

  it('the chart marks both levels on the P&L axis and in the legend', async () => {
    const a = answered(await ask(null, `${CONDOR} target +80 stop -200`));
    const cfg = checkChartConfig(a.chart as Parameters<typeof checkChartConfig>[0]);
    const lines = cfg.options!.plugins!.kolmo!.hlines ?? [];
    expect(lines.filter((h) => h.axis === 'yPnl').map((h) => h.y).sort((x, y) => (x ?? 0) - (y ?? 0))).toEqual([-200, 0, 80]);
    expect(lines.find((h) => h.y === 80)!.label).toMatch(/target/);
    const labels = cfg.data.datasets.map((ds) => ds.label);
    expect(labels).toContain('target (P&L level, right axis)');
    expect(labels).toContain('stop (P&L level, right axis)');
    const y = cfg.options!.scales!.yPnl as { min: number; max: number };
    expect(y.min).toBeLessThanOrEqual(-200);
    expect(y.max).toBeGreaterThanOrEqual(80);
  });

  it('targets and stops are costed in the compute budget, more with jumps', async () => {
    const plain = checkCost(parsed(CONDOR));
    const withExits = checkCost(parsed(`${CONDOR} target 80`));
    const withJumps = checkCost(parsed(`${CONDOR} jumps 1/yr -5% 10% target 80`));
    expect(withExits).toBeGreaterThan(plain);
    expect(withJumps - checkCost(parsed(`${CONDOR} jumps 1/yr -5% 10%`))).toBeGreaterThan(withExits - plain);
  });
});
