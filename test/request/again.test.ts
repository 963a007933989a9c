/**
 * `again N [changes]` rewrites the logged text (docs/design.md §2: `again 17 [spot 102 ...]`). The
 * rule checked here is the one the rewrite promises: the new text parses to the logged request
 * merged with the changes (terms override, legs replace), computed independently with mergeCheck
 * on the two parsed pieces.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { applyAgain } from '../../src/request/again.js';
import { parse } from '../../src/request/parse.js';
import type { AgainRequest, CheckRequest, Request } from '../../src/request/types.js';

function again(text: string): AgainRequest {
  const r = parse(text);
  if (!r.ok || r.request.verb !== 'again') throw new Error(`not an again request: ${text}`);
  return r.request;
}

function req(text: string): Request {
  const r = parse(text);
  if (!r.ok) throw new Error(`${text}: ${r.error.message}`);
  return r.request;
}

const strip = (c: CheckRequest) => ({ legs: c.legs.map(({ at: _a, termsAt: _t, ...l }) => l), terms: c.terms });

describe('applyAgain', () => {
  const stored = '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9%';

  it('no changes: the logged text', () => {
    expect(applyAgain(stored, again('again 17'))).toEqual({ ok: true, text: stored });
  });

  it('a term replaces the logged one in place; a new term is added', () => {
    const r = applyAgain(stored, again('again 17 spot 102 vol 30%'));
    expect(r).toEqual({
      ok: true,
      text: '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 102 rate 4.5% drift 9% vol 30%',
    });
  });

  it('legs in the changes replace the logged legs', () => {
    const r = applyAgain(stored, again('again 17 +1 put 95 2027-03-19 iv 31% drift 2%'));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const c = req(r.text) as CheckRequest;
    expect(c.legs).toHaveLength(1);
    expect(c.legs[0]).toMatchObject({ qty: 1, kind: 'put', strike: 95, iv: 0.31 });
    expect(c.terms).toEqual({ spot: 100, rate: 0.045, drift: 0.02 });
  });

  it('a position-wide iv is never read as the last leg\'s own', () => {
    const r = applyAgain('+1 call 100 3m -1 call 110 3m spot 100 iv 30%', again('again 3 iv 25% spot 99'));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const c = req(r.text) as CheckRequest;
    expect(c.terms.iv).toBe(0.25);
    expect(c.legs[1].iv).toBeUndefined();
    const only = applyAgain('100 shares iv 30% -1 call 110 3m', again('again 3 +1 call 100 3m -1 call 120 3m'));
    expect(only.ok).toBe(true);
    if (!only.ok) return;
    const d = req(only.text) as CheckRequest;
    expect(d.terms.iv).toBe(0.3);
    expect(d.legs.every((l) => l.iv === undefined)).toBe(true);
  });

  it('a comparison: changes apply to the first part and override later parts that state them', () => {
    const text = 'compare +1 call 90 3m iv 30% spot 84 ; drift 0% spot 80 ; drift 12%';
    const r = applyAgain(text, again('again 5 spot 86'));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const c = req(r.text);
    if (c.verb !== 'compare') throw new Error('not compare');
    expect(c.checks!.map((k) => k.terms.spot)).toEqual([86, 86, 86]);
    expect(c.checks!.map((k) => k.terms.drift)).toEqual([undefined, 0, 0.12]);
  });

  it('iv and touch keep their head and take term changes', () => {
    const a = applyAgain('iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5%', again('again 2 price 3.40 yield 1%'));
    expect(a).toEqual({ ok: true, text: 'iv call 105 2027-03-19 price 3.40 spot 100 rate 4.5% yield 1%' });
    const t = applyAgain('touch 120 by 2027-03-19 spot 100 vol 25%', again('again 3 by 6m drift 8%'));
    expect(t).toEqual({ ok: true, text: 'touch 120 by 6m spot 100 vol 25% drift 8%' });
  });

  it('changes that do not apply to the logged verb: error positioned in the again text', () => {
    const text = 'again 3 horizon 2m';
    const r = applyAgain('touch 120 by 2027-03-19 spot 100 vol 25%', again(text), text);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.error.at).toBe(text.indexOf('horizon'));
    expect(r.error.message).toMatch(/horizon does not apply to touch/);
    expect(parse(r.error.example).ok).toBe(true);
  });

  it('legs for a touch request are refused', () => {
    const r = applyAgain('touch 120 by 3m spot 100 vol 25%', again('again 3 +1 call 100 3m'));
    expect(r.ok).toBe(false);
  });

  it('log, mark and help entries cannot be rerun with changes', () => {
    expect(applyAgain('mark FERNWK spot 84', again('again 3 spot 85')).ok).toBe(false);
  });

  it('property: the rewrite means the logged check merged with the changes', () => {
    const storedArb = fc.constantFrom(
      stored,
      '+1 call 100 3m iv 30% spot 100',
      '100 shares @84.20 -1 call 90 2m @1.85 iv 29% spot 84.20 rate 4% drift 7%',
      '+1 put 80 3m iv 30% spot 84.20 jumps 0.5/yr -8% 12%',
      '-1 put 95 6w iv 27% spot 100 rate 4.5% style american',
      'check +1 call 100 3m -1 call 110 3m spot 100 iv 30% vol 28%',
    );
    const change = fc.constantFrom(
      'spot 102',
      'iv 33%',
      'vol 40% drift -5%',
      'rate 3% yield 2%',
      'asof today',
      'horizon 30d',
      'mult 10',
      'style european',
      'jumps 1/yr -5% 10%',
      '+1 call 95 3m iv 31%',
      '-3 put 90 2m @1.20 iv 35% spot 98',
      '50 shares',
      'on FERNWK',
      'exp 6w',
    );
    fc.assert(
      fc.property(storedArb, fc.array(change, { minLength: 1, maxLength: 3 }), (s, changes) => {
        const terms = new Set<string>();
        const parts = changes.filter((c) => {
          const k = c.split(' ')[0];
          if (terms.has(k) || (/^[+-]?\d/.test(k) && [...terms].some((t) => /^[+-]?\d/.test(t)))) return false;
          terms.add(k);
          return true;
        });
        const text = `again 9 ${parts.join(' ')}`;
        const a = parse(text);
        if (!a.ok) return; // e.g. a duplicated term between two changes
        const r = applyAgain(s, a.request as AgainRequest, text);
        if (!r.ok) throw new Error(`${s} + ${parts.join(' ')}: ${r.error.message}`);
        const base = req(s) as CheckRequest;
        const over = parse(parts.join(' '));
        if (!over.ok) return;
        const o = over.request as CheckRequest;
        const got = req(r.text) as CheckRequest;
        const want = {
          legs: (o.legs.length ? o.legs : base.legs).map(({ at: _a, termsAt: _t, ...l }) => l),
          terms: { ...base.terms, ...o.terms },
        };
        expect(strip(got)).toEqual(want);
      }),
      { seed: 1205, numRuns: 500 },
    );
  });
});
