/**
 * `again N [changes]` through the engine seam on a real SQLite log.
 *
 * What the checks rest on (identities, no outputs of our own code written down):
 * - rerunning the same request gives the same figures (the engine is deterministic);
 * - `again N changes` means the logged request with the changes (terms override, legs replace —
 *   docs/design.md §2), so its figures equal those of that request written out and asked directly;
 * - the change it reports is the difference between the two answers' figures;
 * - a request without `asof` is as of the day it was answered, so a rerun on a later day keeps
 *   that day unless it says `asof today` (the issue's example `again 17 spot 102 asof today`).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { money, pct } from '../../src/report/format.js';
import { SPREAD, answered, ask, at, desk, figures, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

type Out = { outcome: { probProfit: number; expectedPnl: number } };

describe('again of a check', () => {
  it('the seam reads the logged check for the budget: changes that make it too heavy are refused before it runs, nothing logged', async () => {
    // a long-dated call the budget lets through alone; with many wide jumps over 13 years it is not
    // (test/robust/budget.test.ts costs the same pair from the text)
    answered(await ask(d.store, 'check +1 c 100 2056-12-01 iv 30% spot 100 rate 4% drift 8% asof 2027-01-04'));
    const r = rejected(await ask(d.store, 'again 1 jumps 100/yr -10% 200% horizon 2040-01-01'));
    expect(r.message).toMatch(/this rerun needs about/);
    expect(r.at).toBe('again 1 '.length);
    expect(await d.store.recent('C0DESKA', 10)).toHaveLength(1);
  });

  it('unchanged: the same figures, posted as a new check', async () => {
    const a = answered(await ask(d.store, SPREAD));
    const b = answered(await ask(d.store, 'again 1', { now: at(30) }));
    expect(b.logNumber).toBe(2);
    expect(figures(b.json)).toEqual(figures(a.json));
    expect(b.text).toContain('changed: nothing');
    expect(b.headline).toMatch(/^again #1 · /);
    expect((await d.store.get('C0DESKA', 2))!.text).toBe(SPREAD);
  });

  it('with terms: the same as the merged request asked directly, says what changed and the change in chance of profit and expected P&L', async () => {
    const a = answered(await ask(d.store, SPREAD));
    const b = answered(await ask(d.store, 'again 1 spot 102 vol 30%'));
    const direct = answered(await ask(d.store, SPREAD.replace('spot 100', 'spot 102') + ' vol 30%', { store: null }));
    expect(figures(b.json)).toEqual(figures(direct.json));
    expect(b.text).toContain('changed: spot 100 → 102');
    const oa = (a.json as Out).outcome;
    const ob = (b.json as Out).outcome;
    expect(b.text).toContain(`chance of profit ${pct(oa.probProfit)} → ${pct(ob.probProfit)}`);
    expect(b.text).toContain(`expected P&L ${money(oa.expectedPnl, { sign: true })} → ${money(ob.expectedPnl, { sign: true })} (${money(ob.expectedPnl - oa.expectedPnl, { sign: true })})`);
  });

  it('legs written replace the logged legs; the market terms stay', async () => {
    answered(await ask(d.store, SPREAD));
    const b = answered(await ask(d.store, 'again 1 +1 put 95 2027-03-19 iv 31%'));
    const legs = b.json.legs as { type: string; strike: number }[];
    expect(legs).toHaveLength(1);
    expect(legs[0]).toMatchObject({ type: 'put', strike: 95 });
    expect((b.json.market as { spot: number }).spot).toBe(100);
  });

  it('a check logged without asof reruns as of its own day; `asof today` moves it to the rerun\'s day', async () => {
    const noAsof = SPREAD.replace(' asof 2027-01-04', '');
    const a = answered(await ask(d.store, noAsof, { now: at(0) }));
    expect(a.json.asof).toBe('2027-01-04');
    const later = answered(await ask(d.store, 'again 1 spot 102', { now: at(72) }));
    expect(later.json.asof).toBe('2027-01-04');
    expect(later.text).toContain('asof 2027-01-04 kept from #1');
    const today = answered(await ask(d.store, 'again 1 spot 102 asof today', { now: at(72) }));
    expect(today.json.asof).toBe('2027-01-07');
    expect(today.text).toContain('asof 2027-01-04 → 2027-01-07');
    // and it means the request written out with that asof
    const direct = answered(await ask(null, `${noAsof.replace('spot 100', 'spot 102')} asof 2027-01-07`));
    expect(figures(today.json)).toEqual(figures(direct.json));
  });

  it('a bad change is rejected with the caret in the again request, and nothing is logged', async () => {
    answered(await ask(d.store, SPREAD));
    const r = rejected(await ask(d.store, 'again 1 vol 0.3'));
    expect(r.at).toBe('again 1 '.length + 'vol '.length);
    expect(r.message).toContain('30%');
    expect(await d.store.recent('C0DESKA', 10)).toHaveLength(1);
  });

  it('a change the rerun cannot take (a horizon after the expiry) quotes the request that was run', async () => {
    answered(await ask(d.store, SPREAD));
    const r = rejected(await ask(d.store, 'again 1 horizon 2027-06-01'));
    expect(r.message).toContain('again 1 reruns check #1');
    expect(r.message).toContain('horizon 2027-06-01');
    expect(await d.store.recent('C0DESKA', 10)).toHaveLength(1);
  });
});

describe('again of every verb', () => {
  it('a comparison: changes apply to every part that states them; the figures equal the comparison written out', async () => {
    const cmp = `compare ${SPREAD} ; drift 0% ; vol 35%`;
    answered(await ask(d.store, cmp));
    const b = answered(await ask(d.store, 'again 1 spot 98'));
    expect(b.logNumber).toBe(2);
    const direct = answered(await ask(null, cmp.replace('spot 100', 'spot 98')));
    const checks = (x: typeof b) => (x.json.checks as Record<string, unknown>[]).map(figures);
    expect(checks(b)).toEqual(checks(direct));
    expect(b.text).toContain('part 1: spot 100 → 98');
    expect(b.text).toContain('part 3: spot 100 → 98');
    expect((b.chart as { kind: string }).kind).toBe('compare');
    expect((await d.store.get('C0DESKA', 2))!.verb).toBe('compare');
  });

  it('an iv request: the new price gives the iv of the request written out, and the change in iv', async () => {
    const iv = 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1% asof 2027-01-04';
    const a = answered(await ask(d.store, iv));
    const b = answered(await ask(d.store, 'again 1 price 3.50'));
    const direct = answered(await ask(null, iv.replace('price 3.10', 'price 3.50')));
    expect(b.json.iv).toBe(direct.json.iv);
    expect(b.json.iv as number).toBeGreaterThan(a.json.iv as number); // vega > 0: a dearer option has a higher iv
    expect(b.text).toContain(`iv ${pct(a.json.iv as number, 2)} → ${pct(b.json.iv as number, 2)}`);
    expect(b.text).toContain('price 3.10 → 3.50');
  });

  it('a touch request: the new vol gives the chances of the request written out', async () => {
    const t = 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25% asof 2027-01-04';
    const a = answered(await ask(d.store, t));
    const b = answered(await ask(d.store, 'again 1 vol 35%'));
    const direct = answered(await ask(null, t.replace('vol 25%', 'vol 35%')));
    expect(b.json.probTouchView).toBe(direct.json.probTouchView);
    expect(b.text).toContain(`chance of touching ${pct(a.json.probTouchView as number)} → ${pct(b.json.probTouchView as number)}`);
    expect(b.text).toContain('vol 25% → 35%');
  });

  it('iv, touch and a `check`-prefixed request logged without asof keep their day too', async () => {
    answered(await ask(d.store, 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5%'));
    answered(await ask(d.store, 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25% asof today'));
    answered(await ask(d.store, 'check +1 call 105 2027-03-19 iv 28% spot 100'));
    for (const n of [1, 2, 3]) {
      const r = answered(await ask(d.store, `again ${n}`, { now: at(48) }));
      expect(r.json.asof, `again ${n}`).toBe('2027-01-04');
      expect(answered(await ask(d.store, `again ${n} asof today`, { now: at(48) })).json.asof).toBe('2027-01-06');
    }
  });

  it('again of an again entry reruns the request that entry ran', async () => {
    answered(await ask(d.store, SPREAD));
    const b = answered(await ask(d.store, 'again 1 spot 103'));
    expect((await d.store.get('C0DESKA', 2))!.text).toContain('spot 103');
    const c = answered(await ask(d.store, 'again 2', { now: at(50) }));
    expect(figures(c.json)).toEqual(figures(b.json));
    const e = answered(await ask(d.store, 'again 2 drift 0%'));
    const direct = answered(await ask(null, SPREAD.replace('spot 100', 'spot 103').replace('drift 9%', 'drift 0%')));
    expect(figures(e.json)).toEqual(figures(direct.json));
    // the log says which check each rerun came from
    const log = answered(await ask(d.store, 'log'));
    expect(log.text).toContain('again #2');
    expect(log.text).toContain('again #1');
  });

  it('again of a number that is not a check of this channel, with no log, says so', async () => {
    expect(rejected(await ask(d.store, 'again 1')).message).toContain('no check #1 in this channel');
    expect(rejected(await ask(null, 'again 1')).message).toMatch(/needs the channel's log/);
  });
});

describe('again of a check on a mark', () => {
  // identity: a check `on SYMBOL` is the same check with the mark's terms written out (design §2),
  // so a rerun as logged must equal the check written with the old mark's terms, and `now` the one
  // written with today's
  const ON = '+1 call 90 2027-03-19 -1 call 100 2027-03-19 on FERNWK drift 9% asof 2027-01-04';
  const written = (spot: string) => `+1 call 90 2027-03-19 -1 call 100 2027-03-19 spot ${spot} iv 31% yield 1.2% rate 4.5% drift 9% asof 2027-01-04`;

  it('reruns as logged by default (the marks it used, kept in the log), and on today\'s mark with `now`', async () => {
    answered(await ask(d.store, 'mark FERNWK spot 84.20 iv 31% yield 1.2% rate 4.5%'));
    answered(await ask(d.store, ON, { now: at(1) }));
    expect(((await d.store.get('C0DESKA', 1))!.summary.marks as { symbol: string; spot: number }[])[0]).toMatchObject({ symbol: 'FERNWK', spot: 84.2 });
    answered(await ask(d.store, 'mark FERNWK spot 90', { now: at(2) }));
    const logged = answered(await ask(d.store, 'again 1', { now: at(3) }));
    expect(figures(logged.json)).toEqual(figures(answered(await ask(d.store, written('84.20'))).json));
    expect(logged.text).toMatch(/as logged \(mark FERNWK of 2027-01-04 14:00 UTC: spot 84\.20/);
    expect(logged.text).toContain('`again 1 now` reruns it on today\'s mark');
    const now = answered(await ask(d.store, 'again 1 now', { now: at(3) }));
    expect(figures(now.json)).toEqual(figures(answered(await ask(d.store, written('90'))).json));
    expect(now.text).toMatch(/on today's mark \(FERNWK of 2027-01-04 16:00 UTC\) and as of today/);
    // the rerun logs the marks it used, so again of it is as logged too
    const again2 = answered(await ask(d.store, `again ${logged.logNumber}`, { now: at(4) }));
    expect(figures(again2.json)).toEqual(figures(logged.json));
  });

  it('`now` is read before the changes: `again 1 now spot 95`', async () => {
    answered(await ask(d.store, SPREAD));
    const r = answered(await ask(d.store, 'again 1 now spot 95', { now: at(30) }));
    expect(r.text).toMatch(/and as of today with: spot 95/);
    expect((r.json as { market: { spot: number } }).market.spot).toBe(95);
  });
});
