/**
 * What the chart reads from a check: a plain object, so it may cross a worker boundary. The
 * chart configuration itself is made from it in ./chart.ts (./answer-chart.ts renders it).
 */
import type { CheckAssembly } from '../result.js';
import { positionWords } from './text.js';

export function checkChartInput(a: CheckAssembly) {
  const c = a.json;
  return {
    title: positionWords(c),
    horizon: c.horizon,
    view: { drift: c.view.drift, vol: c.view.vol, ...(c.view.jumps ? { jumps: c.view.jumps } : {}), ...(c.view.driftSe ? { driftSe: c.view.driftSe } : {}) },
    spot: c.market.spot,
    strikes: [...new Set(c.legs.filter((l) => l.strike !== null).map((l) => l.strike as number))].sort((x, y) => x - y),
    breakevens: c.outcome.breakevens,
    probProfit: c.outcome.probProfit,
    expectedPnl: c.outcome.expectedPnl,
    marketVol: c.marketVol,
    curves: a.curves,
    ...(c.exits ? { exits: { target: c.exits.target, stop: c.exits.stop } } : {}),
  };
}
