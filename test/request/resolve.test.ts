/**
 * Resolving requests into core input: docs/design.md §2 defaults and §3 units (time = calendar days /
 * 365, counted by hand in the comments), and the checks that span several terms. Errors are
 * checked for the caret position (found with indexOf) and for an example that parses and resolves.
 */
import { describe, expect, it } from 'vitest';
import { parse } from '../../src/request/parse.js';
import { resolveCheck, resolveIv, resolveTouch, type ResolveContext } from '../../src/request/resolve.js';
import type { CheckRequest, IvRequest, ParseError, TouchRequest } from '../../src/request/types.js';

const TODAY = '2027-01-04';

function req<T>(text: string): T {
  const r = parse(text);
  if (!r.ok) throw new Error(`does not parse: ${text}: ${r.error.message}`);
  return r.request as T;
}

function checkOk(text: string, ctx: Partial<ResolveContext> = {}) {
  const r = resolveCheck(req<CheckRequest>(text), { today: TODAY, text, ...ctx });
  if (!r.ok) throw new Error(`does not resolve: ${text}: ${r.error.message}`);
  return r.check;
}

/** Expect a resolve error with the caret on `token` (n-th occurrence), and a working example. */
function checkBad(text: string, token: string | null, message: RegExp, ctx: Partial<ResolveContext> = {}, n = 0): ParseError {
  const r = resolveCheck(req<CheckRequest>(text), { today: TODAY, text, ...ctx });
  if (r.ok) throw new Error(`expected ${text} to be rejected`);
  expect(r.error.message).toMatch(message);
  if (token !== null) {
    let at = -1;
    for (let k = 0; k <= n; k++) at = text.indexOf(token, at + 1);
    expect(r.error.at).toBe(at);
  } else {
    expect(r.error.at).toBe(text.length);
  }
  const ex = parse(r.error.example);
  expect(ex.ok).toBe(true);
  return r.error;
}

describe('the docs/design.md §2 check', () => {
  const text =
    '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% ' +
    'spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';

  it('resolves to the core input the units of §3 describe', () => {
    const c = checkOk(text, { today: '2026-12-01' });
    expect(c.asof).toBe('2027-01-04');
    expect(c.horizon).toBe('2027-02-15');
    expect(c.legExpiries).toEqual(['2027-03-19', '2027-03-19']);
    // 2027-01-04 → 2027-03-19: 27 days left in January, 28 in February, 19 in March = 74
    expect(c.input).toEqual({
      market: { spot: 100, rate: 0.045, yield: 0.01 },
      legs: [
        { qty: 2, kind: 'call', strike: 105, years: 74 / 365, iv: 0.28, entry: 3.1 },
        { qty: -2, kind: 'call', strike: 115, years: 74 / 365, iv: 0.25, entry: 1.05 },
      ],
      mult: 100,
      style: 'european',
      horizonYears: 42 / 365, // 27 + 15
      view: { drift: 0.09, vol: 0.26 },
      // the market vol: the iv of the leg nearest the money (105 of 105/115 at spot 100)
      marketVol: 0.28,
    });
    expect(c.notes).toEqual([]);
  });
});

describe('defaults', () => {
  it('asof today, horizon the earliest expiry, entry null, mult 100, style european', () => {
    const c = checkOk('+1 call 100 2027-03-19 iv 30% -1 call 110 2027-02-19 iv 28% spot 100 rate 4% yield 0% drift 8%');
    expect(c.asof).toBe(TODAY);
    expect(c.horizon).toBe('2027-02-19');
    expect(c.input.horizonYears).toBe(46 / 365); // 27 + 19
    expect(c.input.legs[0].entry).toBeNull();
    expect(c.input.mult).toBe(100);
    expect(c.input.style).toBe('european');
  });

  it('drift missing: the view drift is the rate, with the note', () => {
    const c = checkOk('+1 call 100 3m iv 30% spot 100 rate 4.5% yield 1%');
    expect(c.input.view.drift).toBe(0.045);
    expect(c.notes).toContain('drift not given: the view uses the rate, so its view edge is 0');
  });

  it('rate and yield missing: 0 with notes', () => {
    const c = checkOk('+1 call 100 3m iv 30% spot 100 drift 5%');
    expect(c.input.market.rate).toBe(0);
    expect(c.input.market.yield).toBe(0);
    expect(c.notes).toContain('rate not given: 0% used');
    expect(c.notes).toContain('yield not given: 0% used');
  });

  it('vol: the position iv, else the iv of the leg nearest the money (|ln K/S| smallest)', () => {
    const a = checkOk('+1 call 100 3m -1 call 120 3m spot 100 iv 30% drift 5% rate 4% yield 0%');
    expect(a.input.view.vol).toBe(0.3);
    expect(a.input.legs.map((l) => l.iv)).toEqual([0.3, 0.3]);
    // spot 100: |ln 90/100| = 0.105 < |ln 112/100| = 0.113, so the 90 put is nearest the money
    const b = checkOk('+1 call 112 3m iv 22% +1 put 90 3m iv 35% spot 100 drift 5% rate 4% yield 0%');
    expect(b.input.view.vol).toBe(0.35);
    expect(b.notes.some((n) => n.includes('leg 2 (+1 put 90)') && n.includes('35%'))).toBe(true);
  });

  it('exp and iv defaults fill legs without their own', () => {
    const c = checkOk('+1 call 100 -1 call 110 6w iv 20% spot 100 exp 2027-03-19 iv 30% rate 4% yield 0% drift 5%');
    expect(c.legExpiries).toEqual(['2027-03-19', '2027-02-15']); // 6 weeks from 2027-01-04
    expect(c.input.legs.map((l) => l.iv)).toEqual([0.3, 0.2]);
    expect(c.horizon).toBe('2027-02-15');
  });

  it('relative expiries count from asof, months clamped to the month end', () => {
    const c = checkOk('+1 call 100 1m iv 30% spot 100 asof 2027-01-31 rate 4% yield 0% drift 5%');
    expect(c.legExpiries).toEqual(['2027-02-28']);
    expect(c.input.legs[0].years).toBe(28 / 365);
  });

  it('asof today is today', () => {
    expect(checkOk('+1 call 100 3m iv 30% spot 100 asof today').asof).toBe(TODAY);
  });

  it('shares alone need a horizon; then the horizon sets the time', () => {
    checkBad('100 shares spot 50 vol 20%', null, /give a horizon/);
    const c = checkOk('100 shares @48 spot 50 vol 20% horizon 30d drift 7% rate 4% yield 0%');
    expect(c.input.legs).toEqual([{ qty: 100, kind: 'shares', strike: 0, years: 0, iv: 0, entry: 48 }]);
    expect(c.legExpiries).toEqual([null]);
    expect(c.input.horizonYears).toBe(30 / 365);
  });

  it('jumps, mult, style pass through', () => {
    const c = checkOk('-1 put 95 6w iv 27% spot 100 style european mult 10 jumps 0.5/yr -8% 12% drift 6% rate 4% yield 0%');
    expect(c.input.style).toBe('european');
    expect(c.input.mult).toBe(10);
    expect(c.input.view).toEqual({ drift: 0.06, vol: 0.27, jumps: { intensity: 0.5, mean: -0.08, sd: 0.12 } });
    const a = checkOk('-1 put 95 6w iv 27% spot 100 style american mult 10 drift 6% rate 4% yield 0%');
    expect(a.input.style).toBe('american');
  });

  it('a spread of the spot too wide for double precision is refused at the jumps term', () => {
    // log-spot variance λT(m² + δ²) = 100 × 4 × (1 + 4) = 2000 ≫ 100: e^{±10·sd} overflows
    const text = '+1 call 70 2031-01-04 iv 20% spot 100 rate 4% drift 8% asof 2027-01-04 jumps 100/yr -100% 200%';
    const r = resolveCheck(req<CheckRequest>(text), { today: TODAY, text });
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.error.at).toBe(text.indexOf('jumps'));
      expect(r.error.message).toMatch(/too wide/);
    }
    // a milder one is fine
    checkOk('+1 call 70 2031-01-04 iv 20% spot 100 rate 4% drift 8% asof 2027-01-04 jumps 1/yr -10% 20%');
  });

  it('american with jumps passes through (early exercise under the jump diffusion)', () => {
    const c = checkOk('-1 put 95 6w iv 27% spot 100 style american jumps 0.5/yr -8% 12% drift 6% rate 4% yield 0%');
    expect(c.input.style).toBe('american');
    expect(c.input.view.jumps).toEqual({ intensity: 0.5, mean: -0.08, sd: 0.12 });
  });
});

describe('marks', () => {
  const mark = { symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, at: '2027-01-04T09:30:00Z' };

  it('fill spot, iv and yield where the request is silent; the request overrides', () => {
    const c = checkOk('+1 put 80 3m on FERNWK drift 6% rate 4%', { mark, now: '2027-01-04T14:00:00Z' });
    expect(c.input.market).toEqual({ spot: 84.2, rate: 0.04, yield: 0.012 });
    expect(c.input.legs[0].iv).toBe(0.31);
    expect(c.symbol).toBe('FERNWK');
    expect(c.notes.some((n) => n.includes('mark for FERNWK') && !n.includes('stale'))).toBe(true);
    const d = checkOk('+1 put 80 3m iv 40% spot 90 on FERNWK drift 6% rate 4%', { mark, now: '2027-01-04T14:00:00Z' });
    expect(d.input.market.spot).toBe(90);
    expect(d.input.legs[0].iv).toBe(0.4);
  });

  it('a mark older than a day is stale', () => {
    const c = checkOk('+1 put 80 3m on FERNWK', { mark, now: '2027-01-06T09:30:00Z' });
    expect(c.notes.some((n) => n.includes('stale'))).toBe(true);
  });

  it('a mark with unusable figures is an error at on, never NaN in the input', () => {
    for (const broken of [{ spot: 0 }, { spot: NaN }, { iv: -0.2 }, { iv: Infinity }, { rate: 7 }]) {
      checkBad('+1 put 80 3m on FERNWK', 'on', /unusable/, { mark: { ...mark, ...broken } });
    }
  });

  it('on SYMBOL without a mark for it: error at on', () => {
    checkBad('+1 put 80 3m on QUILLOP', 'on', /no mark for QUILLOP/, { mark });
    checkBad('+1 put 80 3m on QUILLOP', 'on', /no mark for QUILLOP/);
  });
});

describe('errors', () => {
  it('spot missing: caret past the end, example with spot', () => {
    const e = checkBad('+1 call 100 3m iv 30%', null, /spot missing/);
    expect(e.example).toBe('+1 call 100 3m iv 30% spot 84.20');
  });

  it('horizon after the earliest expiry names the leg; caret at the horizon term', () => {
    const text = '+1 call 100 2027-06-18 iv 30% -1 call 110 2027-03-19 iv 28% spot 100 horizon 2027-04-01';
    const e = checkBad(text, 'horizon', /horizon 2027-04-01 is after leg 2 \(-1 call 110\) expires on 2027-03-19/);
    expect(e.length).toBe('horizon 2027-04-01'.length);
    expect(e.example).toBe(text.replace('2027-04-01', '2027-03-19'));
  });

  it('horizon on or before asof', () => {
    checkBad('+1 call 100 3m iv 30% spot 100 horizon 2027-01-04', 'horizon', /on or before asof 2027-01-04/);
  });

  it('an expiry on or before asof: caret at that expiry', () => {
    checkBad('+1 call 100 2027-01-04 iv 30% spot 100', '2027-01-04', /on or before asof/);
    checkBad('+1 call 100 2027-03-19 iv 30% spot 100 asof 2027-04-01', '2027-03-19', /on or before asof 2027-04-01/);
    checkBad('+1 call 100 iv 30% spot 100 exp 2026-12-01', 'exp', /leg 1 \(\+1 call 100\), 2026-12-01 is on or before/);
  });

  it('an expiry more than 30 years away', () => {
    checkBad('+1 call 100 2090-01-01 iv 30% spot 100', '2090-01-01', /more than 30 years/);
  });

  it('an option leg without expiry or iv: caret at the leg', () => {
    checkBad('+1 call 100 iv 30% spot 100', '+1', /leg 1 \(\+1 call 100\) has no expiry/);
    // (an iv written last after the last leg applies to every leg without one; here the last
    // leg's entry follows its iv, so the iv is that leg's own)
    const e = checkBad('+1 call 100 3m -1 call 110 3m iv 20% @1.20 spot 100', '+1', /leg 1 \(\+1 call 100\) has no iv/);
    expect(e.example).toBe('+1 call 100 3m iv 28% -1 call 110 3m iv 20% @1.20 spot 100');
  });

  it('a strike absurdly far from spot', () => {
    checkBad('+1 call 10500 3m iv 30% spot 100', '10500', /105× spot 100/);
  });

  it('compare checks resolve one by one', () => {
    const r = req<{ verb: 'compare'; checks: CheckRequest[] }>('compare +1 call 100 3m iv 30% spot 100 ; drift 0% ; drift 12%');
    const drifts = r.checks.map((c) => {
      const x = resolveCheck(c, { today: TODAY });
      if (!x.ok) throw new Error(x.error.message);
      return x.check.input.view.drift;
    });
    expect(drifts).toEqual([0, 0, 0.12]);
  });

  it('without the text, errors still carry the position and a canonical example', () => {
    const text = '+1 call 100 3m iv 30% spot 100 horizon 6m';
    const r = resolveCheck(req<CheckRequest>(text), { today: TODAY });
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.error.at).toBe(text.indexOf('horizon'));
    expect(parse(r.error.example).ok).toBe(true);
  });

  it('an invalid today is an error, not a throw', () => {
    const r = resolveCheck(req<CheckRequest>('+1 call 100 3m iv 30% spot 100'), { today: '2027-02-30' });
    expect(r.ok).toBe(false);
  });
});

describe('resolveIv', () => {
  it('the docs/design.md iv example', () => {
    const r = resolveIv(req<IvRequest>('iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%'), { today: TODAY });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.iv).toEqual({
      kind: 'call',
      price: 3.1,
      S: 100,
      K: 105,
      T: 74 / 365,
      r: 0.045,
      q: 0.01,
      expiry: '2027-03-19',
      asof: TODAY,
      style: 'european',
    });
  });

  it('a price outside the no-arbitrage bounds is rejected at the price (Hull, Options, Futures and Other Derivatives, ch. 11: c ≥ S e^{-qT} − K e^{-rT}, c ≤ S e^{-qT}; p ≤ K e^{-rT})', () => {
    const cases: [string, RegExp][] = [
      ['iv call 80 2027-03-19 price 19 spot 100 rate 5%', /least this call can be worth/], // floor ≈ 100 − 80 e^{-0.05·0.2} ≈ 20.8
      ['iv call 80 2027-03-19 price 100 spot 100', /most this call can be worth/],
      ['iv put 120 2027-03-19 price 120 spot 100', /most this put can be worth/],
      ['iv put 120 2027-03-19 price 19.5 spot 100 style american', /least this put can be worth/], // American floor: intrinsic 20
    ];
    for (const [text, msg] of cases) {
      const r = resolveIv(req<IvRequest>(text), { today: TODAY, text });
      expect(r.ok).toBe(false);
      if (r.ok) continue;
      expect(r.error.message).toMatch(msg);
      expect(r.error.at).toBe(text.indexOf('price'));
      expect(parse(r.error.example).ok).toBe(true);
    }
  });
});

describe('resolveTouch', () => {
  it('the docs/design.md touch example: drift given, rate defaults to 0', () => {
    const r = resolveTouch(req<TouchRequest>('touch 120 by 2027-03-19 spot 100 drift 8% vol 25%'), { today: TODAY });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    // no iv written: the market figures use the view's vol (DESIGN.md §4)
    expect(r.touch).toEqual({ level: 120, S: 100, T: 74 / 365, q: 0, view: { drift: 0.08, vol: 0.25 }, rate: 0, marketVol: 0.25, by: '2027-03-19', asof: TODAY });
  });

  it('vol from iv, drift from rate, both noted', () => {
    const r = resolveTouch(req<TouchRequest>('touch 90 by 3m spot 100 iv 30% rate 4%'), { today: TODAY });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.touch.view).toEqual({ drift: 0.04, vol: 0.3 });
    expect(r.notes.some((n) => n.startsWith('drift not given'))).toBe(true);
    expect(r.notes.some((n) => n.startsWith('vol not given'))).toBe(true);
  });

  it('a level absurdly far from spot is an error at the level', () => {
    const text = 'touch 12000 by 3m spot 100 vol 25%';
    const r = resolveTouch(req<TouchRequest>(text), { today: TODAY, text });
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.error.at).toBe(text.indexOf('12000'));
    expect(r.error.message).toMatch(/the level 12000 is 120× spot 100/);
    expect(r.error.example).toBe('touch 100 by 3m spot 100 vol 25%');
  });

  it('no vol and no spot are errors', () => {
    const a = 'touch 90 by 3m spot 100';
    const r = resolveTouch(req<TouchRequest>(a), { today: TODAY, text: a });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error.message).toMatch(/vol missing/);
    const b = 'touch 90 by 3m vol 20%';
    const s = resolveTouch(req<TouchRequest>(b), { today: TODAY, text: b });
    expect(s.ok).toBe(false);
    if (!s.ok) expect(s.error.example).toBe('touch 90 by 3m vol 20% spot 84.20');
  });
});
