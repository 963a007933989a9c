/**
 * `history SYMBOL …` through the engine's seam with a real SQLite store: closes inline (plain and
 * dated), from a shared file, and from the channel's stored history; appending; `save` into the
 * mark and the next `on SYMBOL` check using it; bad input with the caret.
 *
 * The figures themselves are checked against Hull's worked example in test/core/history.test.ts;
 * here the same 21 closes (Hull, Options, Futures, and Other Derivatives, estimating volatility
 * from historical data; from memory) go through the whole path and must give the same 19.3%.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { estimateHistory } from '../../src/core/history.js';
import { DEMO_HISTORY } from '../../src/demo/history.js';
import { exampleOf } from '../../src/request/examples.js';
import { answered, ask, desk, rejected, type Desk } from './helpers.js';

const HULL = '20.00 20.10 19.90 20.00 20.50 20.25 20.90 20.90 20.90 20.75 20.75 21.00 21.10 20.90 20.90 21.25 21.40 21.40 21.25 21.75 22.00';
type J = Record<string, any>;
const csv = (rows: [string, number][], head = 'date,close') => Buffer.from([head, ...rows.map(([d, c]) => `${d},${c}`)].join('\n')).toString('base64');

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

describe('history', () => {
  it('inline closes without dates: consecutive trading days, the worked example’s 19.3%', async () => {
    const a = answered(await ask(d.store, `history FERNWK ${HULL}`));
    const j = a.json as J;
    expect(j).toMatchObject({ kind: 'history', symbol: 'FERNWK', n: 21, first: null, last: null, clock: 'trading' });
    expect(j.vol).toBeCloseTo(0.193, 3);
    expect(j.volSe).toBeCloseTo(0.0305, 3);
    expect(j.years).toBeCloseTo(20 / 252, 14);
    expect(a.text).toMatch(/consecutive trading days, 252 a year/);
    expect(a.chart).toMatchObject({ kind: 'history', symbol: 'FERNWK' });
    expect(a.verb).toBe('history');
  });

  it('dated closes inline; the help example runs from a fresh store', async () => {
    const j = answered(await ask(d.store, exampleOf('history'))).json as J;
    expect(j).toMatchObject({ n: 12, first: '2026-01-05', last: '2026-01-20', clock: 'calendar' });
    expect(j.years).toBeCloseTo(15 / 365, 14);
    expect(j.warnings.some((w: string) => w.startsWith('short history'))).toBe(true);
  });

  it('a shared CSV file; then `history SYMBOL` alone re-reads the stored closes; new closes append', async () => {
    const rows = DEMO_HISTORY.map(([date, close]) => [date, close] as [string, number]);
    const first = rows.slice(0, 200);
    const a = answered(await ask(d.store, 'history FERNWK yield 1.2%', { files: [{ name: 'fernwk.csv', base64: csv(first) }] })).json as J;
    expect(a).toMatchObject({ n: 200, source: 'fernwk.csv', kept: 200 });
    const b = answered(await ask(d.store, 'history fernwk')).json as J;
    expect(b).toMatchObject({ n: 200, source: "the channel's stored history" });
    expect(b.vol).toBe(a.vol);
    // the rest of the year, with a re-sent overlap of five days: the stored stretch is replaced
    const rest = rows.slice(195).map(([dd, c]) => `${dd}:${c}`).join(' ');
    const c = answered(await ask(d.store, `history FERNWK ${rest}`)).json as J;
    expect(c.n).toBe(rows.length);
    const direct = estimateHistory(rows.map(([date, close]) => ({ date, close })));
    expect(c.vol).toBeCloseTo(direct.vol, 14);
    expect(c.drift).toBeCloseTo(direct.drift, 14);
    // another channel sees none of it
    expect(rejected(await ask(d.store, 'history FERNWK', { channel: 'C0OTHER' })).message).toMatch(/none stored for FERNWK in this channel/);
  });

  it('save puts vol and drift ± s.e. into the mark; the next `on SYMBOL` check uses them as its view', async () => {
    answered(await ask(d.store, 'mark FERNWK spot 84.20 iv 31% yield 1.2% rate 4.5%'));
    const h = answered(await ask(d.store, `history FERNWK ${HULL} save`)).json as J;
    const m = (await d.store.getMark('C0DESKA', 'FERNWK'))!;
    expect(m).toMatchObject({ spot: 84.2, iv: 0.31, yield: 0.012, rate: 0.045 });
    expect(m.vol).toBe(h.vol);
    expect(m.drift).toBe(h.drift);
    expect(m.driftSe).toBe(h.driftSe);
    const c = answered(await ask(d.store, '+1 call 90 2027-12-17 @3 on FERNWK')).json as J;
    expect(c.view).toMatchObject({ vol: h.vol, drift: h.drift, driftSe: h.driftSe });
    expect(c.notes.join(' ')).toMatch(/the view uses the mark's drift/);
    // a drift written in the request overrides the mark's drift and its uncertainty together
    const c2 = answered(await ask(d.store, '+1 call 90 2027-12-17 @3 on FERNWK drift 5%')).json as J;
    expect(c2.view.drift).toBe(0.05);
    expect(c2.view.driftSe).toBeUndefined();
    // without a mark, save makes one at the last close
    answered(await ask(d.store, `history QUILLOP ${HULL} save`));
    expect(await d.store.getMark('C0DESKA', 'QUILLOP')).toMatchObject({ spot: 22, vol: h.vol });
  });

  it('a mark can carry a drift with its uncertainty and a vol', async () => {
    answered(await ask(d.store, 'mark FERNWK spot 84.20 iv 31% drift 9% ± 6% vol 28%'));
    expect(await d.store.getMark('C0DESKA', 'FERNWK')).toMatchObject({ drift: 0.09, driftSe: 0.06, vol: 0.28 });
    const t = answered(await ask(d.store, 'touch 100 by 2027-12-17 on FERNWK')).json as J;
    expect(t.view).toMatchObject({ drift: 0.09, driftSe: 0.06, vol: 0.28 });
    expect(answered(await ask(d.store, 'mark')).text).toMatch(/drift 9% ± 6%/);
  });

  it('bad input gets the caret under the first bad close, and nothing is kept', async () => {
    const bad = `history FERNWK ${HULL.replace('20.50', '-20.50')}`;
    const r = rejected(await ask(d.store, bad));
    expect(r.at).toBe(bad.indexOf('-20.50'));
    expect(r.message).toMatch(/positive price/);
    const order = 'history FERNWK 2026-01-06:1 2026-01-05:2 2026-01-07:3 2026-01-08:4 2026-01-09:5 2026-01-12:6 2026-01-13:7 2026-01-14:8 2026-01-15:9 2026-01-16:10';
    const r2 = rejected(await ask(d.store, order));
    expect(r2.at).toBe(order.indexOf('2026-01-05'));
    expect(r2.message).toMatch(/before the close above it/);
    const rep = order.replace('2026-01-05:2', '2026-01-06:2');
    expect(rejected(await ask(d.store, rep)).message).toMatch(/appears twice/);
    const few = 'history FERNWK 1 2 3 4 5 6 7 8 9';
    expect(rejected(await ask(d.store, few)).message).toMatch(/at least 10/);
    expect(rejected(await ask(d.store, 'history FERNWK 1 2 x3')).at).toBe('history FERNWK 1 2 '.length);
    expect(rejected(await ask(d.store, 'history 42')).message).toMatch(/not a symbol/);
    expect(await d.store.getCloses('C0DESKA', 'FERNWK')).toEqual([]);
  });

  it('a file that is not text, or with a bad line, is refused with its line named', async () => {
    const png = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0]).toString('base64');
    expect(rejected(await ask(d.store, 'history FERNWK', { files: [{ name: 'x.png', base64: png }] })).message).toMatch(/not text/);
    const badLine = Buffer.from('date,close\n2026-01-05,84.1\n2026-01-06,oops\n').toString('base64');
    expect(rejected(await ask(d.store, 'history FERNWK', { files: [{ name: 'p.csv', base64: badLine }] })).message).toMatch(/line 3 of p\.csv/);
    const outOfOrder = csv(DEMO_HISTORY.slice(0, 12).map(([a, b], i, all) => (i === 5 ? [all[7][0], b] : [a, b])));
    expect(rejected(await ask(d.store, 'history FERNWK', { files: [{ name: 'o.csv', base64: outOfOrder }] })).message).toMatch(/line \d+ of o\.csv/);
    const both = rejected(await ask(d.store, `history FERNWK ${HULL}`, { files: [{ name: 'p.csv', base64: csv([['2026-01-05', 1]]) }] }));
    expect(both.message).toMatch(/give them one way/);
  });

  it('more than 20 years is refused', async () => {
    const r = rejected(await ask(d.store, 'history FERNWK 2000-01-03:10 2000-01-04:10.1 2000-01-05:10.2 2000-01-06:10 2000-01-07:10.3 2000-01-10:10 2000-01-11:10.1 2000-01-12:10.2 2000-01-13:10 2021-01-04:12'));
    expect(r.message).toMatch(/at most 20 are taken/);
  });
});

describe('history save', () => {
  it('estimates a check could not use (beyond the request limits) are not saved, and the answer says why', async () => {
    const dd = await desk();
    try {
      // ten closes doubling every day: a drift far beyond 200% a year
      const wild = `history FERNWK ${Array.from({ length: 10 }, (_, i) => (10 * 2 ** i * (1 + 0.02 * (-1) ** i)).toFixed(2)).join(" ")} save`;
      const a = answered(await ask(dd.store, wild));
      expect(a.text).toMatch(/Not saved into the mark FERNWK: drift .* is outside −?200% … 200%/);
      expect((a.json as J).notSaved).toBeDefined();
      expect(await dd.store.getMark('C0DESKA', 'FERNWK')).toBeUndefined();
    } finally {
      await dd.close();
    }
  });
});
