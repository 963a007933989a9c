/**
 * The comparison chart reads without a key to decode: equal point masses of several checks (the
 * same max loss in three checks) are drawn at one place, the density axis carries a scale, and the
 * subtitle says in plain words what is drawn. Densities here are normal curves computed in the
 * test; the identities are that a stem's height is its probability and that the density axis's
 * scale, read as "chance per step of P&L", is the density times the step.
 */
import { describe, expect, it } from 'vitest';
import { compareChartConfig, type KolmoPluginOptions } from '../../src/report/chart.js';

function normalPnl(m: number, s: number, scale = 1) {
  const x: number[] = [];
  for (let i = 0; i <= 600; i++) x.push(m - 6 * s + (12 * s * i) / 600);
  return { x, density: x.map((v) => (scale * Math.exp(-0.5 * ((v - m) / s) ** 2)) / (s * Math.sqrt(2 * Math.PI))), atoms: [] as { x: number; prob: number }[] };
}

// three views of one capped spread: the same max loss (−410, up to rounding) with different chances
const items = [0.3, 0.25, 0.2].map((p, k) => ({
  label: `drift ${k * 6}%`,
  pnlDensity: { ...normalPnl(100 + 80 * k, 300, 1 - p - 0.1), atoms: [{ x: -410 + k * 1e-10, prob: p }, { x: 1590, prob: 0.1 }] },
  expectedPnl: 50 + 40 * k,
}));
const cfg = compareChartConfig(items, { currency: 'USD' });
const plugin = (cfg.options!.plugins as { kolmo: KolmoPluginOptions }).kolmo;

describe('comparison chart reading', () => {
  it('equal atoms of several checks are drawn at one place', () => {
    const at410 = plugin.stems.filter((s) => Math.abs(s.x + 410) < 1e-6);
    expect(at410).toHaveLength(3);
    expect(new Set(at410.map((s) => s.x)).size).toBe(1);
    expect(at410.every((s) => (s as { together?: boolean }).together === true)).toBe(true);
    expect(at410.map((s) => s.y).sort()).toEqual([0.2, 0.25, 0.3]);
  });

  it('the density axis has a scale: ticks shown and a title that says per how much P&L', () => {
    const y = cfg.options!.scales!.yDensity as { ticks: { display?: boolean }; title: { text: string } };
    expect(y.ticks.display).not.toBe(false);
    expect(y.title.text).toMatch(/chance per [\d,]+/);
  });

  it('the subtitle is in plain words', () => {
    const t = (cfg.options!.plugins!.subtitle as { text: string }).text;
    expect(t).not.toMatch(/density|area/);
    expect(t).toMatch(/how likely/i);
  });
});
