/**
 * The history answer: the JSON carries the fields docs/design.md §4 names for `kind:"history"`, and the
 * text shows the estimates with their standard errors, the clock, the warnings and what was kept.
 */
import { describe, expect, it } from 'vitest';
import { estimateHistory } from '../../src/core/history.js';
import { DEMO_HISTORY } from '../../src/demo/history.js';
import { historyHeadline, historyJson, historyText } from '../../src/report/history.js';

const closes = DEMO_HISTORY.map(([date, close]) => ({ date, close }));
const est = estimateHistory(closes, 0.012);

describe('history report', () => {
  it('JSON: kind, symbol, n, first, last, years, vol, volSe, drift, driftSe as plain decimals and ISO dates', () => {
    const j = historyJson({ symbol: 'FERNWK', est, source: 'inline', notes: [] });
    expect(j).toMatchObject({ kind: 'history', symbol: 'FERNWK', n: closes.length, first: '2026-01-02', last: '2026-12-31' });
    for (const k of ['years', 'vol', 'volSe', 'drift', 'driftSe']) expect(typeof j[k]).toBe('number');
    expect(j.years).toBeCloseTo(363 / 365, 14);
    expect(j.driftSe).toBeCloseTo((j.vol as number) / Math.sqrt(363 / 365), 14);
    expect(JSON.parse(JSON.stringify(j))).toEqual(j);
  });
  it('text: the two clocks, the standard errors, the breakdown of μ̂ and what save does', () => {
    const t = historyText({ symbol: 'FERNWK', est, source: 'inline', notes: [], kept: closes.length });
    expect(t).toMatch(/260 closes, 2026-01-02 → 2026-12-31, 0\.99 years \(calendar days\/365\)/);
    expect(t).toMatch(/252-day check/);
    expect(t).toMatch(/yield 1\.2%/);
    expect(t).toMatch(/Kept: 260 closes of FERNWK/);
    expect(t).toMatch(/Add `save`/);
    const s = historyText({ symbol: 'FERNWK', est, source: 'inline', notes: [], saved: { vol: est.vol, drift: est.drift, driftSe: est.driftSe } });
    expect(s).toMatch(/Saved into the mark FERNWK: vol 2\d\.\d%, drift −?\d+\.\d% ± \d+\.\d%/);
    expect(historyHeadline({ symbol: 'FERNWK', est, source: 'inline', notes: [] })).toMatch(/^history FERNWK: 260 closes → vol/);
  });
});
