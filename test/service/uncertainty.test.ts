/**
 * `drift 9% ± 6%`: the drift's uncertainty in every verb where drift works. The view's figures are
 * under the predictive law (μ ~ N(μ₀, τ²)); the market column does not move; τ = 0 is the known drift.
 *
 * Closed form (docs/design.md §4): ln S_h ~ N(ln S + (μ₀ − q − σ²/2)h, σ²h + τ²h²), so a long call held
 * to expiry is in profit with probability Φ((ln(S/(K + premium)) + (μ₀ − q − σ²/2)h)/√(σ²h + τ²h²)).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { normCdf } from '../../src/core/normal.js';
import { touchProbPredictive } from '../../src/core/predictive.js';
import { SPREAD, answered, ask, desk, figures, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

type J = Record<string, any>;
const CALL = '+1 call 100 2028-01-04 @10 iv 25% spot 100 rate 4% vol 25% asof 2027-01-04';

describe('drift with its uncertainty', () => {
  it('three spellings mean the same; the view moves, the market column does not', async () => {
    const forms = await Promise.all(['drift 9% ± 30%', 'drift 9%±30%', 'drift 9% +/- 30%'].map(async (f) => answered(await ask(null, `${CALL} ${f}`)).json as J));
    expect(figures(forms[1])).toEqual(figures(forms[0]));
    expect(figures(forms[2])).toEqual(figures(forms[0]));
    expect(forms[0].view.driftSe).toBe(0.3);
    const known = answered(await ask(null, `${CALL} drift 9%`)).json as J;
    expect(known.view.driftSe).toBeUndefined();
    expect(forms[0].outcomeMarket).toEqual(known.outcomeMarket);
    expect(forms[0].outcome.pnlQuantiles.p95).toBeGreaterThan(known.outcome.pnlQuantiles.p95 + 100);
    expect(forms[0].knownDrift).toEqual({ probProfit: known.outcome.probProfit, pnlQuantiles: { p05: known.outcome.pnlQuantiles.p05, p95: known.outcome.pnlQuantiles.p95 } });
  });

  it('chance of profit of a call at expiry equals the closed form with the inflated variance', async () => {
    const j = answered(await ask(null, `${CALL} drift 9% ± 30%`)).json as J;
    const h = 365 / 365;
    const want = normCdf((Math.log(100 / 110) + (0.09 - 0.5 * 0.25 ** 2) * h) / Math.sqrt(0.25 ** 2 * h + 0.3 ** 2 * h * h));
    expect(j.outcome.probProfit).toBeCloseTo(want, 10);
  });

  it('τ = 0 is the known drift exactly', async () => {
    const a = answered(await ask(null, SPREAD.replace('drift 9%', 'drift 9% ± 0%'))).json as J;
    const b = answered(await ask(null, SPREAD)).json as J;
    expect(figures(a)).toEqual(figures(b));
    expect(a.knownDrift).toBeUndefined();
  });

  it('the answer sets p05–p95 and chance of profit beside those with the drift known, in one line', async () => {
    const t = answered(await ask(null, `${CALL} drift 9% ± 30%`)).text;
    const line = t.split('\n').find((l) => l.startsWith('drift 9% ± 30%: P&L p05–p95'));
    expect(line).toMatch(/chance of profit \d+\.\d% \(drift known: .* … .*, \d+\.\d%\)$/);
    expect(t).toMatch(/view drift 9% ± 30%, vol 25%/);
  });

  it('compare: a part that writes the drift again drops the uncertainty; other parts inherit it', async () => {
    const a = answered(await ask(d.store, `compare ${CALL} drift 9% ± 30% ; vol 30% ; drift 12%`)).json as J;
    const [p1, p2, p3] = a.checks as J[];
    expect(p1.view.driftSe).toBe(0.3);
    expect(p2.view.driftSe).toBe(0.3);
    expect(p3.view.driftSe).toBeUndefined();
  });

  it('touch: the chance of touching is the mixture over the drift', async () => {
    const j = answered(await ask(null, 'touch 120 by 2028-01-04 spot 100 drift 8% ± 25% vol 25% asof 2027-01-04')).json as J;
    expect(j.view.driftSe).toBe(0.25);
    expect(j.probTouchView).toBeCloseTo(touchProbPredictive({ S: 100, level: 120, T: 365 / 365, drift: 0.08, q: 0, sigma: 0.25, driftSe: 0.25 }), 14);
    expect(j.probTouchMarket).toBe((answered(await ask(null, 'touch 120 by 2028-01-04 spot 100 drift 8% vol 25% asof 2027-01-04')).json as J).probTouchMarket);
  });

  it('again N with the uncertainty as an override', async () => {
    answered(await ask(d.store, `${CALL} drift 9%`));
    const j = answered(await ask(d.store, 'again 1 drift 9% ± 30%')).json as J;
    expect(j.view.driftSe).toBe(0.3);
  });

  it('bad uncertainties get the caret and a corrected example', async () => {
    const r1 = rejected(await ask(null, `${CALL} drift 9% ± 0.06`));
    expect(r1.message).toMatch(/did you mean 6%\?/);
    expect(r1.at).toBe(`${CALL} drift 9% ± `.length);
    const r2 = rejected(await ask(null, `${CALL} drift 9% ± -6%`));
    expect(r2.message).toMatch(/must not be negative/);
    const r3 = rejected(await ask(null, `${CALL} drift 9% ±`));
    expect(r3.message).toMatch(/needs a percentage/);
    const r4 = rejected(await ask(null, `${CALL} drift ± 6%`));
    expect(r4.at).toBe(`${CALL} drift `.length);
    const r5 = rejected(await ask(null, `${CALL} vol 25% ± 6%`.replace(' vol 25% asof', ' asof')));
    expect(r5.kind).toBe('rejected');
  });
});

describe('the compute budget', () => {
  it('a drift uncertainty doubles the estimated cost of a check (the outcome runs again with the drift known)', async () => {
    const { checkCost } = await import('../../src/verbs/budget.js');
    const { parse } = await import('../../src/request/parse.js');
    const cost = (t: string) => {
      const p = parse(t);
      if (!p.ok || p.request.verb !== 'check') throw new Error('not a check');
      return checkCost(p.request);
    };
    const a = cost(`${CALL} drift 9% style american`);
    const b = cost(`${CALL} drift 9% ± 30% style american`);
    expect(b).toBe(2 * a);
  });
});
