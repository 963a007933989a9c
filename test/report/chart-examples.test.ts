/**
 * Example renders (docs/examples/*.png) of an invented underlying, FERNWK, from real engine
 * results (src/core/outcome.ts): a vertical spread, a short straddle, a calendar spread, covered
 * stock, and a comparison of one spread under three views. Each is rendered and decoded here;
 * the files are (re)written only when KOLMO_WRITE_EXAMPLES=1:
 *
 *   KOLMO_WRITE_EXAMPLES=1 npx vitest run test/report/chart-examples.test.ts
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { loadImage } from 'canvas';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput, LegInput, Walk } from '../../src/core/types.js';
import { chartInputFromCheck, checkChartConfig, compareChartConfig } from '../../src/report/chart.js';
import { renderPng } from '../../src/report/render.js';

const OUT = join(dirname(fileURLToPath(import.meta.url)), '../../docs/examples');
const WRITE = process.env.KOLMO_WRITE_EXAMPLES === '1';

// asof 2027-01-04; near expiry 2027-02-19 (46 days), far expiry 2027-04-16 (102 days)
const NEAR = 46 / 365;
const FAR = 102 / 365;
const market = { spot: 84.2, rate: 0.045, yield: 0.012 };
const view: Walk = { drift: 0.11, vol: 0.31 };

function check(legs: LegInput[], v: Walk = view): CheckInput {
  return { market, legs, mult: 100, style: 'european', horizonYears: NEAR, view: v };
}

async function emit(name: string, png: Buffer) {
  const img = await loadImage(png);
  expect([img.width, img.height]).toEqual([900, 500]);
  if (WRITE) {
    mkdirSync(OUT, { recursive: true });
    writeFileSync(join(OUT, name), png);
  }
}

async function densityChart(name: string, position: string, inp: CheckInput) {
  const core = runCheck(inp);
  const cfg = checkChartConfig(chartInputFromCheck(inp, core, { position, horizon: '2027-02-19', currency: 'USD' }));
  await emit(name, await renderPng(cfg));
}

const spread: LegInput[] = [
  { qty: 2, kind: 'call', strike: 85, years: NEAR, iv: 0.32, entry: 3.55 },
  { qty: -2, kind: 'call', strike: 95, years: NEAR, iv: 0.29, entry: 0.75 },
];

describe('example renders from the engine', () => {
  it('vertical spread', () => densityChart('call-spread.png', 'FERNWK +2/−2 call spread 85/95', check(spread)));
  it('short straddle', () =>
    densityChart(
      'short-straddle.png',
      'FERNWK −1 straddle 85',
      check([
        { qty: -1, kind: 'call', strike: 85, years: NEAR, iv: 0.31, entry: 3.7 },
        { qty: -1, kind: 'put', strike: 85, years: NEAR, iv: 0.31, entry: 4.3 },
      ]),
    ));
  it('calendar spread', () =>
    densityChart(
      'calendar.png',
      'FERNWK call calendar 85 Feb/Apr',
      check([
        { qty: -3, kind: 'call', strike: 85, years: NEAR, iv: 0.31, entry: null },
        { qty: 3, kind: 'call', strike: 85, years: FAR, iv: 0.3, entry: null },
      ]),
    ));
  it('covered stock', () =>
    densityChart(
      'covered-stock.png',
      'FERNWK +200 shares, −2 call 90',
      check([
        { qty: 200, kind: 'shares', strike: 0, years: 0, iv: 0, entry: 84.2 },
        { qty: -2, kind: 'call', strike: 90, years: NEAR, iv: 0.3, entry: 1.6 },
      ]),
    ));
  it('comparison of the spread under three views', async () => {
    const items = [0, 0.11, 0.2].map((drift) => {
      const core = runCheck(check(spread, { drift, vol: 0.31 }));
      return { label: `drift ${Math.round(drift * 100)}%`, pnlDensity: core.curves.pnlDensity, expectedPnl: core.outcome.expectedPnl };
    });
    await emit('compare.png', await renderPng(compareChartConfig(items, { title: 'FERNWK +2/−2 call spread 85/95: P&L at 2027-02-19 under three views', currency: 'USD' })));
  });
});
