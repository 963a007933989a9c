/**
 * The density chart of real engine results (src/core/outcome.ts runCheck): a short straddle, a
 * covered stock position, a call spread and a calendar spread. Checked against
 *  - the P&L at the horizon by its definition (docs/design.md §3): Σ qty × mult × (V_leg(S_h) − entry),
 *    with V_leg from the pricer seam (src/core/pricer.ts legValuer) and entries at fair value
 *    (legGreeks) where none is given — evaluated here, apart from the engine's own P&L function;
 *  - the lognormal law of the spot at the horizon (Hull, Options, Futures and Other Derivatives,
 *    lognormal property of GBM) for the x range;
 *  - identities: densities integrate to 1, profit where P&L > 0.
 */
import { describe, expect, it } from 'vitest';
import { runCheck } from '../../src/core/outcome.js';
import { legGreeks, legValuer, type LegModel } from '../../src/core/pricer.js';
import type { CheckInput, LegInput } from '../../src/core/types.js';
import { chartInputFromCheck, checkChartConfig, trapezoid, type KolmoPluginOptions } from '../../src/report/chart.js';
import { renderPng, tryRenderPng } from '../../src/report/render.js';
import { loadImage } from 'canvas';
import { Z995, allNumbers, lognormalQuantile } from './chart-closed-forms.js';

const market = { spot: 100, rate: 0.045, yield: 0.01 };
const view = { drift: 0.09, vol: 0.26 };
const T1 = 30 / 365;
const T2 = 90 / 365;

function check(legs: LegInput[], horizonYears: number): CheckInput {
  return { market, legs, mult: 100, style: 'european', horizonYears, view };
}

/** P&L at the horizon by definition, through the pricer seam. */
function pnlByDefinition(inp: CheckInput): (s: number) => number {
  const m: LegModel = { market: inp.market, style: inp.style, jumps: inp.view.jumps };
  const parts = inp.legs.map((leg) => {
    const mult = leg.kind === 'shares' ? 1 : inp.mult;
    const entry = leg.entry ?? legGreeks(leg, m).value;
    return { coef: leg.qty * mult, entry, v: legValuer(leg, m, inp.horizonYears) };
  });
  return (s) => parts.reduce((t, p) => t + p.coef * (p.v(s) - p.entry), 0);
}

const cases: { name: string; inp: CheckInput; strikes: number[]; nBreakevens: number; band: 'between' | 'above' }[] = [
  {
    name: 'short straddle',
    inp: check(
      [
        { qty: -1, kind: 'call', strike: 100, years: T1, iv: 0.26, entry: 3.4 },
        { qty: -1, kind: 'put', strike: 100, years: T1, iv: 0.26, entry: 3.2 },
      ],
      T1,
    ),
    strikes: [100],
    nBreakevens: 2,
    band: 'between',
  },
  {
    name: 'covered stock',
    inp: check(
      [
        { qty: 100, kind: 'shares', strike: 0, years: 0, iv: 0, entry: 100 },
        { qty: -1, kind: 'call', strike: 110, years: T1, iv: 0.24, entry: 0.6 },
      ],
      T1,
    ),
    strikes: [110],
    nBreakevens: 1,
    band: 'above',
  },
  {
    name: 'call spread',
    inp: check(
      [
        { qty: 2, kind: 'call', strike: 105, years: T1, iv: 0.28, entry: 1.3 },
        { qty: -2, kind: 'call', strike: 115, years: T1, iv: 0.25, entry: 0.2 },
      ],
      T1,
    ),
    strikes: [105, 115],
    nBreakevens: 1,
    band: 'above',
  },
  {
    name: 'calendar spread (short 30-day call, long 90-day call, horizon at the near expiry)',
    inp: check(
      [
        { qty: -1, kind: 'call', strike: 100, years: T1, iv: 0.26, entry: null },
        { qty: 1, kind: 'call', strike: 100, years: T2, iv: 0.26, entry: null },
      ],
      T1,
    ),
    strikes: [100],
    nBreakevens: 2,
    band: 'between',
  },
];

describe.each(cases)('density chart of the engine result: $name', ({ inp, strikes, nBreakevens, band }) => {
  const core = runCheck(inp);
  const chartIn = chartInputFromCheck(inp, core, { position: 'FERNWK test', horizon: '2027-02-03', currency: 'USD' });
  const cfg = checkChartConfig(chartIn);
  const k = (cfg.options!.plugins as { kolmo: KolmoPluginOptions }).kolmo;
  const x = cfg.options!.scales!.x as { min: number; max: number };
  const pts = (i: number) => cfg.data.datasets[i].data as { x: number; y: number }[];

  it('has the expected breakevens from the engine (sanity of the case)', () => {
    expect(core.outcome.breakevens).toHaveLength(nBreakevens);
  });

  it('draws the P&L at the horizon as defined (pricer seam) at every sampled point', () => {
    const f = pnlByDefinition(inp);
    const scale = Math.max(...pts(2).map((p) => Math.abs(p.y)), 1);
    expect(pts(2).length).toBeGreaterThan(50);
    for (const p of pts(2)) expect(Math.abs(p.y - f(p.x))).toBeLessThan(1e-9 * scale);
  });

  it('x range holds the 0.5%–99.5% lognormal quantiles of both walks, spot, strikes and breakevens', () => {
    const need = [
      lognormalQuantile(-Z995, market.spot, view.drift, market.yield, view.vol, inp.horizonYears),
      lognormalQuantile(Z995, market.spot, view.drift, market.yield, view.vol, inp.horizonYears),
      lognormalQuantile(-Z995, market.spot, market.rate, market.yield, view.vol, inp.horizonYears),
      lognormalQuantile(Z995, market.spot, market.rate, market.yield, view.vol, inp.horizonYears),
      market.spot,
      ...strikes,
      ...core.outcome.breakevens,
    ];
    for (const v of need) {
      expect(x.min).toBeLessThanOrEqual(v + 1e-9);
      expect(x.max).toBeGreaterThanOrEqual(v - 1e-9);
    }
  });

  it('densities drawn integrate to about 1', () => {
    for (const i of [0, 1]) {
      const d = pts(i);
      const area = trapezoid(d.map((p) => p.x), d.map((p) => p.y));
      expect(area).toBeGreaterThan(0.985);
      expect(area).toBeLessThan(1.01);
    }
  });

  it('marks spot, each strike once, each breakeven, and shades where P&L > 0', () => {
    expect(k.markers.filter((m) => m.kind === 'spot').map((m) => m.x)).toEqual([100]);
    expect(k.markers.filter((m) => m.kind === 'strike').map((m) => m.x)).toEqual(strikes);
    const bes = k.markers.filter((m) => m.kind === 'breakeven').map((m) => m.x);
    expect(bes).toEqual(core.outcome.breakevens);
    if (band === 'between') {
      expect(k.bands).toHaveLength(1);
      expect(k.bands[0].from).toBeCloseTo(bes[0], 9);
      expect(k.bands[0].to).toBeCloseTo(bes[1], 9);
    } else {
      expect(k.bands).toHaveLength(1);
      expect(k.bands[0].from).toBeCloseTo(bes[0], 9);
      expect(k.bands[0].to).toBeGreaterThanOrEqual(x.max);
    }
    // every drawn point strictly inside a band has P&L ≥ 0, every point outside has P&L ≤ 0
    const f = pnlByDefinition(inp);
    for (const p of pts(2)) {
      const inside = k.bands.some((b) => p.x > b.from + 1e-6 && p.x < b.to - 1e-6);
      const outside = k.bands.every((b) => p.x < b.from - 1e-6 || p.x > b.to + 1e-6);
      if (inside) expect(f(p.x)).toBeGreaterThanOrEqual(0);
      if (outside) expect(f(p.x)).toBeLessThanOrEqual(0);
    }
  });

  it('titles chance of profit and expected P&L from the result; only finite numbers', () => {
    const sub = (cfg.options!.plugins!.subtitle as { text: string }).text;
    expect(sub).toContain(`chance of profit ${(Math.round(core.outcome.probProfit * 1000) / 10).toString()}%`);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
  });

  it('renders to a 900×500 PNG', async () => {
    const img = await loadImage(await renderPng(cfg));
    expect([img.width, img.height]).toEqual([900, 500]);
  });
});

describe('degenerate engine results', () => {
  it('legs that cancel (+1 and −1 of the same call): flagged for a text-only answer with a note', async () => {
    const inp = check(
      [
        { qty: 1, kind: 'call', strike: 100, years: T1, iv: 0.26, entry: 3 },
        { qty: -1, kind: 'call', strike: 100, years: T1, iv: 0.26, entry: 3 },
      ],
      T1,
    );
    const core = runCheck(inp);
    const cfg = checkChartConfig(chartInputFromCheck(inp, core, { position: 'nothing left', horizon: '2027-02-03' }));
    const k = (cfg.options!.plugins as { kolmo: KolmoPluginOptions }).kolmo;
    expect(k.bands).toEqual([]);
    expect(k.markers.filter((m) => m.kind === 'breakeven')).toEqual([]);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    expect(await tryRenderPng(cfg)).toEqual({ ok: false, note: expect.stringMatching(/no exposure/) });
  });

  it('a horizon of today (no spread in the spot): flagged for a text-only answer with a note', async () => {
    const inp = check([{ qty: 1, kind: 'call', strike: 100, years: T1, iv: 0.26, entry: 3 }], 0);
    const core = runCheck(inp);
    const cfg = checkChartConfig(chartInputFromCheck(inp, core, { position: 'today', horizon: '2027-01-04' }));
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    expect(await tryRenderPng(cfg)).toEqual({ ok: false, note: expect.stringMatching(/no spread/) });
  });
});

describe('jumps and early exercise change only the numbers', () => {
  const jumps = { intensity: 0.8, mean: -0.06, sd: 0.12 };
  const putSpread = (style: 'european' | 'american', withJumps: boolean): CheckInput => ({
    market,
    legs: [
      { qty: 1, kind: 'put', strike: 100, years: T2, iv: 0.24, entry: 4.1 },
      { qty: -1, kind: 'put', strike: 90, years: T2, iv: 0.27, entry: 1.2 },
    ],
    mult: 100,
    style,
    horizonYears: T1,
    view: withJumps ? { ...view, jumps } : view,
  });

  it.each([
    ['European with Merton jumps', putSpread('european', true)],
    ['American without jumps', putSpread('american', false)],
  ])('%s: same chart shape, P&L as defined, densities of area about 1, renders', async (_name, inp) => {
    const core = runCheck(inp);
    const cfg = checkChartConfig(chartInputFromCheck(inp, core, { position: 'FERNWK put spread 100/90', horizon: '2027-02-03', currency: 'USD' }));
    const title = [(cfg.options!.plugins!.title as { text: string | string[] }).text].flat().join(' ');
    if (inp.view.jumps) expect(title).toContain('jumps 0.8/yr mean -6% sd 12%');
    else expect(title).not.toContain('jumps');
    const f = pnlByDefinition(inp);
    const pts = cfg.data.datasets[2].data as { x: number; y: number }[];
    const scale = Math.max(...pts.map((p) => Math.abs(p.y)), 1);
    for (const p of pts) expect(Math.abs(p.y - f(p.x))).toBeLessThan(1e-9 * scale);
    for (const i of [0, 1]) {
      const d = cfg.data.datasets[i].data as { x: number; y: number }[];
      const area = trapezoid(d.map((p) => p.x), d.map((p) => p.y));
      // a jump mixture has heavier tails than the lognormal: most, not all, of its mass is in view
      expect(area).toBeGreaterThan(0.97);
      expect(area).toBeLessThan(1.01);
    }
    expect((cfg.options!.plugins as { kolmo: KolmoPluginOptions }).kolmo.markers.filter((m) => m.kind === 'strike').map((m) => m.x)).toEqual([90, 100]);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    const img = await loadImage(await renderPng(cfg));
    expect([img.width, img.height]).toEqual([900, 500]);
  });
});
