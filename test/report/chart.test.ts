/**
 * The chart configuration, checked against closed forms computed in the test (lognormal
 * densities and payoff P&L, see ./chart-closed-forms.ts) and identities (densities integrate
 * to 1; the P&L drawn equals the P&L given; the profit band is where P&L > 0).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  checkChartConfig,
  compareChartConfig,
  fmtChance,
  niceRange,
  sampledQuantiles,
  trapezoid,
  MAX_COMPARE,
  MAX_POINTS,
  type ChartInput,
  type KolmoPluginOptions,
} from '../../src/report/chart.js';
import {
  Z995,
  allNumbers,
  callSpread,
  closedFormCurves,
  coveredStock,
  lognormalQuantile,
  shortStraddle,
  type Gbm,
} from './chart-closed-forms.js';

type Cfg = ReturnType<typeof checkChartConfig>;
const kolmo = (c: Cfg) => (c.options!.plugins as { kolmo: KolmoPluginOptions }).kolmo;
const xScale = (c: Cfg) => c.options!.scales!.x as { min: number; max: number; ticks: { stepSize: number } };
const pnlScale = (c: Cfg) => c.options!.scales!.yPnl as { min: number; max: number; ticks: { stepSize: number } };
const series = (c: Cfg, i: number) => c.data.datasets[i].data as { x: number; y: number }[];

const G: Gbm = { s0: 100, mu: 0.09, r: 0.045, q: 0.01, sigma: 0.26, t: 42 / 365 };

function inputFor(pos: { strikes: number[]; breakevens: number[]; pnl: (s: number) => number }, g = G, extra: Partial<ChartInput> = {}): ChartInput {
  return {
    position: 'test position',
    horizon: '2027-02-15',
    view: { drift: g.mu, vol: g.sigma },
    spot: g.s0,
    strikes: pos.strikes,
    breakevens: pos.breakevens,
    probProfit: 0.42,
    expectedPnl: 123.4,
    curves: closedFormCurves(g, pos.pnl),
    currency: 'USD',
    ...extra,
  };
}

describe('checkChartConfig: x range, densities, P&L', () => {
  const cfg = checkChartConfig(inputFor(callSpread));

  it('holds the 0.5%–99.5% quantiles of both densities, the spot, every strike and breakeven', () => {
    const x = xScale(cfg);
    const need = [
      lognormalQuantile(-Z995, G.s0, G.mu, G.q, G.sigma, G.t),
      lognormalQuantile(Z995, G.s0, G.mu, G.q, G.sigma, G.t),
      lognormalQuantile(-Z995, G.s0, G.r, G.q, G.sigma, G.t),
      lognormalQuantile(Z995, G.s0, G.r, G.q, G.sigma, G.t),
      G.s0,
      ...callSpread.strikes,
      ...callSpread.breakevens,
    ];
    for (const v of need) {
      expect(x.min).toBeLessThanOrEqual(v);
      expect(x.max).toBeGreaterThanOrEqual(v);
    }
    // not absurdly wide: within 1.6× the widest needed span
    expect(x.max - x.min).toBeLessThan(1.6 * (Math.max(...need) - Math.min(...need)));
  });

  it('uses nicely rounded ticks: a 1/2/2.5/5×10^k step, 4 to 10 whole multiples of it on the axis, no odd bound label', () => {
    const xs = cfg.options!.scales!.x as { min: number; max: number; ticks: { stepSize: number; includeBounds?: boolean } };
    for (const s of [xs, pnlScale(cfg)]) {
      const step = s.ticks.stepSize;
      const mant = step / 10 ** Math.floor(Math.log10(step));
      expect([1, 2, 2.5, 5].some((m) => Math.abs(m - mant) < 1e-9)).toBe(true);
      const ticks = Math.floor(s.max / step + 1e-9) - Math.ceil(s.min / step - 1e-9) + 1;
      expect(ticks).toBeGreaterThanOrEqual(4);
      expect(ticks).toBeLessThanOrEqual(11);
    }
    // the P&L axis ends on whole steps; the x axis either does or draws no tick at its bounds
    const p = pnlScale(cfg);
    expect(Math.abs(p.min / p.ticks.stepSize - Math.round(p.min / p.ticks.stepSize))).toBeLessThan(1e-9);
    expect(Math.abs(p.max / p.ticks.stepSize - Math.round(p.max / p.ticks.stepSize))).toBeLessThan(1e-9);
    const whole = (v: number) => Math.abs(v / xs.ticks.stepSize - Math.round(v / xs.ticks.stepSize)) < 1e-9;
    expect((whole(xs.min) && whole(xs.max)) || xs.ticks.includeBounds === false).toBe(true);
  });

  it('draws densities that integrate to about 1 over the range (trapezoid rule)', () => {
    for (const i of [0, 1]) {
      const pts = series(cfg, i);
      const area = trapezoid(pts.map((p) => p.x), pts.map((p) => p.y));
      expect(area).toBeGreaterThan(0.985);
      expect(area).toBeLessThan(1.005);
    }
  });

  it('draws the P&L given at every sampled point (no recomputation, no interpolation)', () => {
    const pts = series(cfg, 2);
    expect(pts.length).toBeGreaterThan(100);
    for (const p of pts) expect(p.y).toBeCloseTo(callSpread.pnl(p.x), 9);
  });

  it('puts the P&L on its own axis that holds zero and the P&L range shown', () => {
    const s = pnlScale(cfg);
    const ys = series(cfg, 2).filter((p) => p.x >= xScale(cfg).min && p.x <= xScale(cfg).max).map((p) => p.y);
    expect(s.min).toBeLessThanOrEqual(Math.min(0, ...ys));
    expect(s.max).toBeGreaterThanOrEqual(Math.max(0, ...ys));
    expect(kolmo(cfg).hlines).toEqual([expect.objectContaining({ axis: 'yPnl', y: 0 })]);
    expect(cfg.data.datasets[2].yAxisID).toBe('yPnl');
    expect(cfg.data.datasets[0].yAxisID).toBe('yDensity');
    expect(cfg.data.datasets[1].yAxisID).toBe('yDensity');
  });

  it('marks spot, strikes and breakeven and shades the profit region above the breakeven', () => {
    const k = kolmo(cfg);
    expect(k.markers.map((m) => [m.kind, m.x])).toEqual([
      ['spot', 100],
      ['strike', 105],
      ['strike', 115],
      ['breakeven', 107.05],
    ]);
    expect(k.markers.map((m) => m.label)).toEqual(['spot 100', 'K 105', 'K 115', 'BE 107.05']);
    expect(k.bands.length).toBe(1);
    expect(k.bands[0].from).toBeCloseTo(107.05, 9);
    expect(k.bands[0].to).toBeGreaterThanOrEqual(xScale(cfg).max);
  });

  it('keeps the view density filled and the risk-neutral one a different, dashed, unfilled curve', () => {
    const [v, r] = cfg.data.datasets as { fill?: unknown; borderColor?: string; borderDash?: number[] }[];
    expect(v.fill).toBe('origin');
    expect(r.fill).toBe(false);
    expect(v.borderColor).not.toBe(r.borderColor);
    expect((r.borderDash ?? []).length).toBeGreaterThan(0);
    expect((v as { borderDash?: number[] }).borderDash ?? []).toEqual([]);
  });

  it('titles the position, horizon and view, and gives chance of profit and expected P&L', () => {
    const p = cfg.options!.plugins!;
    const title = (p.title as { text: string }).text;
    const sub = (p.subtitle as { text: string }).text;
    expect(title).toContain('test position');
    expect(title).toContain('2027-02-15');
    expect(title).toContain('drift 9%');
    expect(title).toContain('vol 26%');
    expect(title).not.toContain('jumps');
    expect(sub).toContain('chance of profit 42%');
    expect(sub).toContain('+123 USD');
    const withJumps = checkChartConfig(inputFor(callSpread, G, { view: { drift: 0.09, vol: 0.26, jumps: { intensity: 0.5, mean: -0.05, sd: 0.1 } } }));
    expect((withJumps.options!.plugins!.title as { text: string }).text).toContain('jumps 0.5/yr mean -5% sd 10%');
  });

  it('splits a long title into position and horizon/view lines, each fitting the width', () => {
    const long = '+1/−2/+1 call butterfly 90/100/110 and −1/+1 put spread 80/85 on FERNWK';
    const c = checkChartConfig(inputFor(callSpread, G, { position: long, view: { drift: 0.09, vol: 0.26, jumps: { intensity: 0.5, mean: -0.05, sd: 0.1 } } }));
    const t = (c.options!.plugins!.title as { text: string | string[] }).text;
    expect(Array.isArray(t)).toBe(true);
    expect(t[0]).toBe(long);
    expect(t[1]).toContain('horizon 2027-02-15');
    expect(t[1]).toContain('jumps');
    for (const line of t) expect(line.length).toBeLessThanOrEqual(100);
    // a narrow chart clips an over-long position with an ellipsis
    const narrow = checkChartConfig(inputFor(callSpread, G, { position: long }), { width: 450, height: 300 });
    const tn = (narrow.options!.plugins!.title as { text: string[] }).text;
    expect(tn[0].endsWith('…')).toBe(true);
    expect(tn[0].length).toBeLessThanOrEqual(50);
  });

  it('never rounds a chance of profit to a certainty it is not', () => {
    expect(fmtChance(0.99996)).toBe('> 99.9%');
    expect(fmtChance(1)).toBe('100%');
    expect(fmtChance(0.00002)).toBe('< 0.1%');
    expect(fmtChance(0)).toBe('0%');
    expect(fmtChance(0.3734)).toBe('37.3%');
    expect(fmtChance(NaN)).toBe('–');
  });

  it('is plain JSON: survives a JSON round trip unchanged and holds only finite numbers', () => {
    expect(JSON.parse(JSON.stringify(cfg))).toEqual(cfg);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
  });
});

describe('checkChartConfig: the three shapes of the issue', () => {
  it('short straddle: both breakevens marked, profit shaded between them only', () => {
    const cfg = checkChartConfig(inputFor(shortStraddle));
    const k = kolmo(cfg);
    expect(k.markers.filter((m) => m.kind === 'breakeven').map((m) => m.x)).toEqual([90.2, 109.8]);
    expect(k.markers.filter((m) => m.kind === 'strike').map((m) => m.x)).toEqual([100]);
    expect(k.bands).toHaveLength(1);
    expect(k.bands[0].from).toBeCloseTo(90.2, 9);
    expect(k.bands[0].to).toBeCloseTo(109.8, 9);
  });

  it('covered stock: strike and breakeven marked, profit from the breakeven to the right edge', () => {
    const cfg = checkChartConfig(inputFor(coveredStock));
    const k = kolmo(cfg);
    expect(k.markers.filter((m) => m.kind === 'breakeven').map((m) => m.x)).toEqual([98]);
    expect(k.markers.filter((m) => m.kind === 'strike').map((m) => m.x)).toEqual([110]);
    expect(k.bands).toHaveLength(1);
    expect(k.bands[0].from).toBeCloseTo(98, 9);
    expect(k.bands[0].to).toBeGreaterThanOrEqual(xScale(cfg).max);
  });

  it('profit bands without given breakevens fall where the sampled P&L changes sign', () => {
    const cfg = checkChartConfig(inputFor({ ...shortStraddle, breakevens: [] }));
    const [b] = kolmo(cfg).bands;
    // a uniform grid: the linear crossing of a piecewise-linear P&L is exact
    expect(b.from).toBeCloseTo(90.2, 6);
    expect(b.to).toBeCloseTo(109.8, 6);
  });
});

describe('checkChartConfig: thinning, degenerate input', () => {
  it('thins a fine grid to about MAX_POINTS samples, keeping samples either side of each strike', () => {
    const inp = inputFor(callSpread);
    inp.curves = closedFormCurves(G, callSpread.pnl, 6001);
    const cfg = checkChartConfig(inp);
    const pts = series(cfg, 2);
    expect(pts.length).toBeLessThan(MAX_POINTS + 40);
    for (const p of pts) expect(p.y).toBeCloseTo(callSpread.pnl(p.x), 9);
    const xs = pts.map((p) => p.x);
    for (const k of callSpread.strikes) {
      const below = Math.max(...xs.filter((x) => x <= k));
      const above = Math.min(...xs.filter((x) => x >= k));
      const h = inp.curves.spot[1] - inp.curves.spot[0];
      expect(above - below).toBeLessThanOrEqual(h * 1.0000001);
    }
  });

  it('empty curves: a valid config with finite axes and a note saying why there is no chart', () => {
    const inp = inputFor(callSpread);
    inp.curves = { spot: [], densityView: [], densityMarket: [], pnl: [], pnlDensity: { x: [], density: [], atoms: [] } };
    const cfg = checkChartConfig(inp);
    expect(kolmo(cfg).empty).toMatch(/no chart/);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    expect(xScale(cfg).max).toBeGreaterThan(xScale(cfg).min);
  });

  it('zero legs after cancelling (P&L zero everywhere): flagged for a text-only answer, still a valid config', () => {
    const inp = inputFor({ strikes: [], breakevens: [], pnl: () => 0 }, G, { probProfit: 0, expectedPnl: 0 });
    const cfg = checkChartConfig(inp);
    const k = kolmo(cfg);
    expect(k.empty).toMatch(/no exposure/);
    expect(k.bands).toEqual([]);
    expect(k.markers.map((m) => m.kind)).toEqual(['spot']);
    expect(pnlScale(cfg).min).toBeLessThan(0);
    expect(pnlScale(cfg).max).toBeGreaterThan(0);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
  });

  it('a shares-only position (no option legs) is a normal chart: a straight P&L, no strikes', () => {
    const inp = inputFor({ strikes: [], breakevens: [100], pnl: (s) => 100 * (s - 100) });
    const cfg = checkChartConfig(inp);
    const k = kolmo(cfg);
    expect(k.empty).toBeUndefined();
    expect(k.markers.map((m) => m.kind)).toEqual(['spot', 'breakeven']);
    expect(k.bands[0].from).toBeCloseTo(100, 9);
  });

  it('NaN, Infinity and mismatched lengths in the curves never reach the config', () => {
    const inp = inputFor(callSpread);
    inp.curves.pnl[10] = NaN;
    inp.curves.densityView[20] = Infinity;
    inp.curves.spot.push(1e9);
    inp.strikes = [105, NaN, 115];
    inp.breakevens = [Infinity, 107.05];
    inp.probProfit = NaN;
    const cfg = checkChartConfig(inp);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    expect(JSON.stringify(cfg)).not.toContain('null');
    expect((cfg.options!.plugins!.subtitle as { text: string }).text).toContain('chance of profit –');
  });

  it('a zero-width range (a single spot value) gives a valid config, not a NaN axis', () => {
    const inp = inputFor({ strikes: [], breakevens: [], pnl: () => 0 });
    inp.curves = { spot: [100, 100], densityView: [1, 1], densityMarket: [1, 1], pnl: [0, 0], pnlDensity: { x: [], density: [], atoms: [] } };
    const cfg = checkChartConfig(inp);
    expect(allNumbers(cfg).every(Number.isFinite)).toBe(true);
    expect(xScale(cfg).max).toBeGreaterThan(xScale(cfg).min);
  });
});

describe('helpers', () => {
  it('niceRange holds [lo, hi] with whole-step bounds and few steps (property)', () => {
    fc.assert(
      fc.property(fc.double({ min: -1e7, max: 1e7, noNaN: true }), fc.double({ min: 1e-6, max: 1e7, noNaN: true }), (lo, w) => {
        const hi = lo + w;
        const r = niceRange(lo, hi, 8);
        // within a billionth of a step (float noise at the bounds is rounded away)
        expect(r.min).toBeLessThanOrEqual(lo + 1e-8 * r.step);
        expect(r.max).toBeGreaterThanOrEqual(hi - 1e-8 * r.step);
        const spaces = (r.max - r.min) / r.step;
        expect(Math.abs(spaces - Math.round(spaces))).toBeLessThan(1e-6);
        expect(Math.round(spaces)).toBeLessThanOrEqual(8);
        expect(Number.isFinite(r.min) && Number.isFinite(r.max) && r.step > 0).toBe(true);
      }),
    );
  });

  it('sampledQuantiles reproduces standard normal quantiles (tables: 1.959964 at 0.975, 2.575829 at 0.995)', () => {
    const x: number[] = [];
    for (let i = 0; i <= 4000; i++) x.push(-8 + (16 * i) / 4000);
    const d = x.map((z) => Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI));
    const [a, b, c] = sampledQuantiles(x, d, [0.025, 0.975, 0.995]);
    expect(a).toBeCloseTo(-1.959964, 3);
    expect(b).toBeCloseTo(1.959964, 3);
    expect(c).toBeCloseTo(2.575829, 3);
  });

  it('sampledQuantiles with point masses follows the lower-quantile convention inf{x : F(x) ≥ p}', () => {
    // all mass in two atoms of 0.3 at −1 and 0.7 at +2: F(−1) = 0.3
    const q = sampledQuantiles([], [], [0.1, 0.3, 0.30001, 0.9], [
      { x: -1, prob: 0.3 },
      { x: 2, prob: 0.7 },
    ]);
    expect(q).toEqual([-1, -1, 2, 2]);
  });
});

describe('compareChartConfig', () => {
  // Normal P&L densities (mean m, s.d. s) on a grid; one check with atoms (capped spread).
  function normalPnl(m: number, s: number, scale = 1) {
    const x: number[] = [];
    for (let i = 0; i <= 600; i++) x.push(m - 6 * s + (12 * s * i) / 600);
    return { x, density: x.map((v) => (scale * Math.exp(-0.5 * ((v - m) / s) ** 2)) / (s * Math.sqrt(2 * Math.PI))), atoms: [] as { x: number; prob: number }[] };
  }
  const spread = { ...normalPnl(100, 300, 0.6), atoms: [{ x: -410, prob: 0.25 }, { x: 1590, prob: 0.15 }] };
  const items = [
    { label: 'drift 0%', pnlDensity: normalPnl(-50, 400), expectedPnl: -50 },
    { label: 'drift 12%', pnlDensity: normalPnl(250, 420), expectedPnl: 250 },
    { label: 'call spread', pnlDensity: spread, expectedPnl: 0.6 * 100 + 0.25 * -410 + 0.15 * 1590 },
  ];
  const cfg = compareChartConfig(items, { currency: 'USD' });

  it('one dataset, hence one legend entry, per check, each with its own colour and dash', () => {
    expect(cfg.data.datasets.map((d) => d.label)).toEqual([
      expect.stringContaining('drift 0%'),
      expect.stringContaining('drift 12%'),
      expect.stringContaining('call spread'),
    ]);
    const styles = cfg.data.datasets.map((d) => JSON.stringify([d.borderColor, (d as { borderDash?: number[] }).borderDash]));
    expect(new Set(styles).size).toBe(3);
    const dashes = cfg.data.datasets.map((d) => JSON.stringify((d as { borderDash?: number[] }).borderDash));
    expect(new Set(dashes).size).toBe(3);
  });

  it('x is P&L: holds 0.5%–99.5% of each distribution, zero, and the atoms', () => {
    const x = xScale(cfg as Cfg);
    for (const v of [-50 - Z995 * 400, -50 + Z995 * 400, 250 - Z995 * 420, 250 + Z995 * 420, -410, 1590, 0]) {
      expect(x.min).toBeLessThanOrEqual(v);
      expect(x.max).toBeGreaterThanOrEqual(v);
    }
  });

  it('each continuous part integrates to one minus its atoms; atoms become stems of their probability', () => {
    // the density axis reads "chance per one x step of P&L": the curves are densities × the step
    const per = xScale(cfg as Cfg).ticks.stepSize;
    const area = (i: number) => {
      const pts = series(cfg as Cfg, i);
      return trapezoid(pts.map((p) => p.x), pts.map((p) => p.y)) / per;
    };
    expect(area(0)).toBeCloseTo(1, 2);
    expect(area(1)).toBeCloseTo(1, 2);
    expect(area(2)).toBeCloseTo(0.6, 2);
    const stems = kolmo(cfg as Cfg).stems;
    expect(stems.map((s) => [s.x, s.y])).toEqual([
      [-410, 0.25],
      [1590, 0.15],
    ]);
    expect(stems[0].color).toBe(cfg.data.datasets[2].borderColor);
  });

  it('marks zero and each expected P&L in the check colour', () => {
    const m = kolmo(cfg as Cfg).markers;
    expect(m.find((x) => x.kind === 'zero')?.x).toBe(0);
    expect(m.filter((x) => x.kind === 'mean').map((x) => [x.x, x.color])).toEqual(items.map((it, i) => [it.expectedPnl, cfg.data.datasets[i].borderColor]));
  });

  it(`shows at most ${MAX_COMPARE} checks and says so`, () => {
    const many = Array.from({ length: 8 }, (_, i) => ({ label: `c${i}`, pnlDensity: normalPnl(i * 10, 100), expectedPnl: i * 10 }));
    const c = compareChartConfig(many);
    expect(c.data.datasets).toHaveLength(MAX_COMPARE);
    expect((c.options!.plugins!.subtitle as { text: string }).text).toContain(`first ${MAX_COMPARE} of 8`);
  });

  it('nothing to compare: a valid config flagged empty, with finite numbers only', () => {
    for (const c of [compareChartConfig([]), compareChartConfig([{ label: 'x', pnlDensity: { x: [], density: [], atoms: [] }, expectedPnl: NaN }])]) {
      expect(kolmo(c as Cfg).empty).toMatch(/no chart/);
      expect(allNumbers(c).every(Number.isFinite)).toBe(true);
    }
  });
});

describe('a view with an uncertain drift', () => {
  it('the title states drift ± its uncertainty and the legend names the predictive density', () => {
    const plain = checkChartConfig(inputFor(callSpread));
    const unsure = checkChartConfig(inputFor(callSpread, G, { view: { drift: 0.09, vol: 0.26, driftSe: 0.06 } }));
    const title = (c: Cfg) => JSON.stringify(c.options!.plugins!.title!.text);
    expect(title(plain)).not.toMatch(/±/);
    expect(title(unsure)).toMatch(/drift 9(\.0)?% ± 6(\.0)?%/);
    expect(unsure.data.datasets[0].label).toMatch(/predictive/);
    expect(plain.data.datasets[0].label).not.toMatch(/predictive/);
  });
});
