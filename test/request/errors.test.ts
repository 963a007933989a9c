/**
 * Every class of bad input gets { message, at, length, example }: the caret at the first bad
 * token (found with indexOf in the request, never copied from our output), a message saying what
 * was expected, and an example that itself parses. The rule is docs/design.md §2 ("quoting the request
 * with a caret under the first bad token, saying what was expected, and giving one corrected
 * example").
 */
import { describe, expect, it } from 'vitest';
import { formatError, parse } from '../../src/request/parse.js';
import type { ParseError } from '../../src/request/types.js';

/** Parse `text`, expect a rejection with the caret on `token` (its n-th occurrence). */
function bad(text: string, token: string | null, message: RegExp, n = 0): ParseError {
  const r = parse(text);
  if (r.ok) throw new Error(`expected ${JSON.stringify(text)} to be rejected, got ${JSON.stringify(r.request)}`);
  const e = r.error;
  expect(e.message).toMatch(message);
  if (token !== null) {
    let at = -1;
    for (let k = 0; k <= n; k++) at = text.indexOf(token, at + 1);
    expect(at).toBeGreaterThanOrEqual(0);
    expect(e.at).toBe(at);
    expect(e.length).toBe(token.length);
  }
  expect(e.example.length).toBeGreaterThan(0);
  const ex = parse(e.example);
  if (!ex.ok) throw new Error(`example ${JSON.stringify(e.example)} does not parse: ${ex.error.message}`);
  for (const w of ['NaN', 'undefined', 'Infinity']) if (!text.includes(w)) expect(e.message).not.toContain(w);
  return e;
}

describe('words', () => {
  it('an unknown word, with the likely term', () => {
    const e = bad('+1 call 100 3m spto 100', 'spto', /unknown word 'spto' — did you mean spot\?/);
    expect(e.example).toBe('+1 call 100 3m spot 100');
  });

  it('an unknown word without a likely term', () => {
    bad('+1 call 100 3m banana 100', 'banana', /unknown word 'banana'.*expected a leg or one of spot, rate/);
  });

  it('an unknown verb', () => {
    const e = bad('chek +1 call 100 3m', 'chek', /unknown verb 'chek' — did you mean check\?/);
    expect(e.example).toBe('check +1 call 100 3m');
  });

  it('a type word without a quantity', () => {
    const e = bad('call 100 3m iv 30%', 'call', /starts with its quantity/);
    expect(e.example).toBe('+1 call 100 3m iv 30%');
  });

  it('a quantity followed by a wrong type word', () => {
    const e = bad('+1 cal 100 3m', 'cal', /expected call, put or shares.*did you mean call/);
    expect(e.example).toBe('+1 call 100 3m');
  });

  it('market terms before any leg', () => {
    bad('spot 100 drift 9%', 'spot', /starts with its legs/);
  });

  it('a term that does not apply to the verb', () => {
    const e = bad('touch 120 by 3m horizon 2m spot 100', 'horizon', /horizon does not apply to touch/);
    expect(e.example).toBe('touch 120 by 3m spot 100');
    bad('iv call 105 3m price 3.10 drift 9%', 'drift', /drift does not apply to iv/);
    // a mark may carry a view (drift ± its uncertainty, vol) since issue 14, but not a horizon
    bad('mark FERNWK horizon 2m', 'horizon', /horizon does not apply to mark/);
  });

  it('a verb in the middle', () => {
    bad('+1 call 100 3m touch 120', 'touch', /is a verb and goes at the start/);
  });

  it('a number where a word is expected', () => {
    bad('+1 call 100 3m spot 100 42', '42', /found the number 42/);
    bad('+1 call 100 3m style 3', '3', /style needs american or european, found '3'/, 1);
    bad('+1 call 100 3m on 123', '123', /not a symbol/);
  });

  it('a word where a number is expected', () => {
    const e = bad('+1 call 100 3m spot rate 4.5%', 'rate', /spot needs a number before 'rate'/);
    expect(e.example).toBe('+1 call 100 3m spot 84.20 rate 4.5%');
    bad('+1 call 100 3m spot abc', 'abc', /spot needs a number/);
  });

  it('thousands separators and currency signs', () => {
    let e = bad('+1 call 1,000 3m', '1,000', /without thousands separators/);
    expect(e.example).toBe('+1 call 1000 3m');
    e = bad('+1 call 100 3m spot $84.20', '$84.20', /currency signs: 84.20/);
    expect(e.example).toBe('+1 call 100 3m spot 84.20');
    e = bad('1,000 shares spot 84', '1,000', /thousands separators/);
    expect(e.example).toBe('1000 shares spot 84');
    bad('+1 call 100 3m @$3.10', '$3.10', /currency signs/);
  });

  it('a value missing at the end: the caret just past the end', () => {
    const text = '+1 call 100 3m spot';
    const r = parse(text);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.error.at).toBe(text.length);
    expect(r.error.message).toMatch(/spot needs a number/);
    expect(r.error.example).toBe('+1 call 100 3m spot 84.20');
  });
});

describe('legs', () => {
  it('an option leg without a strike', () => {
    const e = bad('+1 call 3m iv 30%', 'call', /call of leg 1 needs a strike/);
    expect(e.example).toBe('+1 call 100 3m iv 30%');
    bad('+2 put @1.10', 'put', /needs a strike/);
  });

  it('quantity 0, fractional, or absurd', () => {
    bad('0 call 100 3m', '0', /quantity of 0/);
    bad('1.5 call 100 3m', '1.5', /whole number/);
    bad('1e12 call 100 3m', '1e12', /above the limit of 100,000 contracts/);
    bad('200000 call 100 3m', '200000', /above the limit/);
    bad('1e9 shares', '1e9', /above the limit of 100,000,000 shares/);
    bad('1e309 call 100 3m', '1e309', /above the limit/);
  });

  it('strike 0, negative or huge', () => {
    bad('+1 call 0 3m', '0', /strike must be positive/);
    bad('+1 put 1e8 3m', '1e8', /above the limit/);
  });

  it('more than 50 legs: the caret on the 51st', () => {
    const legs = Array.from({ length: 51 }, (_, i) => `+1 call ${1000 + i} 3m`);
    const text = legs.join(' ');
    const r = parse(text);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.error.at).toBe(text.indexOf(legs[50]));
    expect(r.error.message).toMatch(/at most 50 legs/);
  });

  it('a shares leg with a strike, an expiry or an iv', () => {
    const e = bad('100 shares 84.20', '84.20', /shares leg has no strike/);
    expect(e.example).toBe('100 shares @84.20');
    bad('100 shares 3m spot 80', '3m', /shares leg has no expiry/);
  });

  it('two entries, two expiries, two ivs on one leg', () => {
    bad('+1 call 100 3m @1 @2', '@', /already has an entry price/, 1);
    const e = bad('+1 call 100 3m spot 100 @2', '@', /goes right after its leg/);
    expect(e.example).toBe('+1 call 100 3m spot 100');
    bad('+1 call 100 3m 6m', '6m', /already has an expiry/);
    bad('+1 call 100 3m iv 20% iv 30%', 'iv', /already has iv 20%/, 1);
    bad('+1 call 100 3m 110', '110', /already has strike 100/);
  });

  it('a negative entry price', () => {
    const e = bad('-1 call 100 3m @-2.5', '-2.5', /never negative/);
    expect(e.example).toBe('-1 call 100 3m @2.5');
  });

  it('a percentage without a name after a leg', () => {
    const e = bad('+1 call 100 3m 28%', '28%', /needs its name in front: iv 28%/);
    expect(e.example).toBe('+1 call 100 3m iv 28%');
  });
});

describe('percentages', () => {
  it('vol 0.25 — did you mean 25%?', () => {
    const e = bad('+1 call 100 3m vol 0.25', '0.25', /^vol 0\.25 — did you mean 25%\?/);
    expect(e.example).toBe('+1 call 100 3m vol 25%');
  });

  it('vol 25 — did you mean 25%?', () => {
    const e = bad('+1 call 100 3m vol 25', '25', /^vol 25 — did you mean 25%\?/, 0);
    expect(e.example).toBe('+1 call 100 3m vol 25%');
  });

  it('rate 0.045 and rate 4.5 both mean 4.5%; rate 0.5 means 0.5%', () => {
    bad('+1 call 100 3m rate 0.045', '0.045', /rate 0\.045 — did you mean 4\.5%\?/);
    bad('+1 call 100 3m rate 4.5', '4.5', /rate 4\.5 — did you mean 4\.5%\?/);
    bad('+1 call 100 3m rate 0.5', '0.5', /rate 0\.5 — did you mean 0\.5%\?/);
  });

  it('drift, yield, leg iv, jump terms', () => {
    bad('+1 call 100 3m drift 0.09', '0.09', /drift 0\.09 — did you mean 9%\?/);
    bad('+1 call 100 3m yield 1', '1', /yield 1 — did you mean 1%\?/, 2);
    bad('+1 call 100 3m iv 0.3', '0.3', /iv 0\.3 — did you mean 30%\?/);
    bad('+1 put 80 3m jumps 0.5/yr -0.08 12%', '-0.08', /jump mean -0\.08 — did you mean -8%\?/);
    bad('+1 put 80 3m jumps 0.5/yr -8% 0.12', '0.12', /jump s\.d\. 0\.12 — did you mean 12%\?/);
  });

  it('a vol written as a decimal percentage (iv 0.28%) is below the floor', () => {
    bad('+1 call 100 3m iv 0.28%', '0.28%', /below the 1% floor — did you mean 28%\?/);
  });

  it('zero or negative vol', () => {
    bad('+1 call 100 3m vol 0%', '0%', /vol must be positive/);
    bad('+1 call 100 3m vol -25%', '-25%', /vol must be positive/);
    bad('+1 call 100 3m iv -5%', '-5%', /iv must be positive/);
  });

  it('out of range', () => {
    bad('+1 call 100 3m vol 900%', '900%', /outside 1% … 500%/);
    bad('+1 call 100 3m rate 300%', '300%', /outside -10% … 100%/);
    bad('+1 call 100 3m drift 1e400%', '1e400%', /too large/);
  });

  it('a price written as a percentage', () => {
    const e = bad('+1 call 100 3m spot 100%', '100%', /spot is a price, not a percentage/);
    expect(e.example).toBe('+1 call 100 3m spot 100');
  });

  it('doubled or leading percent signs', () => {
    bad('+1 call 100 3m vol 25%%', '25%%', /vol needs a percentage such as 25%/);
    bad('+1 call 100 3m vol %25', '%25', /vol needs a percentage/);
  });

  it('jumps without /yr', () => {
    const e = bad('+1 put 80 3m jumps 0.5 -8% 12%', '0.5', /write 0\.5\/yr/);
    expect(e.example).toBe('+1 put 80 3m jumps 0.5/yr -8% 12%');
    bad('+1 put 80 3m jumps 0/yr -8% 12%', '0/yr', /above 0/);
    bad('+1 put 80 3m jumps 0.5/yr -8% -12%', '-12%', /must not be negative/);
  });
});

describe('dates and spans', () => {
  it('a date past 2200 or before 1900', () => {
    bad('+1 call 100 2201-01-01', '2201-01-01', /year 2201 is outside 1900–2200/);
    bad('+1 call 100 3m asof 1899-12-31', '1899-12-31', /outside 1900–2200/);
  });

  it('a day that does not exist', () => {
    bad('+1 call 100 2027-02-29', '2027-02-29', /2027 is not a leap year/);
    bad('+1 call 100 2100-02-29', '2100-02-29', /2100 is not a leap year/); // century rule
    bad('+1 call 100 2027-04-31', '2027-04-31', /month 4 of 2027 has 30 days, not 31/);
    bad('+1 call 100 2027-13-01', '2027-13-01', /no month 13/);
  });

  it('a near-ISO date gets the ISO form', () => {
    const e = bad('+1 call 100 2027-3-19', '2027-3-19', /yyyy-mm-dd — did you mean 2027-03-19\?/);
    expect(e.example).toBe('+1 call 100 2027-03-19');
    bad('+1 call 100 2027/03/19', '2027/03/19', /did you mean 2027-03-19/);
    bad('+1 call 100 19/03/2027', '19/03/2027', /year first.*did you mean 2027-03-19/);
  });

  it('an ambiguous day-first/month-first date gets no guess', () => {
    const e = bad('+1 call 100 03/04/2027', '03/04/2027', /year first/);
    expect(e.message).not.toMatch(/did you mean/);
  });

  it('spans: zero, too long, written out', () => {
    bad('+1 call 100 0d', '0d', /no time at all/);
    bad('+1 call 100 500y', '500y', /more than 100 years/);
    const e = bad('+1 call 100 30days', '30days', /did you mean 30d\?/);
    expect(e.example).toBe('+1 call 100 30d');
  });

  it('asof takes a date, not a span', () => {
    bad('+1 call 100 3m asof 3m', '3m', /asof takes a date/, 1);
  });

  it('a date with no name after market terms', () => {
    bad('+1 call 100 3m spot 100 2027-03-19', '2027-03-19', /a date needs its name in front: exp, horizon, asof/);
  });
});

describe('structure', () => {
  it('the empty request', () => {
    for (const t of ['', '   ', '\n\t']) {
      const r = parse(t);
      expect(r.ok).toBe(false);
      if (r.ok) continue;
      expect(r.error.at).toBe(0);
      expect(r.error.message).toMatch(/empty/);
      expect(parse(r.error.example).ok).toBe(true);
    }
  });

  it('duplicate terms: the caret on the second', () => {
    const e = bad('+1 call 100 3m spot 100 rate 4% spot 101', 'spot', /spot is given twice \(first at character 16\)/, 1);
    expect(e.example).toBe('+1 call 100 3m spot 100 rate 4%');
    bad('+1 call 100 3m exp 3m expiry 6m', 'expiry', /exp is given twice/);
  });

  it('; outside a comparison', () => {
    const e = bad('+1 call 100 3m ; drift 0%', ';', /start the request with compare/);
    expect(e.example).toBe('compare +1 call 100 3m ; drift 0%');
  });

  it('compare: too few parts, an empty part, a first part without legs, too many parts', () => {
    bad('compare +1 call 100 3m', null, /at least two parts/);
    bad('compare +1 call 100 3m ; ; drift 0%', ';', /empty part/, 1);
    bad('compare drift 0% ; drift 5%', 'drift', /first part of a comparison .* starts with a leg/);
    const text = 'compare +1 call 100 3m' + ' ; drift 1%'.repeat(8);
    bad(text, 'drift 1%', /at most 6 checks/, 5);
    bad('compare +1 call 100 3m ; vol 0.3', '0.3', /did you mean 30%/);
  });

  it('iv: missing pieces', () => {
    bad('iv call 105 2027-03-19 spot 100', null, /needs the option price/);
    bad('iv call 2027-03-19 price 3', 'price', /needs a strike/);
    bad('iv call 105 price 3', 'price', /needs an expiry/);
    bad('iv 28% +1 call 100 3m', '28%', /asks for an implied vol/);
    bad('iv shares 100 3m', 'shares', /call or a put/);
  });

  it('touch: missing by, level as a percentage', () => {
    bad('touch 120 spot 100', null, /touch needs a date: by/);
    bad('touch 12% by 3m', '12%', /not a percentage/);
  });

  it('mark: symbol rules', () => {
    bad('mark spot 84.20', 'spot', /mark needs the symbol first/);
    bad('mark FERN$WK spot 84', 'FERN$WK', /not a symbol/);
    bad('mark ABCDEFGHIJKLMNOPQ', 'ABCDEFGHIJKLMNOPQ', /at most 15 characters/);
  });

  it('log, again, help', () => {
    bad('log 0', '0', /log needs a whole number from 1 to 100/);
    bad('log 1000', '1000', /from 1 to 100/);
    bad('log 5 more', 'more', /log takes only a count/);
    bad('again', null, /again needs the number/);
    bad('again x', 'x', /again needs a whole number/);
    bad('again 17 spot 0.5%', '0.5%', /not a percentage/);
    bad('help nonsense', 'nonsense', /no help on 'nonsense'/);
    const e = bad('help jumsp', 'jumsp', /did you mean jumps\?/);
    expect(e.example).toBe('help jumps');
  });

  it('a request that is too long', () => {
    const text = '+1 call 100 3m ' + 'spot 100 '.repeat(300);
    const r = parse(text);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error.message).toMatch(/limit is 2,000/);
  });

  it('NaN, Infinity and 1e309 are never numbers', () => {
    bad('+1 call 100 3m spot NaN', 'NaN', /spot needs a number/);
    bad('+1 call 100 3m spot Infinity', 'Infinity', /spot needs a number/);
    bad('+1 call 100 3m spot 1e309', '1e309', /too large/);
    bad('+1 call NaN 3m', 'call', /needs a strike/);
  });

  it('not a string', () => {
    const r = parse(42 as unknown as string);
    expect(r.ok).toBe(false);
  });
});

describe('formatError', () => {
  it('quotes the request, puts carets under the bad token, says what was expected, gives the example', () => {
    const text = '+1 call 100 3m vol 0.25 spot 100';
    const r = parse(text);
    if (r.ok) throw new Error('expected an error');
    const lines = formatError(text, r.error).split('\n');
    const quoted = lines.findIndex((l) => l.includes(text));
    expect(quoted).toBeGreaterThanOrEqual(0);
    const caret = lines[quoted + 1];
    const col = caret.indexOf('^');
    const textCol = lines[quoted].indexOf(text);
    expect(col - textCol).toBe(text.indexOf('0.25'));
    expect(caret.trim()).toBe('^^^^');
    expect(lines.some((l) => l.includes('did you mean 25%'))).toBe(true);
    expect(lines[lines.length - 1]).toBe('Example: +1 call 100 3m vol 25% spot 100');
  });

  it('windows a long request around the bad token, caret still under it', () => {
    const text = Array.from({ length: 8 }, (_, i) => `+1 call ${100 + i} 3m iv 30%`).join(' ') + ' spot 100 vol 0.25 drift 5%';
    const r = parse(text);
    if (r.ok) throw new Error('expected an error');
    const out = formatError(text, r.error).split('\n');
    for (const l of out.slice(0, 3)) expect(Array.from(l).length).toBeLessThanOrEqual(80);
    const col = Array.from(out[2]).indexOf('^');
    expect(Array.from(out[1]).slice(col, col + 4).join('')).toBe('0.25');
  });

  it('counts code points, so a wide character before the token does not shift the caret', () => {
    const text = '+1 call 100 3m 🚀 vol 25';
    const r = parse(text);
    if (r.ok) throw new Error('expected an error');
    expect(r.error.at).toBe(text.indexOf('🚀'));
    const out = formatError(text, r.error).split('\n');
    const col = Array.from(out[2]).indexOf('^');
    expect(Array.from(out[1])[col]).toBe('🚀');
  });

  it('a caret past the end for a missing value', () => {
    const text = '+1 call 100 3m spot';
    const r = parse(text);
    if (r.ok) throw new Error('expected an error');
    const out = formatError(text, r.error).split('\n');
    expect(out[2].indexOf('^') - out[1].indexOf('+')).toBe(text.length);
  });
});

describe('the zod guard at the edge', () => {
  it('rejects what the parser must never let through', async () => {
    const { requestSchema } = await import('../../src/verbs/registry.js');
    const good = parse('+1 call 100 3m iv 30% spot 100');
    if (!good.ok) throw new Error('expected to parse');
    expect(requestSchema.safeParse(good.request).success).toBe(true);
    const leg = (good.request as { legs: object[] }).legs[0];
    const bads = [
      { ...good.request, terms: { spot: NaN } },
      { ...good.request, terms: { spot: Infinity } },
      { ...good.request, terms: { vol: 0 } },
      { ...good.request, terms: { asof: '2027-02-30' } },
      { ...good.request, terms: { horizon: { span: 0, unit: 'd' } } },
      { ...good.request, legs: [{ ...leg, qty: 0 }] },
      { ...good.request, legs: [{ ...leg, strike: undefined }] },
      { ...good.request, legs: [] },
      { verb: 'log', count: 1e6 },
    ];
    for (const b of bads) expect(requestSchema.safeParse(b).success).toBe(false);
  });
});
