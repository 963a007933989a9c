/**
 * Marks: `mark SYMBOL …` stores the channel's market terms for a symbol, `on SYMBOL` uses them,
 * terms in the request override them, the answer states the mark's age and flags a mark older
 * than a day as stale. The clock is driven through AskContext.now.
 *
 * What the checks rest on (identities): a check `on SYMBOL` means the same check with the mark's
 * terms written out (docs/design.md §2: "take market terms from the channel's mark; terms written in
 * the request override it"), so their figures must be equal; the age is the difference of two
 * clock readings we set ourselves; "older than a day" is the rule (24 h).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { answered, ask, at, desk, figures, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

const MARK = 'mark FERNWK spot 84.20 iv 31% yield 1.2% rate 4.5%';
const ON = '+1 call 90 2027-03-19 -1 call 100 2027-03-19 on FERNWK drift 9% asof 2027-01-04';
const WRITTEN = '+1 call 90 2027-03-19 -1 call 100 2027-03-19 spot 84.20 iv 31% yield 1.2% rate 4.5% drift 9% asof 2027-01-04';

describe('mark SYMBOL …', () => {
  it('records who and when, is posted to the channel (not only to the asker) and takes no log number', async () => {
    const r = answered(await ask(d.store, MARK, { user: 'U0BOB' }));
    expect(r.ephemeral).toBe(false);
    expect(r.logNumber).toBeUndefined();
    expect(r.json).toMatchObject({ kind: 'mark', symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, rate: 0.045, user: 'U0BOB' });
    expect(await d.store.getMark('C0DESKA', 'FERNWK')).toMatchObject({ spot: 84.2, user: 'U0BOB', at: '2027-01-04T14:00:00.000Z' });
    expect(await d.store.recent('C0DESKA', 10)).toEqual([]);
  });

  it('a new mark updates only the terms it names, keeps the rest (view included) and shows before → after', async () => {
    answered(await ask(d.store, MARK + ' vol 28% drift 9% ± 6%'));
    const r = answered(await ask(d.store, 'mark fernwk spot 86', { now: at(3) }));
    expect(await d.store.getMark('C0DESKA', 'FERNWK')).toMatchObject({ spot: 86, iv: 0.31, yield: 0.012, rate: 0.045, vol: 0.28, drift: 0.09, driftSe: 0.06 });
    expect(r.text).toContain('spot 84.20 → 86');
    expect(r.text).toMatch(/kept: iv 31(\.0+)?%, yield 1\.2%, rate 4\.5%, vol 28(\.0+)?%, drift 9(\.0+)?% ± 6(\.0+)?%/);
    expect(r.json).toMatchObject({ spot: 86, iv: 0.31, vol: 0.28, replaced: { spot: 84.2, iv: 0.31 } });
    // a drift written again replaces the drift and its uncertainty together
    answered(await ask(d.store, 'mark FERNWK drift 5%', { now: at(4) }));
    const m = (await d.store.getMark('C0DESKA', 'FERNWK'))!;
    expect(m).toMatchObject({ spot: 86, iv: 0.31, vol: 0.28, drift: 0.05 });
    expect(m.driftSe).toBeUndefined();
  });

  it('`mark` lists the channel\'s marks to the asker with age and stale flag; `mark SYMBOL` shows one', async () => {
    answered(await ask(d.store, MARK, { now: at(0) }));
    answered(await ask(d.store, 'mark QUILLOP spot 41.05 iv 36%', { now: at(20) }));
    const list = answered(await ask(d.store, 'mark', { now: at(26) }));
    expect(list.ephemeral).toBe(true);
    const marks = list.json.marks as { symbol: string; stale: boolean; ageMinutes: number }[];
    expect(marks.map((m) => [m.symbol, m.stale, m.ageMinutes])).toEqual([
      ['FERNWK', true, 26 * 60],
      ['QUILLOP', false, 6 * 60],
    ]);
    expect(list.text.split('\n').find((l) => l.startsWith('FERNWK'))).toContain('STALE');
    expect(list.text.split('\n').find((l) => l.startsWith('QUILLOP'))).not.toContain('STALE');
    const one = answered(await ask(d.store, 'mark quillop', { now: at(26) }));
    expect((one.json.marks as unknown[]).length).toBe(1);
    expect(rejected(await ask(d.store, 'mark BRISAND')).message).toContain('no mark for BRISAND');
  });
});

describe('on SYMBOL', () => {
  it('fills the market terms: the same figures as the terms written out', async () => {
    answered(await ask(d.store, MARK));
    const on = answered(await ask(d.store, ON));
    const written = answered(await ask(d.store, WRITTEN));
    expect(figures(on.json)).toEqual(figures(written.json));
  });

  it('terms in the request override the mark', async () => {
    answered(await ask(d.store, MARK));
    const on = answered(await ask(d.store, `${ON} spot 88 iv 29%`));
    const written = answered(await ask(d.store, WRITTEN.replace('spot 84.20', 'spot 88').replace('iv 31%', 'iv 29%')));
    expect(figures(on.json)).toEqual(figures(written.json));
    expect((on.json.market as { spot: number }).spot).toBe(88);
  });

  it('fills iv and touch requests too', async () => {
    answered(await ask(d.store, MARK));
    const iv = answered(await ask(d.store, 'iv put 80 2027-03-19 price 2.10 on FERNWK asof 2027-01-04'));
    const ivW = answered(await ask(d.store, 'iv put 80 2027-03-19 price 2.10 spot 84.20 yield 1.2% rate 4.5% asof 2027-01-04'));
    expect(iv.json.iv).toBe(ivW.json.iv);
    const t = answered(await ask(d.store, 'touch 95 by 2027-03-19 on FERNWK drift 6% asof 2027-01-04'));
    const tW = answered(await ask(d.store, 'touch 95 by 2027-03-19 spot 84.20 vol 31% yield 1.2% rate 4.5% drift 6% asof 2027-01-04'));
    expect(t.json.probTouchView).toBe(tW.json.probTouchView);
  });

  it('states the mark\'s age; flags it as stale only when it is older than a day', async () => {
    answered(await ask(d.store, MARK, { user: 'U0BOB', now: at(0) }));
    const fresh = answered(await ask(d.store, ON, { now: at(3) }));
    expect(fresh.json.mark).toMatchObject({ symbol: 'FERNWK', user: 'U0BOB', ageMinutes: 180, stale: false });
    expect(fresh.text).toContain('Mark FERNWK: recorded 2027-01-04 14:00 UTC by U0BOB, 3 h 00 min old.');
    expect(fresh.headline).not.toContain('stale');
    const day = answered(await ask(d.store, ON, { now: at(24) }));
    expect(day.json.mark).toMatchObject({ stale: false });
    const stale = answered(await ask(d.store, ON, { now: at(24 + 1 / 60) }));
    expect(stale.json.mark).toMatchObject({ stale: true, ageMinutes: 24 * 60 + 1 });
    expect(stale.text).toMatch(/Warning: mark FERNWK is older than a day/);
    expect(stale.headline).toContain('mark FERNWK stale');
    const days = answered(await ask(d.store, ON, { now: at(75) }));
    expect(days.text).toContain('3 days 3 h old');
  });

  it('a symbol without a mark is rejected with the caret on `on SYMBOL` and an example that records one', async () => {
    const r = rejected(await ask(d.store, ON));
    expect(r.at).toBe(ON.indexOf('on FERNWK'));
    expect(r.message).toContain('mark FERNWK spot');
    expect(await d.store.recent('C0DESKA', 10)).toEqual([]);
  });
});
