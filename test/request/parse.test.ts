/**
 * The grammar of docs/design.md §2: every form there parses to the typed request it describes.
 * Expected values are read off the grammar text (percentages / 100, ISO dates, spans kept
 * relative); positions are found with indexOf in the request text, never copied from our output.
 */
import { describe, expect, it } from 'vitest';
import { parse } from '../../src/request/parse.js';
import type { CheckRequest, Request } from '../../src/request/types.js';

function ok(text: string): Request {
  const r = parse(text);
  if (!r.ok) throw new Error(`expected ${JSON.stringify(text)} to parse, got: ${r.error.message} at ${r.error.at}`);
  return r.request;
}

function check(text: string): CheckRequest {
  const r = ok(text);
  expect(r.verb).toBe('check');
  return r as CheckRequest;
}

/** index of the n-th (0-based) occurrence of `s` in `text` */
function nth(text: string, s: string, n = 0): number {
  let i = -1;
  for (let k = 0; k <= n; k++) {
    i = text.indexOf(s, i + 1);
    if (i < 0) throw new Error(`no ${s} #${n}`);
  }
  return i;
}

describe('check (docs/design.md §2, the two-leg example)', () => {
  const text =
    'check  +2 call 105 2027-03-19 @3.10 iv 28%  -2 call 115 2027-03-19 @1.05 iv 25%\n' +
    '       spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';

  it('parses to the typed request the grammar describes', () => {
    const r = check(text);
    expect(r.legs).toEqual([
      {
        qty: 2,
        kind: 'call',
        strike: 105,
        expiry: { date: '2027-03-19' },
        entry: 3.1,
        iv: 0.28,
        at: nth(text, '+2'),
        termsAt: { strike: nth(text, '105'), expiry: nth(text, '2027-03-19'), entry: nth(text, '@3.10'), iv: nth(text, 'iv 28%') },
      },
      {
        qty: -2,
        kind: 'call',
        strike: 115,
        expiry: { date: '2027-03-19' },
        entry: 1.05,
        iv: 0.25,
        at: nth(text, '-2'),
        termsAt: { strike: nth(text, '115'), expiry: nth(text, '2027-03-19', 1), entry: nth(text, '@1.05'), iv: nth(text, 'iv 25%') },
      },
    ]);
    expect(r.terms).toEqual({
      spot: 100,
      rate: 0.045,
      yield: 0.01,
      drift: 0.09,
      vol: 0.26,
      horizon: { date: '2027-02-15' },
      asof: '2027-01-04',
    });
    expect(r.termsAt).toEqual({
      spot: nth(text, 'spot'),
      rate: nth(text, 'rate'),
      yield: nth(text, 'yield'),
      drift: nth(text, 'drift'),
      vol: nth(text, 'vol'),
      horizon: nth(text, 'horizon'),
      asof: nth(text, 'asof'),
    });
    expect(r.end).toBe(text.length);
  });

  it('is the same without the verb, in another case, with terms in another order', () => {
    const a = check(text);
    const b = check(
      '+2 CALL 105 2027-03-19 @ 3.10 IV 28% -2 Call 115 2027-03-19 @1.05 iv 25% ' +
        'ASOF 2027-01-04 horizon 2027-02-15 vol 26% drift 9% yield 1% rate 4.5% spot 100',
    );
    const strip = (r: CheckRequest) => ({
      legs: r.legs.map(({ at: _a, termsAt: _t, ...l }) => l),
      terms: r.terms,
    });
    expect(strip(b)).toEqual(strip(a));
  });

  it('accepts the short type words c, p, sh and plurals', () => {
    const r = check('+1 c 100 3m -1 p 90 3m 5 sh 2 calls 110 3m -3 puts 80 3m 7 share');
    expect(r.legs.map((l) => [l.qty, l.kind])).toEqual([
      [1, 'call'],
      [-1, 'put'],
      [5, 'shares'],
      [2, 'call'],
      [-3, 'put'],
      [7, 'shares'],
    ]);
  });
});

describe('legs', () => {
  it('unsigned quantity is long', () => {
    expect(check('3 call 100 3m').legs[0].qty).toBe(3);
  });

  it('a leg of shares has no strike or expiry and may carry an entry price', () => {
    const r = check('100 shares @84.20 -1 call 90 2m iv 29% spot 84.20');
    expect(r.legs[0]).toMatchObject({ qty: 100, kind: 'shares', entry: 84.2 });
    expect(r.legs[0].strike).toBeUndefined();
    expect(r.legs[0].expiry).toBeUndefined();
  });

  it('the leg terms may come in any order right after the leg', () => {
    const a = check('+1 call 100 2027-03-19 @2.5 iv 30%').legs[0];
    const b = check('+1 call iv 30% @2.5 2027-03-19 100').legs[0];
    expect([b.strike, b.expiry, b.entry, b.iv]).toEqual([a.strike, a.expiry, a.entry, a.iv]);
  });

  it('iv right after a leg belongs to the leg; after a market term it is the position iv', () => {
    const r = check('+1 call 100 3m iv 30% -1 call 110 3m spot 100 iv 25%');
    expect(r.legs[0].iv).toBe(0.3);
    expect(r.legs[1].iv).toBeUndefined();
    expect(r.terms.iv).toBe(0.25);
  });

  it('iv after a shares leg is the position iv (shares have none)', () => {
    const r = check('100 shares iv 30% -1 call 110 3m spot 100');
    expect(r.terms.iv).toBe(0.3);
    expect(r.legs[1].iv).toBeUndefined();
  });

  it('a leg may follow market terms, and its own terms follow it', () => {
    const r = check('+1 call 100 3m spot 100 -1 call 110 3m iv 20%');
    expect(r.legs).toHaveLength(2);
    expect(r.legs[1].iv).toBe(0.2);
    expect(r.terms.iv).toBeUndefined();
  });

  it('spans as expiries are kept relative', () => {
    const r = check('+1 call 100 30d -1 call 100 6w +1 put 90 3m -1 put 80 1y');
    expect(r.legs.map((l) => l.expiry)).toEqual([
      { span: 30, unit: 'd' },
      { span: 6, unit: 'w' },
      { span: 3, unit: 'm' },
      { span: 1, unit: 'y' },
    ]);
  });

  it('@ with and without a space, entry 0 allowed', () => {
    expect(check('+1 call 100 3m @ 3.10').legs[0].entry).toBe(3.1);
    expect(check('+1 call 100 3m @3.10').legs[0].entry).toBe(3.1);
    expect(check('+1 call 100 3m @0').legs[0].entry).toBe(0);
  });

  it('the Unicode minus sign reads as a minus', () => {
    expect(check('\u22122 call 100 3m').legs[0].qty).toBe(-2);
  });

  it('50 legs are accepted (the limit)', () => {
    const text = Array.from({ length: 50 }, (_, i) => `+1 call ${100 + i} 3m`).join(' ');
    expect(check(text).legs).toHaveLength(50);
  });
});

describe('market terms', () => {
  it('percentages are divided by 100 exactly as the decimal literal', () => {
    const r = check('+1 call 100 3m rate 4.5% yield 1.2% drift -3% vol 26.5% iv 31%');
    expect(r.terms).toMatchObject({ rate: 0.045, yield: 0.012, drift: -0.03, vol: 0.265, iv: 0.31 });
  });

  it('a space before % is allowed; a trailing comma is punctuation', () => {
    const r = check('+1 call 100 3m rate 4.5 %, spot 100, drift 9%');
    expect(r.terms).toMatchObject({ rate: 0.045, spot: 100, drift: 0.09 });
  });

  it('jumps RATE/yr MEAN% SD%', () => {
    const r = check('+1 put 80 3m jumps 0.5/yr -8% 12%');
    expect(r.terms.jumps).toEqual({ intensity: 0.5, mean: -0.08, sd: 0.12 });
    expect(check('+1 put 80 3m jumps 2/y 5% 0%').terms.jumps).toEqual({ intensity: 2, mean: 0.05, sd: 0 });
  });

  it('style, mult, on (upper-cased), exp, asof today', () => {
    const r = check('-1 put 95 6w style American mult 10 on fernwk exp 2027-06-18 asof today');
    expect(r.terms).toMatchObject({ style: 'american', mult: 10, on: 'FERNWK', exp: { date: '2027-06-18' }, asof: 'today' });
  });

  it('horizon and exp take spans', () => {
    const r = check('+1 call 100 horizon 30d exp 3m');
    expect(r.terms.horizon).toEqual({ span: 30, unit: 'd' });
    expect(r.terms.exp).toEqual({ span: 3, unit: 'm' });
  });

  it('a leap day in a leap year is a date', () => {
    expect(check('+1 call 100 2028-02-29').legs[0].expiry).toEqual({ date: '2028-02-29' });
    expect(check('+1 call 100 2000-02-29').legs[0].expiry).toEqual({ date: '2000-02-29' });
  });
});

describe('the other verbs (docs/design.md §2)', () => {
  it('iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%', () => {
    const text = 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%';
    expect(ok(text)).toEqual({
      verb: 'iv',
      kind: 'call',
      strike: 105,
      expiry: { date: '2027-03-19' },
      price: 3.1,
      terms: { spot: 100, rate: 0.045, yield: 0.01 },
      termsAt: {
        strike: nth(text, '105'),
        expiry: nth(text, '2027'),
        price: nth(text, 'price'),
        spot: nth(text, 'spot'),
        rate: nth(text, 'rate'),
        yield: nth(text, 'yield'),
      },
      end: text.length,
    });
  });

  it('iv put with a span and a mark', () => {
    expect(ok('iv p 38 6w price 1.12 on quillop')).toMatchObject({
      verb: 'iv',
      kind: 'put',
      strike: 38,
      expiry: { span: 6, unit: 'w' },
      price: 1.12,
      terms: { on: 'QUILLOP' },
    });
  });

  it('touch 120 by 2027-03-19 spot 100 drift 8% vol 25%', () => {
    const text = 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25%';
    expect(ok(text)).toEqual({
      verb: 'touch',
      level: 120,
      by: { date: '2027-03-19' },
      terms: { spot: 100, drift: 0.08, vol: 0.25 },
      termsAt: { level: nth(text, '120'), by: nth(text, 'by'), spot: nth(text, 'spot'), drift: nth(text, 'drift'), vol: nth(text, 'vol') },
      end: text.length,
    });
  });

  it('mark FERNWK spot 84.20 iv 31% yield 1.2%', () => {
    expect(ok('mark FERNWK spot 84.20 iv 31% yield 1.2%')).toEqual({
      verb: 'mark',
      symbol: 'FERNWK',
      terms: { spot: 84.2, iv: 0.31, yield: 0.012 },
    });
    expect(ok('mark')).toEqual({ verb: 'mark', terms: {} });
    expect(ok('Mark quillop rate 4.25%')).toEqual({ verb: 'mark', symbol: 'QUILLOP', terms: { rate: 0.0425 } });
  });

  it('compare <check> ; drift 0% ; drift 12% — each part inherits from the one before', () => {
    const text = 'compare +1 call 90 3m iv 30% on FERNWK ; drift 0% ; drift 12% spot 85';
    const r = ok(text);
    if (r.verb !== 'compare') throw new Error('not compare');
    expect(r.parts).toEqual([
      { text: '+1 call 90 3m iv 30% on FERNWK', at: nth(text, '+1') },
      { text: 'drift 0%', at: nth(text, 'drift 0%') },
      { text: 'drift 12% spot 85', at: nth(text, 'drift 12%') },
    ]);
    const checks = r.checks!;
    expect(checks).toHaveLength(3);
    for (const c of checks) expect(c.legs[0]).toMatchObject({ qty: 1, kind: 'call', strike: 90, iv: 0.3 });
    expect(checks[0].terms).toEqual({ on: 'FERNWK' });
    expect(checks[1].terms).toEqual({ on: 'FERNWK', drift: 0 });
    expect(checks[2].terms).toEqual({ on: 'FERNWK', drift: 0.12, spot: 85 });
    expect(checks[2].termsAt.drift).toBe(nth(text, 'drift 12%'));
  });

  it('compare: legs in a later part replace the legs', () => {
    const r = ok('compare +1 put 45 6w iv 35% spot 47.10 ; +1 put 42 6w iv 38% ; vol 45%');
    if (r.verb !== 'compare') throw new Error('not compare');
    const [a, b, c] = r.checks!;
    expect(a.legs[0].strike).toBe(45);
    expect(b.legs[0].strike).toBe(42);
    expect(c.legs[0].strike).toBe(42);
    expect(c.terms).toEqual({ spot: 47.1, vol: 0.45 });
  });

  it('log [N]', () => {
    expect(ok('log')).toEqual({ verb: 'log', count: 10 });
    expect(ok('LOG 25')).toEqual({ verb: 'log', count: 25 });
  });

  it('again N [rest]', () => {
    expect(ok('again 17')).toMatchObject({ verb: 'again', number: 17, rest: '' });
    const text = 'again 17 spot 102 drift 5%';
    expect(ok(text)).toEqual({ verb: 'again', number: 17, rest: 'spot 102 drift 5%', restAt: nth(text, 'spot') });
  });

  it('help [topic]', () => {
    expect(ok('help')).toEqual({ verb: 'help' });
    expect(ok('help Jumps')).toEqual({ verb: 'help', topic: 'jumps' });
  });
});
