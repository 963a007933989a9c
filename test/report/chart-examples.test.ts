/**
 * Example renders (docs/examples/*.png) of an invented underlying, FERNWK: a vertical spread, a
 * short straddle, covered stock and a comparison. Each is rendered and decoded here; the files
 * are (re)written only when KOLMO_WRITE_EXAMPLES=1:
 *
 *   KOLMO_WRITE_EXAMPLES=1 npx vitest run test/report/chart-examples.test.ts
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { loadImage } from 'canvas';
import { checkChartConfig, compareChartConfig, type ChartInput } from '../../src/report/chart.js';
import { renderPng } from '../../src/report/render.js';
import { callSpread, closedFormCurves, coveredStock, shortStraddle, type Gbm } from './chart-closed-forms.js';

const OUT = join(dirname(fileURLToPath(import.meta.url)), '../../docs/examples');
const WRITE = process.env.KOLMO_WRITE_EXAMPLES === '1';

const G: Gbm = { s0: 100, mu: 0.09, r: 0.045, q: 0.01, sigma: 0.26, t: 42 / 365 };

function base(position: string, pos: { strikes: number[]; breakevens: number[]; pnl: (s: number) => number }, probProfit: number, expectedPnl: number): ChartInput {
  return {
    position,
    horizon: '2027-02-15',
    view: { drift: G.mu, vol: G.sigma },
    spot: G.s0,
    strikes: pos.strikes,
    breakevens: pos.breakevens,
    probProfit,
    expectedPnl,
    curves: closedFormCurves(G, pos.pnl),
    currency: 'USD',
  };
}

async function emit(name: string, png: Buffer) {
  const img = await loadImage(png);
  expect([img.width, img.height]).toEqual([900, 500]);
  if (WRITE) {
    mkdirSync(OUT, { recursive: true });
    writeFileSync(join(OUT, name), png);
  }
}

describe('example renders (closed-form curves)', () => {
  it('vertical spread, short straddle, covered stock, comparison', async () => {
    // chance of profit and expected P&L here are illustrative labels, not computed figures
    await emit('closed-form-call-spread.png', await renderPng(checkChartConfig(base('FERNWK +2/−2 call spread 105/115', callSpread, 0.31, -18))));
    await emit('closed-form-short-straddle.png', await renderPng(checkChartConfig(base('FERNWK −1 straddle 100', shortStraddle, 0.55, 45))));
    await emit('closed-form-covered-stock.png', await renderPng(checkChartConfig(base('FERNWK +100 shares, −1 call 110', coveredStock, 0.6, 95))));
    const norm = (m: number, s: number, w = 1) => {
      const x = Array.from({ length: 301 }, (_, i) => m - 5 * s + (10 * s * i) / 300);
      return { x, density: x.map((v) => (w * Math.exp(-0.5 * ((v - m) / s) ** 2)) / (s * Math.sqrt(2 * Math.PI))), atoms: [] as { x: number; prob: number }[] };
    };
    const cmp = compareChartConfig(
      [
        { label: 'drift 0%', pnlDensity: norm(-60, 380), expectedPnl: -60 },
        { label: 'drift 9%', pnlDensity: norm(40, 400), expectedPnl: 40 },
        { label: 'drift 15%', pnlDensity: norm(130, 420), expectedPnl: 130 },
        { label: 'spread', pnlDensity: { ...norm(300, 500, 0.5), atoms: [{ x: -410, prob: 0.3 }, { x: 1590, prob: 0.2 }] }, expectedPnl: 345 },
      ],
      { currency: 'USD' },
    );
    await emit('closed-form-compare.png', await renderPng(cmp));
  });
});
