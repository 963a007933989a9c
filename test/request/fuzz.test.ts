/**
 * Property tests (fast-check, fixed seeds): whatever the text, `parse` returns a request or an
 * error — never throws, never lets NaN or ±Infinity into a request — and every error has its caret
 * inside the text and an example that parses. Requests generated from the grammar round-trip.
 * Resolving any parsed check never throws and yields finite core input that respects the horizon rule.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { formatError, parse } from '../../src/request/parse.js';
import { resolveCheck, resolveIv, resolveTouch } from '../../src/request/resolve.js';
import { helpExamples } from '../../src/request/help.js';
import { exampleKeys, exampleOf } from '../../src/request/examples.js';
import type { CheckRequest, ParseResult, Request } from '../../src/request/types.js';

/** Every number anywhere in a value. */
function numbers(x: unknown, out: number[] = []): number[] {
  if (typeof x === 'number') out.push(x);
  else if (Array.isArray(x)) x.forEach((v) => numbers(v, out));
  else if (x && typeof x === 'object') Object.values(x).forEach((v) => numbers(v, out));
  return out;
}

const CTX = { today: '2027-01-04', mark: { symbol: 'FERNWK', spot: 84.2, iv: 0.31, at: '2027-01-04T08:00:00Z' } };

/** The invariants every result must satisfy. */
function sound(text: string, r: ParseResult): void {
  if (r.ok) {
    for (const n of numbers(r.request)) expect(Number.isFinite(n)).toBe(true);
    resolvedSound(r.request, text);
    return;
  }
  const e = r.error;
  expect(typeof e.message).toBe('string');
  expect(e.message.length).toBeGreaterThan(0);
  expect(Number.isInteger(e.at)).toBe(true);
  expect(e.at).toBeGreaterThanOrEqual(0);
  expect(e.at).toBeLessThanOrEqual(typeof text === 'string' ? text.length : 0);
  expect(e.length).toBeGreaterThanOrEqual(1);
  // the positioned checks of the parser catch everything before the zod guard or the catch-all
  expect(e.message).not.toMatch(/final check|internal error/);
  const ex = parse(e.example);
  expect(ex.ok).toBe(true);
  expect(typeof formatError(text, e)).toBe('string');
}

function resolvedSound(req: Request, text: string): void {
  const checks: CheckRequest[] = req.verb === 'check' ? [req] : req.verb === 'compare' ? (req.checks ?? []) : [];
  for (const c of checks) {
    const r = resolveCheck(c, { ...CTX, text });
    if (!r.ok) {
      expect(parse(r.error.example).ok).toBe(true);
      continue;
    }
    const input = r.check.input;
    for (const n of numbers(input)) expect(Number.isFinite(n)).toBe(true);
    expect(input.horizonYears).toBeGreaterThan(0);
    for (const l of input.legs) {
      if (l.kind === 'shares') continue;
      expect(l.years).toBeGreaterThan(0);
      expect(input.horizonYears).toBeLessThanOrEqual(l.years);
      expect(l.iv).toBeGreaterThan(0);
    }
    expect(input.view.vol).toBeGreaterThan(0);
    expect(input.market.spot).toBeGreaterThan(0);
  }
  if (req.verb === 'iv') {
    const r = resolveIv(req, { ...CTX, text });
    if (r.ok) for (const n of numbers(r.iv)) expect(Number.isFinite(n)).toBe(true);
  }
  if (req.verb === 'touch') {
    const r = resolveTouch(req, { ...CTX, text });
    if (r.ok) for (const n of numbers(r.touch)) expect(Number.isFinite(n)).toBe(true);
  }
}

const SEEDS = [
  exampleOf('check'),
  exampleOf('shares'),
  exampleOf('compare'),
  exampleOf('iv'),
  exampleOf('touch'),
  exampleOf('mark'),
  exampleOf('jumps'),
  exampleOf('american'),
  'again 17 spot 102 drift 5%',
  'log 20',
  'help jumps',
  '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04',
];

const NASTY = [
  'NaN',
  '-NaN',
  'Infinity',
  '-Infinity',
  '1e309',
  '-1e309',
  '1e-400',
  '0',
  '-0',
  '+0',
  '0%',
  '1e308%',
  '9'.repeat(400),
  '0.' + '0'.repeat(400) + '1',
  '%',
  '%%',
  '@',
  '@@',
  ';',
  ';;',
  ',',
  '.',
  '-',
  '+',
  '2027-02-29',
  '2200-12-31',
  '2201-01-01',
  '0000-00-00',
  '99999d',
  '0d',
  '1/yr',
  '1e309/yr',
  'NaN/yr',
  'NaN%',
  'today',
  'american',
  'call',
  'put',
  'shares',
  'ｓｐｏｔ',
  '１００',
  '🚀',
  '\u0000',
  '\u200b',
  '\u2212',
  '\ud800',
  'ß',
  'İ',
  '__proto__',
  'constructor',
  'toString',
  'hasOwnProperty',
];

const tokenOf = (s: string) => s.split(/\s+/).filter(Boolean);

const mutated = fc
  .tuple(
    fc.constantFrom(...SEEDS),
    fc.array(
      fc.tuple(
        fc.constantFrom('delete', 'duplicate', 'swap', 'insert', 'replace', 'glue', 'case'),
        fc.nat(),
        fc.nat(),
        fc.oneof(fc.constantFrom(...NASTY), fc.string({ maxLength: 6 }), fc.string({ unit: 'binary', maxLength: 4 })),
      ),
      { minLength: 1, maxLength: 4 },
    ),
  )
  .map(([seed, ops]) => {
    const toks = tokenOf(seed);
    for (const [op, i0, j0, word] of ops) {
      if (toks.length === 0) {
        toks.push(word);
        continue;
      }
      const i = i0 % toks.length;
      const j = j0 % toks.length;
      switch (op) {
        case 'delete':
          toks.splice(i, 1);
          break;
        case 'duplicate':
          toks.splice(i, 0, toks[i]);
          break;
        case 'swap':
          [toks[i], toks[j]] = [toks[j], toks[i]];
          break;
        case 'insert':
          toks.splice(i, 0, word);
          break;
        case 'replace':
          toks[i] = word;
          break;
        case 'glue':
          toks[i] = toks[i] + word;
          break;
        case 'case':
          toks[i] = toks[i].toUpperCase();
          break;
      }
    }
    return toks.join(' ');
  });

describe('parse never throws and never lets a non-finite number through', () => {
  it('random text (ASCII and full Unicode)', () => {
    fc.assert(
      fc.property(fc.oneof(fc.string({ maxLength: 80 }), fc.string({ unit: 'binary', maxLength: 80 })), (text) => {
        sound(text, parse(text));
      }),
      { seed: 1201, numRuns: 3000 },
    );
  });

  it('random sequences of grammar words and nasty tokens', () => {
    const words = [...NASTY, 'spot', 'rate', 'yield', 'iv', 'vol', 'drift', 'exp', 'horizon', 'asof', 'mult', 'style', 'jumps', 'on', 'by', 'price', '+1', '-2', '100', '105', '3m', '30d', '28%', '4.5%', '-8%', '0.5/yr', 'FERNWK', 'check', 'compare', 'iv', 'touch', 'mark', 'log', 'again', 'help', '@3.10'];
    fc.assert(
      fc.property(fc.array(fc.constantFrom(...words), { maxLength: 25 }), (ws) => {
        const text = ws.join(' ');
        sound(text, parse(text));
      }),
      { seed: 1202, numRuns: 4000 },
    );
  });

  it('mutations of valid requests (deleted, duplicated, swapped, inserted, replaced, glued tokens)', () => {
    fc.assert(
      fc.property(mutated, (text) => {
        sound(text, parse(text));
      }),
      { seed: 1203, numRuns: 5000 },
    );
  });

  it('very long and degenerate inputs', () => {
    for (const text of [
      'x'.repeat(5000),
      '+1 call 100 3m '.repeat(200),
      ' '.repeat(3000),
      ';'.repeat(100),
      '@'.repeat(100),
      '%'.repeat(100),
      'compare ' + '+1 call 100 3m iv 30% spot 100 ; '.repeat(20),
      '+1 call 100 3m iv 30% spot ' + '9'.repeat(1900),
    ]) {
      sound(text, parse(text));
    }
  });
});

describe('requests generated from the grammar round-trip', () => {
  const pct = (lo: number, hi: number) => fc.integer({ min: lo, max: hi }).map((n) => n / 10); // one decimal
  const leg = fc.record({
    qty: fc.integer({ min: -500, max: 500 }).filter((q) => q !== 0),
    kind: fc.constantFrom('call', 'put', 'shares'),
    strike: fc.integer({ min: 1, max: 100000 }).map((n) => n / 100),
    span: fc.integer({ min: 1, max: 36 }),
    entry: fc.option(fc.integer({ min: 0, max: 100000 }).map((n) => n / 100), { nil: undefined }),
    iv: fc.option(pct(10, 2000), { nil: undefined }),
  });
  const terms = fc.record(
    {
      spot: fc.integer({ min: 1, max: 1000000 }).map((n) => n / 100),
      rate: pct(-50, 200),
      yield: pct(0, 150),
      drift: pct(-500, 500),
      vol: pct(10, 2000),
      mult: fc.integer({ min: 1, max: 1000 }),
    },
    { requiredKeys: [] },
  );

  it('parse(render(x)) gives back x', () => {
    fc.assert(
      fc.property(fc.array(leg, { minLength: 1, maxLength: 6 }), terms, fc.boolean(), (legs, ts, shuffle) => {
        const legText = legs.map((l) => {
          const parts = [l.qty > 0 && shuffle ? `+${l.qty}` : String(l.qty), l.kind];
          if (l.kind !== 'shares') parts.push(String(l.strike), `${l.span}m`);
          if (l.entry !== undefined) parts.push(`@${l.entry}`);
          if (l.iv !== undefined && l.kind !== 'shares') parts.push(`iv ${l.iv}%`);
          return parts.join(' ');
        });
        const termText = Object.entries(ts).map(([k, v]) => (k === 'spot' || k === 'mult' ? `${k} ${v}` : `${k} ${v}%`));
        if (shuffle) termText.reverse();
        const text = [...legText, ...termText].join(' ');
        const r = parse(text);
        if (!r.ok) throw new Error(`${text}: ${r.error.message}`);
        const req = r.request as CheckRequest;
        expect(req.legs.map((l) => [l.qty, l.kind, l.strike, l.expiry, l.entry, l.iv])).toEqual(
          legs.map((l) => [
            l.qty,
            l.kind,
            l.kind === 'shares' ? undefined : l.strike,
            l.kind === 'shares' ? undefined : { span: l.span, unit: 'm' },
            l.entry,
            l.kind === 'shares' ? undefined : l.iv === undefined ? undefined : Number((l.iv / 100).toPrecision(15)),
          ]),
        );
        for (const [k, v] of Object.entries(ts)) {
          const want = k === 'spot' || k === 'mult' ? v : Number((v / 100).toPrecision(15));
          expect(req.terms[k as keyof typeof req.terms]).toBe(want);
        }
        sound(text, r);
      }),
      { seed: 1204, numRuns: 2000 },
    );
  });
});

describe('examples', () => {
  it('every canonical example parses', () => {
    for (const k of exampleKeys()) {
      const text = exampleOf(k);
      const r = parse(text);
      if (!r.ok) throw new Error(`${k}: ${r.error.message}`);
    }
  });

  it('every help example parses', () => {
    for (const t of ['check', 'compare', 'iv', 'touch', 'mark', 'log', 'again', 'jumps', 'american', 'units'] as const) {
      for (const text of helpExamples(t)) {
        const r = parse(text);
        if (!r.ok) throw new Error(`help ${t}: ${text}: ${r.error.message}`);
      }
    }
  });
});

describe('resolve under random dates', () => {
  it('never throws; horizon ≤ every expiry; years = calendar days / 365', () => {
    const day = fc
      .record({ y: fc.integer({ min: 1990, max: 2199 }), m: fc.integer({ min: 1, max: 12 }), d: fc.integer({ min: 1, max: 31 }) })
      .map(({ y, m, d }) => {
        const last = new Date(Date.UTC(y, m, 0)).getUTCDate();
        return `${y}-${String(m).padStart(2, '0')}-${String(Math.min(d, last)).padStart(2, '0')}`;
      });
    const span = fc.tuple(fc.integer({ min: 1, max: 40 }), fc.constantFrom('d', 'w', 'm', 'y')).map(([n, u]) => `${n}${u}`);
    fc.assert(
      fc.property(day, day, fc.array(span, { minLength: 1, maxLength: 4 }), fc.option(span, { nil: undefined }), (today, asof, spans, horizon) => {
        const legs = spans.map((sp, i) => `${i % 2 ? -1 : 1} ${i % 3 ? 'put' : 'call'} ${90 + i * 5} ${sp} iv ${20 + i}%`);
        const text = `${legs.join(' ')} spot 100 asof ${asof}${horizon ? ` horizon ${horizon}` : ''}`;
        const p = parse(text);
        if (!p.ok) throw new Error(`${text}: ${p.error.message}`);
        const r = resolveCheck(p.request as CheckRequest, { today, text });
        if (!r.ok) {
          expect(parse(r.error.example).ok).toBe(true);
          expect(r.error.at).toBeLessThanOrEqual(text.length);
          return;
        }
        const c = r.check;
        expect(c.asof).toBe(asof);
        for (let i = 0; i < c.input.legs.length; i++) {
          const days = Math.round((Date.parse(c.legExpiries[i]!) - Date.parse(asof)) / 86400000);
          expect(c.input.legs[i].years).toBe(days / 365);
          expect(c.input.horizonYears).toBeLessThanOrEqual(c.input.legs[i].years);
        }
        expect(c.input.horizonYears).toBeGreaterThan(0);
      }),
      { seed: 1206, numRuns: 2000 },
    );
  });
});
