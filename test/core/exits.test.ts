/**
 * Targets and stops (src/core/exits.ts, exits-mc.ts, exit-region.ts, exit-chances.ts) against
 * published double-barrier results for drifted Brownian motion, an independent Monte Carlo with a
 * Brownian-bridge correction, optional stopping of martingales and the horizon outcome.
 */
import { describe, expect, it } from 'vitest';
import { exitChances } from '../../src/core/models.js';
import { pnlSurface, segmentsAt } from '../../src/core/exit-region.js';
import { exitFiguresMc } from '../../src/core/exits-mc.js';
import { exitFiguresPde, exitGrid, solveExitBackward, solveExitForward } from '../../src/core/exits.js';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput, LegInput, Walk } from '../../src/core/types.js';
import { byHorizon, farUpper } from '../support/double-barrier.js';
import { referenceExitsMc } from '../support/exits-mc.js';

const market = { spot: 84.2, rate: 0.045, yield: 0.012 };
const view: Walk = { drift: 0.1, vol: 0.3 };
const marketWalk: Walk = { drift: 0.045, vol: 0.29 };

/** 100 shares of an invented freight company bought at `entry` */
function sharesOnly(spot: number, entry: number, drift: number, vol: number, q: number, h: number): CheckInput {
  return {
    market: { spot, rate: 0.04, yield: q },
    mult: 100,
    style: 'european',
    horizonYears: h,
    view: { drift, vol },
    legs: [{ qty: 100, kind: 'shares', strike: 0, years: 0, iv: 0, entry }],
  };
}

const d = (n: number): number => n / 365;
const leg = (qty: number, kind: 'call' | 'put', strike: number, days: number, iv: number, entry: number | null): LegInput => ({
  qty,
  kind,
  strike,
  years: d(days),
  iv,
  entry,
});

/** an iron condor, every leg expiring at the horizon */
const condor: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: d(45),
  view,
  legs: [leg(1, 'put', 72, 45, 0.34, 0.55), leg(-1, 'put', 78, 45, 0.31, 1.4), leg(-1, 'call', 90, 45, 0.28, 1.25), leg(1, 'call', 96, 45, 0.27, 0.45)],
};

/** four legs with staggered expiries, checked a month before the first one */
const staggered: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: d(30),
  view,
  legs: [leg(1, 'put', 75, 60, 0.33, 1.1), leg(-2, 'put', 80, 60, 0.31, 2.2), leg(-1, 'call', 90, 90, 0.28, 2.3), leg(2, 'call', 95, 120, 0.27, 1.9)],
};

/** a short straddle held to a horizon before expiry: the region is two intervals once time decay pays the target */
const straddle: CheckInput = {
  market,
  mult: 100,
  style: 'european',
  horizonYears: d(40),
  view: { drift: 0.06, vol: 0.25 },
  legs: [leg(-1, 'call', 85, 60, 0.3, null), leg(-1, 'put', 85, 60, 0.3, null)],
};

describe('shares alone: the levels are fixed spot levels (drifted Brownian motion between two barriers)', () => {
  // target +1000 and stop −800 on 100 shares bought at 100: spot levels 110 and 92
  const cases = [
    { drift: 0.08, vol: 0.3, q: 0.01, h: 0.25 },
    { drift: -0.2, vol: 0.2, q: 0.0, h: 0.5 },
    { drift: 0.3, vol: 0.45, q: 0.02, h: 0.1 },
  ];
  for (const c of cases) {
    it(`matches the eigenfunction series by the horizon to 1e-6 (Borodin & Salminen; from memory) — drift ${c.drift}, vol ${c.vol}, ${c.h}y`, () => {
      const input = sharesOnly(100, 100, c.drift, c.vol, c.q, c.h);
      const nu = c.drift - c.q - 0.5 * c.vol * c.vol;
      const ref = byHorizon(nu, c.vol, -Math.log(0.92), Math.log(1.1), c.h);
      const f = exitFiguresPde(exitGrid(input, { target: 1000, stop: -800 }, [input.view], { nx: 1600, nt: 1600 }), input.view, c.q);
      expect(Math.abs(f.probTarget - ref.up)).toBeLessThan(1e-6);
      expect(Math.abs(f.probStop - ref.down)).toBeLessThan(1e-6);
      expect(Math.abs(f.probNeither - (1 - ref.up - ref.down))).toBeLessThan(2e-6);
      // closed at the level reached, else at the horizon: E = P_T·target + P_S·stop + E[P&L; neither]
      expect(f.expectedPnl).toBeGreaterThan(-800);
      expect(f.expectedPnl).toBeLessThan(1000);
    });
  }

  it('far horizon: P(target first) = (1 − e^{2νa/σ²}) / (e^{−2νb/σ²} − e^{2νa/σ²}) (scale function; from memory)', () => {
    for (const drift of [0.15, 0.01, -0.1]) {
      const vol = 0.3;
      const q = 0;
      const input = sharesOnly(100, 100, drift, vol, q, 40);
      const nu = drift - q - 0.5 * vol * vol;
      const f = exitFiguresPde(exitGrid(input, { target: 1000, stop: -800 }, [input.view], { nx: 800, nt: 800 }), input.view, q);
      expect(Math.abs(f.probTarget - farUpper(nu, vol, -Math.log(0.92), Math.log(1.1)))).toBeLessThan(1e-5);
    }
  });

  it('no drift in ln S: P(target first) → a/(a + b) (from memory)', () => {
    const vol = 0.3;
    const input = sharesOnly(100, 100, 0.5 * vol * vol, vol, 0, 40);
    const a = -Math.log(0.92);
    const b = Math.log(1.1);
    const f = exitFiguresPde(exitGrid(input, { target: 1000, stop: -800 }, [input.view], { nx: 800, nt: 800 }), input.view, 0);
    expect(Math.abs(f.probTarget - a / (a + b))).toBeLessThan(1e-5);
  });

  it('the median exit time is where the series gives P(exit by t) = ½ (from memory, as above)', () => {
    const c = { drift: 0.08, vol: 0.3, q: 0.01, h: 0.5 };
    const input = sharesOnly(100, 100, c.drift, c.vol, c.q, c.h);
    const nu = c.drift - c.q - 0.5 * c.vol * c.vol;
    const a = -Math.log(0.92);
    const b = Math.log(1.1);
    const exitBy = (t: number): number => {
      const r = byHorizon(nu, c.vol, a, b, t);
      return r.up + r.down;
    };
    let lo = 1e-4;
    let hi = c.h;
    for (let i = 0; i < 60; i++) {
      const m = 0.5 * (lo + hi);
      if (exitBy(m) < 0.5) lo = m;
      else hi = m;
    }
    const f = exitFiguresPde(exitGrid(input, { target: 1000, stop: -800 }, [input.view]), input.view, c.q);
    expect(f.medianExitYears).not.toBeNull();
    // days: within a tenth of a day
    expect(Math.abs(f.medianExitYears! - lo) * 365).toBeLessThan(0.1);
  });

  it('no median when most paths are held to the horizon', () => {
    const input = sharesOnly(100, 100, 0.08, 0.3, 0.01, 0.02);
    const f = exitFiguresPde(exitGrid(input, { target: 1000, stop: -800 }, [input.view]), input.view, 0.01);
    expect(f.probNeither).toBeGreaterThan(0.5);
    expect(f.medianExitYears).toBeNull();
  });
});

describe('multi-leg positions', () => {
  it('the region of a short straddle is two intervals once the target is within reach, with the P&L at each cut on its level', () => {
    const s = pnlSurface(straddle);
    const lv = { target: 150, stop: -400 };
    const x0 = Math.log(84.2);
    const scan = Float64Array.from({ length: 81 }, (_, i) => x0 - 0.6 + (1.2 * i) / 80);
    const late = segmentsAt(s.at(d(39)), scan, lv);
    expect(late.kinds).toEqual(['stop', 'in', 'target', 'in', 'stop']);
    const p = s.at(d(39));
    for (let j = 0; j < late.cuts.length; j++) {
      const level = late.kinds[j] === 'target' || late.kinds[j + 1] === 'target' ? 150 : -400;
      expect(Math.abs(p(Math.exp(late.cuts[j])) - level)).toBeLessThan(1e-6);
    }
    // early on the P&L near the strike is below the target: one interval
    expect(segmentsAt(s.at(0), scan, lv).kinds).toEqual(['stop', 'in', 'stop']);
  });

  it('finds a pair of crossings hidden between two scan points', () => {
    const s = pnlSurface(straddle);
    const x0 = Math.log(84.2);
    // scan points far apart: the target region around the strike falls between two of them
    const scan = Float64Array.from([x0 - 0.6, x0 - 0.3, Math.log(85) - 0.04, Math.log(85) + 0.05, x0 + 0.3, x0 + 0.6]);
    const p = s.at(d(39.5));
    const lv = { target: 300, stop: -400 };
    const seg = segmentsAt(p, scan, lv);
    expect(seg.kinds).toContain('target');
    for (let j = 0; j < seg.cuts.length; j++) {
      const level = seg.kinds[j] === 'target' || seg.kinds[j + 1] === 'target' ? 300 : -400;
      expect(Math.abs(p(Math.exp(seg.cuts[j])) - level)).toBeLessThan(1e-6);
    }
  });

  const cases: [string, CheckInput, { target: number | null; stop: number | null }][] = [
    ['iron condor', condor, { target: 80, stop: -200 }],
    ['staggered expiries', staggered, { target: 150, stop: -150 }],
    ['short straddle (two intervals)', straddle, { target: 150, stop: -400 }],
    ['short straddle, target only', straddle, { target: 150, stop: null }],
  ];
  for (const [name, input, lv] of cases) {
    it(`${name}: within 4 standard errors of an independent Monte Carlo with a Brownian-bridge correction, under both walks`, () => {
      const ex = exitChances(input, lv, marketWalk);
      for (const [walk, f] of [
        [input.view, ex.view],
        [{ drift: market.rate, vol: marketWalk.vol }, ex.market],
      ] as const) {
        const ref = referenceExitsMc(input, lv.target, lv.stop, walk, 10000, 250, 11);
        expect(Math.abs(f.probTarget - ref.probTarget)).toBeLessThan(4 * ref.se.probTarget + 1e-4);
        expect(Math.abs(f.probStop - ref.probStop)).toBeLessThan(4 * ref.se.probStop + 1e-4);
        expect(Math.abs(f.expectedPnl - ref.expectedPnl)).toBeLessThan(4 * ref.se.expectedPnl + 1e-2);
      }
    });

    it(`${name}: the three chances sum to 1 and the forward solve agrees with the backward one`, () => {
      const g = exitGrid(input, lv, [input.view, marketWalk]);
      for (const w of [input.view, marketWalk]) {
        const u = solveExitBackward(g, w, input.market.yield);
        const i = g.i0;
        expect(Math.abs(u.uT[i] + u.uS[i] + u.uN[i] - 1)).toBeLessThan(1e-9);
        expect(u.uT[i]).toBeGreaterThanOrEqual(0);
        expect(u.uS[i]).toBeGreaterThanOrEqual(0);
        // P(no exit by the horizon) from the forward equation, which only the median uses: on a
        // grid twice as coarse, first order where a segment is born, so to a looser tolerance
        const surv = solveExitForward(g, w, input.market.yield);
        expect(Math.abs(surv[surv.length - 1] - u.uN[i])).toBeLessThan(1e-2);
      }
    });
  }

  it('the Monte Carlo used with jumps agrees with the finite differences when there are none (4 standard errors)', () => {
    for (const [input, lv] of [
      [condor, { target: 80, stop: -200 }],
      [straddle, { target: 150, stop: -400 }],
    ] as const) {
      const f = exitFiguresPde(exitGrid(input, lv, [input.view]), input.view, input.market.yield);
      const m = exitFiguresMc(input, lv, input.view, { paths: 20000, seed: 5 });
      expect(Math.abs(m.probTarget - f.probTarget)).toBeLessThan(4 * m.stderr!.probTarget);
      expect(Math.abs(m.probStop - f.probStop)).toBeLessThan(4 * m.stderr!.probStop);
      expect(Math.abs(m.expectedPnl - f.expectedPnl)).toBeLessThan(4 * m.stderr!.expectedPnl);
    }
  });

  it('with no target and no stop the expected P&L is the horizon outcome (runCheck), every path held', () => {
    for (const input of [condor, staggered, straddle]) {
      const f = exitFiguresPde(exitGrid(input, { target: null, stop: null }, [input.view]), input.view, input.market.yield);
      const out = runCheck(input).outcome;
      const scale = pnlSurface(input).scale;
      expect(Math.abs(f.probNeither - 1)).toBeLessThan(1e-12);
      expect(f.medianExitYears).toBeNull();
      // the finite differences against the exact integration, to their own accuracy
      expect(Math.abs(f.expectedPnl - out.expectedPnl) / scale).toBeLessThan(2e-5);
    }
  });
});

describe('optional stopping (a fact of the trade: a price discounted at the rate is a martingale under the walk that prices it)', () => {
  /** every leg at one iv, the walk at the rate with that vol */
  const oneIv = (input: CheckInput, iv: number): CheckInput => ({
    ...input,
    legs: input.legs.map((l) => ({ ...l, iv })),
    view: { drift: input.market.rate, vol: iv },
  });

  it('E[e^{−rτ}·(P&L at exit + cost)] = the position value today', () => {
    for (const [base, lv] of [
      [condor, { target: 80, stop: -200 }],
      [staggered, { target: 150, stop: -150 }],
      [straddle, { target: 150, stop: -400 }],
    ] as const) {
      const input = oneIv(base, 0.3);
      const g = exitGrid(input, lv, [input.view]);
      const r = input.market.rate;
      const u = solveExitBackward(g, input.view, input.market.yield, r);
      const i = g.i0;
      const res = runCheck(input);
      const cost = res.position.cost;
      const lhs = u.uE[i] + cost * (u.uT[i] + u.uS[i] + u.uN[i]);
      expect(Math.abs(lhs - res.position.value) / pnlSurface(input).scale).toBeLessThan(1e-6);
    }
  });

  it('at a zero rate and yield the expected exit P&L is today’s P&L (value − cost)', () => {
    const input = oneIv({ ...straddle, market: { spot: 84.2, rate: 0, yield: 0 }, legs: straddle.legs.map((l) => ({ ...l, entry: 3 })) }, 0.3);
    const ex = exitChances(input, { target: 200, stop: -250 }, { drift: 0, vol: 0.3 });
    expect(Math.abs(ex.view.expectedPnl - ex.current) / pnlSurface(input).scale).toBeLessThan(1e-6);
  });

  it('with jumps (Monte Carlo; legs valued by Merton’s series): the same within 4 standard errors (a jump over a level closes where it lands)', () => {
    const jumps = { intensity: 3, mean: -0.06, sd: 0.1 };
    const input: CheckInput = {
      ...straddle,
      market: { spot: 84.2, rate: 0, yield: 0 },
      legs: straddle.legs.map((l) => ({ ...l, iv: 0.25, entry: 3.2 })),
      view: { drift: 0, vol: 0.25, jumps },
    };
    const ex = exitChances(input, { target: 150, stop: -300 }, { drift: 0, vol: 0.25 }, { paths: 20000 });
    expect(ex.view.method).toBe('monte-carlo');
    expect(ex.view.stderr).toBeDefined();
    expect(Math.abs(ex.view.expectedPnl - ex.current)).toBeLessThan(4 * ex.view.stderr!.expectedPnl);
    expect(Math.abs(ex.view.probTarget + ex.view.probStop + ex.view.probNeither - 1)).toBeLessThan(1e-9);
  });
});

describe('a drift uncertainty (μ ~ N(μ₀, τ²), fixed over the path): the exit figures are a mixture over μ', () => {
  const uncertain: CheckInput = { ...condor, view: { drift: 0.1, vol: 0.3, driftSe: 0.3 } };
  const lv = { target: 80, stop: -200 };

  it('the composite Gauss-Legendre rule agrees with one of twice the panels', () => {
    const a = exitChances(uncertain, lv, marketWalk);
    const b = exitChances(uncertain, lv, marketWalk, { driftPanels: 6 });
    expect(Math.abs(a.view.probTarget - b.view.probTarget)).toBeLessThan(1e-6);
    expect(Math.abs(a.view.expectedPnl - b.view.expectedPnl)).toBeLessThan(1e-3);
    // the market walk does not carry the view's uncertainty (the same up to the grid, which
    // reaches further for the extreme drifts)
    const fixed = exitChances(condor, lv, marketWalk).market;
    expect(Math.abs(a.market.probTarget - fixed.probTarget)).toBeLessThan(1e-4);
  });

  it('agrees with the Monte Carlo that draws μ per path (4 standard errors), and τ = 0 is the fixed drift exactly', () => {
    const a = exitChances(uncertain, lv, marketWalk);
    const m = exitFiguresMc(uncertain, lv, uncertain.view, { paths: 20000, seed: 9 });
    expect(Math.abs(a.view.probTarget - m.probTarget)).toBeLessThan(4 * m.stderr!.probTarget);
    expect(Math.abs(a.view.expectedPnl - m.expectedPnl)).toBeLessThan(4 * m.stderr!.expectedPnl);
    const zero = exitChances({ ...condor, view: { ...condor.view, driftSe: 0 } }, lv, marketWalk);
    expect(zero.view).toEqual(exitChances(condor, lv, marketWalk).view);
  });
});
