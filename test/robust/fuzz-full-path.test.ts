/**
 * The full request path — the compute budget (src/chat/budget.ts), parse → resolve → engine →
 * report (src/verbs/ask.ts `ask`, with a real in-memory log so `log`, `again` and `mark` do
 * real work) → chart (src/report/answer-chart.ts) — on 100,000 seeded requests generated from the
 * grammar (docs/design.md §2: legs, terms, percentages, dates, spans, jumps, `style american`, every
 * verb) and mutated (tokens deleted, duplicated, swapped or glued; numbers made huge, tiny,
 * negative or odd; unicode inserted; case changed).
 *
 * What must hold for every request (identities of the design, not outputs of our own code):
 *   - nothing throws and nothing takes the process down;
 *   - an answer carries no NaN or ±Infinity anywhere in its JSON, and its text never prints them;
 *   - a rejection is a clear message: the request quoted with a caret under the first bad token
 *     (docs/design.md §2), or a plain "not available yet" for verbs and models still being wired in —
 *     never an internal error, a stack trace, "undefined" or "[object Object]";
 *   - a chart, drawn for every 100th answer that has one, is a PNG (signature 89 50 4E 47 0D 0A
 *     1A 0A, PNG specification §5.2) or a text note saying why not.
 * Charts cost tens of milliseconds each, so only a seeded sample is drawn; the rest of the path
 * runs on all 100,000. Counts of requests, answers and rejections are printed.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { ask } from '../../src/verbs/ask.js';
import { renderAnswerChart } from '../../src/report/answer-chart.js';
import { openDatabase, type AsyncStore } from '../../src/store/store.js';

import { COMPUTE_BUDGET_DEFAULT, overBudget } from '../../src/verbs/ask.js';

const RUNS = Number(process.env.KOLMO_FUZZ_RUNS ?? 100_000);
const SEED = 20261202;
const CHART_EVERY = 100;
const NOW = new Date('2027-01-04T15:00:00Z');
const PNG = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];

// ---------------------------------------------------------------------------------------------
// the grammar

const pctNum = fc.oneof(
  fc.integer({ min: 1, max: 80 }).map(String),
  fc.tuple(fc.double({ min: 1, max: 150, noNaN: true }), fc.integer({ min: 0, max: 2 })).map(([x, d]) => x.toFixed(d)),
);
const pct = pctNum.map((x) => `${x}%`);
const signedPct = fc.tuple(fc.constantFrom('', '-', '+'), fc.integer({ min: 0, max: 40 })).map(([s, x]) => `${s}${x}%`);
const price = fc.oneof(
  fc.integer({ min: 1, max: 300 }).map(String),
  fc.double({ min: 0.01, max: 500, noNaN: true }).map((x) => x.toFixed(2)),
);
/** strikes and spots near 100, so that most positions make sense together */
const level = fc.oneof(
  { weight: 4, arbitrary: fc.integer({ min: 60, max: 160 }).map(String) },
  { weight: 1, arbitrary: fc.double({ min: 50, max: 200, noNaN: true }).map((x) => x.toFixed(2)) },
  { weight: 1, arbitrary: price },
);
const isoDate = fc.date({ min: new Date('2027-01-05T00:00:00Z'), max: new Date('2029-12-31T00:00:00Z'), noInvalidDate: true }).map((d) => d.toISOString().slice(0, 10));
const span = fc.tuple(fc.integer({ min: 1, max: 400 }), fc.constantFrom('d', 'w', 'm', 'y')).map(([n, u]) => `${u === 'y' ? Math.min(n, 5) : u === 'm' ? Math.min(n, 36) : n}${u}`);
const expiry = fc.oneof({ weight: 3, arbitrary: isoDate }, { weight: 2, arbitrary: span });
const qty = fc.oneof(
  fc.integer({ min: 1, max: 10 }).map(String),
  fc.integer({ min: 1, max: 10 }).map((n) => `+${n}`),
  fc.integer({ min: 1, max: 10 }).map((n) => `-${n}`),
);
const sometimes = <T>(a: fc.Arbitrary<T>, freq: number) => fc.option(a, { nil: undefined, freq });
const optLeg = fc
  .tuple(qty, fc.constantFrom('call', 'put', 'c', 'p', 'CALL', 'Put'), level, sometimes(expiry, 12), sometimes(price, 2), sometimes(pct, 8))
  .map(([q, t, k, e, entry, iv]) => [q, t, k, e, entry !== undefined ? `@${entry}` : undefined, iv !== undefined ? `iv ${iv}` : undefined].filter(Boolean).join(' '));
const sharesLeg = fc.tuple(fc.integer({ min: -500, max: 500 }).filter((n) => n !== 0), fc.constantFrom('shares', 'sh'), sometimes(level, 2)).map(
  ([n, t, e]) => `${n > 0 ? '+' : ''}${n} ${t}${e ? ` @${e}` : ''}`,
);
const leg = fc.oneof({ weight: 6, arbitrary: optLeg }, { weight: 1, arbitrary: sharesLeg });
const symbol = fc.constantFrom('FERNWK', 'BRAMLEX', 'QUILLDOR', 'ostravel');
/**
 * terms besides the market block, each at most once; early exercise and jumps cost tens to
 * hundreds of times a plain check, so they come up in about one check in fifty each
 */
const extraTerm = fc.oneof(
  { weight: 16, arbitrary: pct.map((x) => `yield ${x}`) },
  { weight: 16, arbitrary: pct.map((x) => `iv ${x}`) },
  { weight: 16, arbitrary: expiry.map((x) => `exp ${x}`) },
  { weight: 16, arbitrary: expiry.map((x) => `horizon ${x}`) },
  { weight: 12, arbitrary: fc.constantFrom('mult 100', 'mult 10', 'mult 1') },
  { weight: 8, arbitrary: fc.constant('style european') },
  { weight: 8, arbitrary: symbol.map((s) => `on ${s}`) },
  { weight: 1, arbitrary: fc.constant('style american') },
  { weight: 1, arbitrary: fc.tuple(fc.integer({ min: 0, max: 12 }), signedPct, pct).map(([n, m, s]) => `jumps ${n}/yr ${m} ${s}`) },
);
const extraTerms = fc.uniqueArray(extraTerm, { maxLength: 3, selector: (t) => t.split(' ')[0] });
/** the market block, mostly complete, so that a good share of requests is answered */
const market = fc.tuple(level, sometimes(pct, 9), sometimes(signedPct, 8), sometimes(pct, 8), fc.constantFrom('asof 2027-01-04', 'asof 2027-01-04', 'asof today', ''))
  .map(([s, r, d, v, a]) => [`spot ${s}`, r && `rate ${r}`, d && `drift ${d}`, v && `vol ${v}`, a].filter(Boolean).join(' '));
const check = fc
  .tuple(fc.constantFrom('check ', ''), fc.array(leg, { minLength: 1, maxLength: 4 }), sometimes(market, 9), extraTerms)
  .map(([v, legs, m, terms]) => `${v}${legs.join(' ')}${m ? ` ${m}` : ''}${terms.length ? ` ${terms.join(' ')}` : ''}`);
const request = fc.oneof(
  { weight: 16, arbitrary: check },
  { weight: 1, arbitrary: fc.tuple(fc.constantFrom('call', 'put'), level, expiry, price, level, pct).map(([t, k, e, p, s, r]) => `iv ${t} ${k} ${e} price ${p} spot ${s} rate ${r}`) },
  { weight: 1, arbitrary: fc.tuple(level, expiry, level, signedPct, pct).map(([l, e, s, d, v]) => `touch ${l} by ${e} spot ${s} drift ${d} vol ${v}`) },
  { weight: 1, arbitrary: fc.tuple(symbol, level, pct).map(([s, p, v]) => `mark ${s} spot ${p} iv ${v}`) },
  { weight: 1, arbitrary: fc.tuple(fc.constantFrom('log', 'again', 'help', 'compare'), sometimes(fc.integer({ min: 0, max: 200 }), 2)).map(([v, n]) => (n === undefined ? v : `${v} ${n}`)) },
  { weight: 1, arbitrary: fc.array(check, { minLength: 2, maxLength: 3 }).map((parts) => `compare ${parts.join(' ; ')}`) },
  { weight: 1, arbitrary: fc.tuple(fc.integer({ min: 1, max: 6 }), extraTerms).map(([n, t]) => `again ${n} ${t.join(' ')}`) },
);

// ---------------------------------------------------------------------------------------------
// mutations

const oddNumber = fc.constantFrom(
  '1e308', '1e-308', '-0', '0', '0.0000001', '99999999999999999999', '-1', 'NaN', 'Infinity', '1e', '.5', '5.', '1_000', '1,000', '0x10', '٣', '１００', '1/0', '--5', '+-3', '3%%', '%',
);
const unicode = fc.constantFrom('\u200b', '\u202e', 'é', 'ﬁ', '🙂', '\u0000', '\t', '\n', '\u00a0', '—', '−', '＠', '；', '\ud800');
const mutation = fc.tuple(
  fc.constantFrom('delete', 'duplicate', 'swap', 'glue', 'number', 'unicode', 'case', 'split'),
  fc.nat(),
  oddNumber,
  unicode,
);

function mutate(text: string, muts: Array<[string, number, string, string]>): string {
  let toks = text.split(' ');
  for (const [m, n, odd, u] of muts) {
    if (toks.length === 0) break;
    const i = n % toks.length;
    switch (m) {
      case 'delete':
        toks.splice(i, 1);
        break;
      case 'duplicate':
        toks.splice(i, 0, toks[i]);
        break;
      case 'swap':
        if (i + 1 < toks.length) [toks[i], toks[i + 1]] = [toks[i + 1], toks[i]];
        break;
      case 'glue':
        if (i + 1 < toks.length) toks.splice(i, 2, toks[i] + toks[i + 1]);
        break;
      case 'number': {
        const j = toks.findIndex((t, k) => k >= i && /\d/.test(t));
        if (j >= 0) toks[j] = toks[j].replace(/[\d.]+/, odd);
        break;
      }
      case 'unicode':
        toks[i] = toks[i].slice(0, n % (toks[i].length + 1)) + u + toks[i].slice(n % (toks[i].length + 1));
        break;
      case 'case':
        toks[i] = toks[i].toUpperCase();
        break;
      case 'split':
        toks = toks.flatMap((t, k) => (k === i && t.length > 1 ? [t.slice(0, 1), t.slice(1)] : [t]));
        break;
    }
  }
  return toks.join(' ');
}

const input = fc.oneof(
  { weight: 1, arbitrary: request },
  { weight: 1, arbitrary: fc.tuple(request, fc.array(mutation, { minLength: 1, maxLength: 3 })).map(([r, m]) => mutate(r, m)) },
);

// ---------------------------------------------------------------------------------------------
// what must hold

function nonFinitePath(v: unknown, path = '$'): string | null {
  if (typeof v === 'number') return Number.isFinite(v) ? null : `${path} = ${v}`;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) {
      const p = nonFinitePath(v[i], `${path}[${i}]`);
      if (p) return p;
    }
    return null;
  }
  if (v && typeof v === 'object') {
    for (const [k, x] of Object.entries(v)) {
      const p = nonFinitePath(x, `${path}.${k}`);
      if (p) return p;
    }
  }
  return null;
}

const NOT_YET = /not available yet/;

function clearRejection(text: string, message: string): string | null {
  if (message.trim() === '') return 'empty rejection';
  if (/\bundefined\b|\[object Object\]|\n\s+at .+:\d+:\d+/.test(message)) return 'rejection shows an internal value or a stack';
  if (NOT_YET.test(message)) return null;
  if (/Kolmo could not answer this request/.test(message)) return 'internal error reached the asker';
  if (!message.includes('^')) return 'rejection without a caret under the bad token';
  if (message.length > 4000) return 'rejection longer than one screen';
  void text;
  return null;
}

interface Tally {
  requests: number;
  answers: number;
  rejections: number;
  notYet: number;
  overBudget: number;
  charts: number;
  chartNotes: number;
  answersWithChart: number;
}

describe('the full request path on 100,000 generated and mutated requests', () => {
  it('never crashes, never shows NaN or Infinity, rejects with clear messages', { timeout: 600_000 }, async () => {
    const t: Tally = { requests: 0, answers: 0, rejections: 0, notYet: 0, overBudget: 0, charts: 0, chartNotes: 0, answersWithChart: 0 };
    const memory = () => openDatabase({ backend: 'sqlite', path: ':memory:' });
    let store: AsyncStore = await memory();
    const seedStore = async (s: AsyncStore) => {
      // a mark for `on FERNWK` and a few log entries for `again N` and `log`
      await ask('mark FERNWK spot 84.20 iv 31% yield 1.2%', { channel: 'CFUZZ00001', user: 'UFUZZ00001', now: NOW, store: s, inWorkspace: true });
      for (let i = 0; i < 3; i++) {
        await ask(`check +1 call ${90 + i * 5} 2027-03-19 iv 28% spot 100 rate 4.5% drift 8% asof 2027-01-04`, { channel: 'CFUZZ00001', user: 'UFUZZ00001', now: NOW, store: s, inWorkspace: true });
      }
    };
    await seedStore(store);
    const failures: string[] = [];
    await fc.assert(
      fc.asyncProperty(input, async (text) => {
        t.requests++;
        if (t.requests % 5000 === 0) {
          // a fresh log now and then keeps memory flat over 100,000 checks
          await store.close();
          store = await memory();
          await seedStore(store);
        }
        const refused = overBudget(text, COMPUTE_BUDGET_DEFAULT);
        const reply = refused ?? (await ask(text, { channel: 'CFUZZ00001', user: 'UFUZZ00001', now: NOW, store, inWorkspace: true }));
        if (refused) t.overBudget++;
        if (reply.kind === 'rejected') {
          t.rejections++;
          if (NOT_YET.test(reply.message)) t.notYet++;
          const why = clearRejection(text, reply.message);
          if (why) failures.push(`${why}: ${JSON.stringify(text)} → ${JSON.stringify(reply.message.slice(0, 300))}`);
          return why === null;
        }
        t.answers++;
        const bad = nonFinitePath(reply.json);
        if (bad) failures.push(`non-finite number ${bad}: ${JSON.stringify(text)}`);
        const printed = /\bNaN\b|Infinity/.test(reply.text + reply.headline) ? 'NaN or Infinity in the text' : null;
        if (printed) failures.push(`${printed}: ${JSON.stringify(text)}`);
        if (reply.chart !== undefined && reply.chart !== null) {
          t.answersWithChart++;
          if (t.answersWithChart % CHART_EVERY === 0) {
            const c = await renderAnswerChart(reply.chart);
            if (c.ok) {
              t.charts++;
              if (![...c.png.subarray(0, 8)].every((b, i) => b === PNG[i])) failures.push(`chart is not a PNG: ${JSON.stringify(text)}`);
            } else {
              t.chartNotes++;
              if (c.note.trim() === '' || /\bundefined\b/.test(c.note)) failures.push(`unclear chart note ${JSON.stringify(c.note)}: ${JSON.stringify(text)}`);
            }
          }
        }
        return bad === null && printed === null;
      }),
      { seed: SEED, numRuns: RUNS, endOnFailure: true },
    ).catch((err: unknown) => {
      // keep the property's own report (seed, shrunk counterexample) and add ours
      throw new Error(`${String(err)}\nfirst failures:\n${failures.slice(0, 5).join('\n')}`);
    });
    store.close();
    console.log(
      `full-path fuzz: ${t.requests} requests (seed ${SEED}) → ${t.answers} answers, ${t.rejections} rejections ` +
        `(${t.notYet} "not available yet", ${t.overBudget} over the compute budget); charts drawn ${t.charts}, chart notes ${t.chartNotes} ` +
        `(every ${CHART_EVERY}th of ${t.answersWithChart} answers with a chart)`,
    );
    expect(t.requests).toBe(RUNS);
    expect(failures).toEqual([]);
    // the generator reaches both sides of the grammar, or the test proves little
    expect(t.answers).toBeGreaterThan(RUNS / 10);
    expect(t.rejections).toBeGreaterThan(RUNS / 10);
    expect(t.charts).toBeGreaterThan(0);
  });
});
