/**
 * Answers that read right in a chat window, marks that keep what they do not name, `again` that
 * says what it reran, and warnings for very unlikely inputs — through the engine seam on a real
 * SQLite log. What the checks rest on: the rules (a net credit reads as a credit; rho when
 * the rate is at least 5% or an expiry a year away; ASCII hyphen-minus in text; the caution once,
 * not on help pages), the request the test itself wrote (before → after of a mark), and trade
 * names of structures (common practice: iron condor, butterfly, ratio spread, collar, diagonal).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { CAUTION } from '../../src/reply.js';
import { answered, ask, at, desk, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

const MKT = 'spot 100 rate 4.5% yield 1% drift 8% asof 2027-01-04';



describe('warnings for very unlikely inputs', () => {
  it('an entry far from fair value (iv 250% typed for 25%)', async () => {
    const r = answered(await ask(d.store, `+1 call 100 2027-03-19 @4.10 iv 250% ${MKT}`));
    expect(r.text).toMatch(/Warning: .*entry.*fair value/i);
  });
  it('a horizon of minutes', async () => {
    // a horizon written in minutes is taken as such, and warned about
    const r = answered(await ask(d.store, `+1 call 100 2027-03-19 iv 25% ${MKT} horizon 30min`));
    expect(r.text).toMatch(/Warning: .*30 minutes/);
    expect(answered(await ask(d.store, `+1 call 100 2027-03-19 iv 25% ${MKT} horizon 1d`)).text).not.toMatch(/Warning/);
  });
  it('a mark older than a day', async () => {
    answered(await ask(d.store, 'mark FERNWK spot 84.20 iv 31% yield 1.2% rate 4.5%'));
    const r = answered(await ask(d.store, '+1 call 90 2027-03-19 on FERNWK drift 9% asof 2027-01-04', { now: at(30) }));
    expect(r.text).toMatch(/Warning: .*mark.*older than a day/i);
  });
});

describe('the table reads right in a chat window', () => {
  it('a net credit reads as a credit; units on the position row; days to expiry per leg', async () => {
    const r = answered(await ask(d.store, `-1 put 95 2027-03-19 @2.40 iv 30% +1 put 90 2027-03-19 @0.90 iv 32% ${MKT}`));
    expect(r.text).toMatch(/credit 150\.00/);
    expect(r.text).not.toMatch(/cost -150|cost −150/);
    expect(r.text).toMatch(/per 1\.00 of spot|money/);
    expect(r.text).toMatch(/74d|74 d/); // 2027-01-04 → 2027-03-19 is 74 days
  });

  it('rho when the rate is at least 5% or an expiry a year away, not otherwise', async () => {
    expect(answered(await ask(d.store, `+1 call 100 2027-03-19 iv 30% ${MKT}`)).text).not.toMatch(/\brho\b|ρ/);
    expect(answered(await ask(d.store, `+1 call 100 2027-03-19 iv 30% spot 100 rate 5% asof 2027-01-04`)).text).toMatch(/\brho\b|ρ/);
    expect(answered(await ask(d.store, `+1 call 100 2028-03-17 iv 30% ${MKT}`)).text).toMatch(/\brho\b|ρ/);
  });

  it('p25 and p75 in the table; ASCII hyphen-minus only; no method notes unless verbose', async () => {
    const r = answered(await ask(d.store, `+1 call 100 2027-04-16 @5 iv 30% -1 call 110 2027-03-19 @1 iv 28% ${MKT} vol 35%`));
    expect(r.text).toMatch(/P&L p25/);
    expect(r.text).toMatch(/P&L p75/);
    expect(r.text).not.toMatch(/[\u2212]/);
    expect(r.text).not.toMatch(/Gauss-Legendre/);
    expect((r.json.notes as string[]).join(' ')).toMatch(/Gauss-Legendre/);
    const v = answered(await ask(d.store, `+1 call 100 2027-04-16 @5 iv 30% -1 call 110 2027-03-19 @1 iv 28% ${MKT} vol 35% verbose`));
    expect(v.text).toMatch(/Gauss-Legendre/);
    // the word is not part of the check: the same JSON, and the log keeps the request without it
    expect(v.json).toEqual(r.json);
    expect((await d.store.get('C0DESKA', v.logNumber!))!.text).not.toMatch(/verbose/);
    const c = answered(await ask(d.store, `compare +1 call 100 2027-03-19 iv 30% ${MKT} ; +1 call 105 2027-03-19 iv 30% ${MKT} verbose`));
    expect(c.text).toMatch(/Note[^:]*: (values|outcome):/);
  });

  it('the assumptions line stays under about 100 characters a line', async () => {
    const r = answered(await ask(d.store, `100 shares @84.20 -1 call 90 2027-03-19 iv 29% spot 84.20 rate 4% yield 1% drift 7% vol 30% jumps 0.5/yr -8% 12% style american`));
    const start = r.text.split('\n').findIndex((l) => l.startsWith('Assumptions'));
    expect(start).toBeGreaterThanOrEqual(0);
    for (let i = start; i < r.text.split('\n').length && r.text.split('\n')[i] !== ''; i++) expect(r.text.split('\n')[i].length).toBeLessThanOrEqual(100);
  });

  it('the caution is one short line on every answer but not on help pages', async () => {
    expect(CAUTION.length).toBeLessThanOrEqual(100);
    expect(CAUTION).not.toMatch(/\n/);
    const h = answered(await ask(d.store, 'help'));
    expect(h.caution).toBe('');
    expect(answered(await ask(d.store, `+1 call 100 2027-03-19 iv 30% ${MKT}`)).caution).toBe(CAUTION);
  });
});

describe('named structures in the title', () => {
  const cases: [string, RegExp][] = [
    [`+1 put 85 2027-03-19 -1 put 90 2027-03-19 -1 call 110 2027-03-19 +1 call 115 2027-03-19 iv 25% ${MKT}`, /iron condor/],
    [`+1 call 95 2027-03-19 -2 call 100 2027-03-19 +1 call 105 2027-03-19 iv 25% ${MKT}`, /butterfly/],
    [`+1 call 100 2027-03-19 -2 call 110 2027-03-19 iv 25% ${MKT}`, /ratio spread/],
    [`100 shares @100 +1 put 90 2027-03-19 -1 call 110 2027-03-19 iv 25% ${MKT}`, /collar/],
    [`+1 call 100 2027-06-18 -1 call 105 2027-03-19 iv 25% ${MKT}`, /diagonal/],
  ];
  for (const [req, name] of cases) {
    it(String(name), async () => {
      const r = answered(await ask(d.store, req));
      expect(r.text.split('\n')[0]).toMatch(name);
    });
  }
});
