/**
 * The outcome's two columns and the attribution of the expected P&L (DESIGN.md §3–§4), end to end
 * through the compiled `kolmo --json` command line:
 * - identities: the parts add up to the expected P&L; a European single-iv position with no @ and
 *   no vol has only carry and drift; a position entered at fair value with vol = the market vol
 *   has no vol part; an American put deep in the money gives up early exercise (negative) and has
 *   no vol part;
 * - an independent recomputation (test/support/reference-models.ts: BSM and Merton written in the
 *   test with jstat's normal cdf, an American CRR tree, Gauss-Legendre quadrature over the spot at
 *   the horizon) of the market column and of every part for a European, an American and a jump case.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { americanTree, bs, expectation, merton, probPositive, type JumpTerms, type Kind, type RefWalk } from '../support/reference-models.js';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kolmo.js');
const tmp = mkdtempSync(join(tmpdir(), 'kolmo-attr-'));
const env = { ...process.env, KOLMO_DB: join(tmp, 'kolmo.db'), KOLMO_OUT: join(tmp, 'out') };

function run(args: string[]): { code: number; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [bin, '--no-log', ...args], { env, encoding: 'utf8', timeout: 120_000 });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

function json(request: string): Record<string, any> {
  const r = run(['--json', request]);
  expect(r.code, r.stderr + r.stdout).toBe(0);
  return JSON.parse(r.stdout);
}

function text(request: string): string {
  const r = run([request]);
  expect(r.code, r.stderr + r.stdout).toBe(0);
  return r.stdout;
}

const PARTS = ['entryVsFair', 'carry', 'earlyExercise', 'legIv', 'vol', 'drift'] as const;
/** zero at display precision (money shown with two decimals) */
const shownZero = (x: number) => Math.abs(x) < 0.005;

function partsSum(c: Record<string, any>): number {
  return PARTS.reduce((t, k) => t + c.outcome.attribution[k], 0);
}

describe('the attribution adds up (identity: DESIGN.md §4 defines the parts as telescoping differences)', () => {
  const requests = [
    '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04',
    '+1 put 120 2027-06-18 iv 30% spot 80 rate 5% style american horizon 2027-03-19 asof 2027-01-04 drift 12% vol 35%',
    '+1 call 100 2027-04-16 @4.2 iv 30% -1 call 110 2027-04-16 iv 27% spot 100 rate 4% yield 1% drift 10% vol 33% jumps 0.8/yr -6% 10% horizon 2027-02-19 asof 2027-01-04',
    '100 shares @84.20 -1 call 90 2027-03-19 @1.85 iv 29% spot 84.20 rate 4% yield 1% drift 7% horizon 2027-02-19 asof 2027-01-04',
    '-1 put 95 2027-02-15 @2.10 iv 27% spot 100 rate 4.5% style american drift 3% vol 22% asof 2027-01-04',
  ];
  for (const req of requests) {
    it(req.slice(0, 60), () => {
      const c = json(req);
      const o = c.outcome;
      for (const k of PARTS) expect(Number.isFinite(o.attribution[k]), k).toBe(true);
      expect(Math.abs(partsSum(c) - o.expectedPnl)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(o.expectedPnl)));
      // the definitions that tie the parts to the columns
      expect(o.attribution.drift).toBeCloseTo(o.expectedPnl - o.expectedPnlAtRate, 9);
      expect(o.attribution.drift).toBeCloseTo(o.viewEdge, 9);
      expect(o.attribution.vol).toBeCloseTo(o.expectedPnlAtRate - c.outcomeMarket.expectedPnl, 9);
      expect(o.attribution.entryVsFair + o.attribution.carry + o.attribution.earlyExercise + o.attribution.legIv).toBeCloseTo(
        c.outcomeMarket.expectedPnl,
        9,
      );
      expect(c.outcomeRiskNeutral).toBeUndefined();
      expect(typeof c.marketVol).toBe('number');
    });
  }
});

describe('identities of the attribution', () => {
  it('a European single-iv position with no @ and no vol: only carry and drift', () => {
    const c = json('+1 call 105 2027-03-19 -1 call 115 2027-03-19 spot 100 iv 25% rate 4.5% yield 1% drift 9% horizon 2027-02-15 asof 2027-01-04');
    const a = c.outcome.attribution;
    expect(c.marketVol).toBe(0.25);
    expect(a.entryVsFair).toBe(0);
    expect(a.earlyExercise).toBe(0);
    expect(shownZero(a.legIv)).toBe(true);
    expect(shownZero(a.vol)).toBe(true);
    expect(shownZero(a.carry)).toBe(false);
    expect(shownZero(a.drift)).toBe(false);
    // the rows shown are the non-zero ones
    const t = text('+1 call 105 2027-03-19 -1 call 115 2027-03-19 spot 100 iv 25% rate 4.5% yield 1% drift 9% horizon 2027-02-15 asof 2027-01-04');
    expect(t).toMatch(/carry at the rate/);
    expect(t).toMatch(/drift view \(view edge\)/);
    expect(t).not.toMatch(/entry vs fair|early exercise given up|legs' iv vs market vol|vol view/);
  });

  it('entered at fair value with vol = the market vol: no vol part (two legs of different iv)', () => {
    // the market vol is the iv of the leg nearest the money: 100 is nearer spot 101 than 110
    const c = json('+1 call 100 2027-03-19 iv 30% -1 call 110 2027-03-19 iv 26% spot 101 rate 4.5% vol 30% drift 8% asof 2027-01-04');
    expect(c.marketVol).toBe(0.3);
    expect(c.outcome.attribution.entryVsFair).toBe(0);
    expect(shownZero(c.outcome.attribution.vol)).toBe(true);
    // the legs' ivs differ from the market vol, so that part is not zero
    expect(shownZero(c.outcome.attribution.legIv)).toBe(false);
  });

  it('an American put deep in the money: early exercise given up is negative, no vol part, and the answer says exercising now is worth as much as holding', () => {
    const req = '+1 put 120 2027-06-18 iv 30% spot 80 rate 5% style american horizon 2027-03-19 asof 2027-01-04';
    const c = json(req);
    const a = c.outcome.attribution;
    expect(a.earlyExercise).toBeLessThan(-1);
    expect(shownZero(a.vol)).toBe(true);
    expect(a.entryVsFair).toBe(0);
    expect(shownZero(a.legIv)).toBe(true);
    expect(c.legs[0].value).toBeCloseTo(40, 9); // worth its intrinsic value 120 − 80
    const t = text(req);
    expect(t).toMatch(/exercise now is worth as much as holding/);
    expect(t).toMatch(/early exercise given up/);
    expect(t).not.toMatch(/vol view/);
  });

  it('a European leg is never short of early exercise, and a leg above intrinsic gets no exercise note', () => {
    const c = json('+1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% asof 2027-01-04 drift 6%');
    expect(c.outcome.attribution.earlyExercise).toBe(0);
    expect(text('+1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% asof 2027-01-04 drift 6% style american')).not.toMatch(/exercise now is worth/);
  });

  it('the header states the market vol used, and the columns are "your view" and "market"', () => {
    const t = text('+1 call 100 2027-03-19 iv 30% -1 call 110 2027-03-19 iv 26% spot 101 rate 4.5% vol 35% drift 8% asof 2027-01-04');
    expect(t).toMatch(/your view/);
    expect(t).toMatch(/market \(vol 30%\)|market vol 30%/);
    expect(t).not.toMatch(/risk-neutral/);
  });
});

// ---------------------------------------------------------------------------------------------
// Independent recomputation

interface RefLeg {
  qty: number;
  kind: Kind;
  K: number;
  T: number;
  iv: number;
  entry: number | null;
}

/** Everything the JSON states, recomputed from the definitions with the reference models. */
function reference(opts: {
  S: number;
  r: number;
  q: number;
  h: number;
  mult: number;
  legs: RefLeg[];
  view: RefWalk;
  american?: boolean;
  jumps?: JumpTerms;
}) {
  const { S, r, q, h, mult, legs, view } = opts;
  // American values at the horizon: CRR trees on a log grid of spots (spacing 0.01 in ln S),
  // interpolated by three-point Lagrange (the value is smooth away from the exercise boundary)
  const grids = new Map<RefLeg, { x0: number; dx: number; v: number[] }>();
  const americanAt = (l: RefLeg, s: number, T: number): number => {
    let g = grids.get(l);
    if (!g) {
      const w = 8 * Math.max(l.iv, view.vol) * Math.sqrt(h);
      const x0 = Math.log(S) - w;
      const dx = 0.01;
      const v: number[] = [];
      for (let x = x0; x <= Math.log(S) + w + dx; x += dx) v.push(americanTree(l.kind, Math.exp(x), l.K, T, r, q, l.iv, 500));
      g = { x0, dx, v };
      grids.set(l, g);
    }
    const u = (Math.log(s) - g.x0) / g.dx;
    if (u <= 0) return l.kind === 'put' ? Math.max(l.K - s, g.v[0]) : g.v[0];
    if (u >= g.v.length - 1) return l.kind === 'call' ? Math.max(s - l.K, g.v[g.v.length - 1]) : g.v[g.v.length - 1];
    const i = Math.min(Math.max(1, Math.round(u)), g.v.length - 2);
    const t = u - i;
    return 0.5 * t * (t - 1) * g.v[i - 1] + (1 - t * t) * g.v[i] + 0.5 * t * (t + 1) * g.v[i + 1];
  };
  const value = (l: RefLeg, s: number, T: number): number =>
    T <= 1e-12
      ? bs(l.kind, s, l.K, 0, r, q, l.iv)
      : opts.american
        ? T === l.T
          ? americanTree(l.kind, s, l.K, T, r, q, l.iv, 4000)
          : americanAt(l, s, T)
        : opts.jumps
          ? merton(l.kind, s, l.K, T, r, q, l.iv, opts.jumps)
          : bs(l.kind, s, l.K, T, r, q, l.iv);
  const fair = legs.map((l) => value(l, S, l.T));
  const entry = legs.map((l, i) => l.entry ?? fair[i]);
  const pnl = (s: number): number => legs.reduce((t, l, i) => t + l.qty * mult * (value(l, s, l.T - h) - entry[i]), 0);
  // the market vol: the iv of the leg nearest the money (smallest |ln K/S|)
  let near = 0;
  legs.forEach((l, i) => {
    if (Math.abs(Math.log(l.K / S)) < Math.abs(Math.log(legs[near].K / S))) near = i;
  });
  const sigmaM = legs[near].iv;
  const jumps = opts.jumps;
  const market: RefWalk = { drift: r, vol: sigmaM, ...(jumps ? { jumps } : {}) };
  const atRate: RefWalk = { drift: r, vol: view.vol, ...(jumps ? { jumps } : {}) };
  const viewW: RefWalk = { ...view, ...(jumps ? { jumps } : {}) };
  const E = (w: RefWalk) => expectation(pnl, S, h, q, w);
  const eMarket = E(market);
  const eAtRate = E(atRate);
  const eView = E(viewW);
  const entryVsFair = legs.reduce((t, l, i) => t + l.qty * mult * (fair[i] - entry[i]), 0);
  const carry = legs.reduce((t, l, i) => t + l.qty * mult * fair[i] * (Math.exp(r * h) - 1), 0);
  const earlyExercise = opts.american
    ? legs.reduce(
        (t, l, i) =>
          t + l.qty * mult * (expectation((s) => value(l, s, l.T - h), S, h, q, { drift: r, vol: l.iv }) - fair[i] * Math.exp(r * h)),
        0,
      )
    : 0;
  return {
    sigmaM,
    fair,
    marketProbProfit: probPositive(pnl, S, h, q, market),
    viewProbProfit: probPositive(pnl, S, h, q, viewW),
    eMarket,
    eAtRate,
    eView,
    parts: { entryVsFair, carry, earlyExercise, legIv: eMarket - entryVsFair - carry - earlyExercise, vol: eAtRate - eMarket, drift: eView - eAtRate },
  };
}

function compare(c: Record<string, any>, ref: ReturnType<typeof reference>, tol: number, probTol: number) {
  expect(c.marketVol).toBe(ref.sigmaM);
  expect(Math.abs(c.outcomeMarket.expectedPnl - ref.eMarket), 'market expected P&L').toBeLessThan(tol);
  expect(Math.abs(c.outcome.expectedPnlAtRate - ref.eAtRate), 'expected P&L at the rate').toBeLessThan(tol);
  expect(Math.abs(c.outcome.expectedPnl - ref.eView), 'expected P&L').toBeLessThan(tol);
  expect(Math.abs(c.outcomeMarket.probProfit - ref.marketProbProfit), 'market chance of profit').toBeLessThan(probTol);
  expect(Math.abs(c.outcome.probProfit - ref.viewProbProfit), 'view chance of profit').toBeLessThan(probTol);
  for (const k of PARTS) expect(Math.abs(c.outcome.attribution[k] - ref.parts[k]), k).toBeLessThan(tol);
}

describe('independent recomputation of the market column and every part', () => {
  it('European: two calls of different iv, live beyond the horizon, a vol and a drift view (BSM + quadrature)', () => {
    const c = json(
      '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04',
    );
    const h = c.horizonYears;
    const ref = reference({
      S: 100,
      r: 0.045,
      q: 0.01,
      h,
      mult: 100,
      view: { drift: 0.09, vol: 0.26 },
      legs: [
        { qty: 2, kind: 'call', K: 105, T: c.legs[0].years, iv: 0.28, entry: 3.1 },
        { qty: -2, kind: 'call', K: 115, T: c.legs[1].years, iv: 0.25, entry: 1.05 },
      ],
    });
    // every part is present in this case
    for (const k of ['entryVsFair', 'carry', 'legIv', 'vol', 'drift'] as const) expect(shownZero(ref.parts[k]), k).toBe(false);
    compare(c, ref, 1e-6, 1e-7);
  });

  it('American: a put in the money expiring at the horizon, with a vol and a drift view (CRR tree + closed forms)', () => {
    const c = json('+1 put 110 2027-03-19 iv 30% spot 100 rate 6% style american drift 10% vol 35% asof 2027-01-04');
    const h = c.horizonYears;
    const T = c.legs[0].years;
    expect(T).toBeCloseTo(h, 12);
    const amer = americanTree('put', 100, 110, T, 0.06, 0, 0.3, 4000);
    // the engine's fair value against the tree (finite differences vs CRR: both converge)
    expect(Math.abs(c.legs[0].value - amer)).toBeLessThan(2e-3);
    // expiring at the horizon, the leg is worth its payoff there: closed forms for every
    // expectation (undiscounted Black formula), the tree for the fair value
    const fairEngine = c.legs[0].value;
    const euroFwd = (vol: number, drift: number) => bs('put', 100, 110, h, drift, 0, vol) * Math.exp(drift * h);
    const eMarket = 100 * (euroFwd(0.3, 0.06) - fairEngine);
    const eAtRate = 100 * (euroFwd(0.35, 0.06) - fairEngine);
    const eView = 100 * (euroFwd(0.35, 0.1) - fairEngine);
    const a = c.outcome.attribution;
    expect(a.entryVsFair).toBe(0);
    expect(a.carry).toBeCloseTo(100 * fairEngine * (Math.exp(0.06 * h) - 1), 9);
    // early exercise given up: E at the rate of the payoff minus the fair value grown at the rate,
    // i.e. e^{rh}(European − American) per share (tree for the American value)
    expect(Math.abs(a.earlyExercise - 100 * Math.exp(0.06 * h) * (bs('put', 100, 110, h, 0.06, 0, 0.3) - amer))).toBeLessThan(0.25);
    expect(a.earlyExercise).toBeLessThan(0);
    expect(shownZero(a.legIv)).toBe(true);
    expect(a.vol).toBeCloseTo(eAtRate - eMarket, 6);
    expect(a.drift).toBeCloseTo(eView - eAtRate, 6);
    expect(c.outcomeMarket.expectedPnl).toBeCloseTo(eMarket, 6);
    // market chance of profit: payoff above the fair value ⇔ S_h < 110 − fair (lognormal at the rate)
    const pm = probPositive((s) => Math.max(110 - s, 0) - fairEngine, 100, h, 0, { drift: 0.06, vol: 0.3 });
    expect(c.outcomeMarket.probProfit).toBeCloseTo(pm, 7);
    expect(c.marketVol).toBe(0.3);
  });

  it('American: a put live beyond the horizon (CRR trees at the horizon, quadrature)', () => {
    const c = json('-1 put 100 2027-05-21 @6.2 iv 32% spot 97 rate 5% style american drift 9% vol 28% horizon 2027-02-19 asof 2027-01-04');
    const ref = reference({
      S: 97,
      r: 0.05,
      q: 0,
      h: c.horizonYears,
      mult: 100,
      american: true,
      view: { drift: 0.09, vol: 0.28 },
      legs: [{ qty: -1, kind: 'put', K: 100, T: c.legs[0].years, iv: 0.32, entry: 6.2 }],
    });
    // trees of 500 steps on a grid: a few cents of money in total
    compare(c, ref, 0.5, 2e-3);
  }, 120_000);

  it('jumps: two calls of different iv live beyond the horizon, Merton series + quadrature over the Poisson mixture', () => {
    const jumps = { intensity: 0.8, mean: -0.06, sd: 0.1 };
    const c = json(
      '+1 call 100 2027-04-16 @4.2 iv 30% -1 call 110 2027-04-16 iv 27% spot 100 rate 4% yield 1% drift 10% vol 33% jumps 0.8/yr -6% 10% horizon 2027-02-19 asof 2027-01-04',
    );
    const ref = reference({
      S: 100,
      r: 0.04,
      q: 0.01,
      h: c.horizonYears,
      mult: 100,
      jumps,
      view: { drift: 0.1, vol: 0.33 },
      legs: [
        { qty: 1, kind: 'call', K: 100, T: c.legs[0].years, iv: 0.3, entry: 4.2 },
        { qty: -1, kind: 'call', K: 110, T: c.legs[1].years, iv: 0.27, entry: null },
      ],
    });
    compare(c, ref, 1e-5, 1e-7);
  });
});
