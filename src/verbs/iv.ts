/**
 * `iv call|put STRIKE EXPIRY price P …`: the implied vol of one option price, under the model its
 * style and jumps call for (chosen in src/core/models.ts). Logged.
 */
import { ivSchema } from '../request/schema.js';
import { SAMPLE } from '../request/examples.js';
import { NUMBER, type Tok } from '../request/lex.js';
import { readBody } from '../request/grammar/body.js';
import { Cursor, isSpecToken } from '../request/grammar/cursor.js';
import { fmtNum, insertBefore } from '../request/grammar/errors.js';
import { readPrice, specOf } from '../request/grammar/values.js';
import { SPAN_WORDS, TYPE_WORDS } from '../request/grammar/words.js';
import type { ExpirySpec } from '../request/types.js';
import { solveImpliedVol, type IvMethod } from '../core/models.js';
import { resolveIv } from '../request/resolve.js';
import type { IvRequest } from '../request/types.js';
import { level, num, pct, pts, rate, shortDate, isNum } from '../report/format.js';
import type { CheckSummary } from '../store/store.js';
import { figurePair, joinFigures } from './check.js';
import { markFor, markJson, markLine, resolveContext, staleWords, resolvedOnItsMark } from './marks.js';
import { answer, loggedOutcome, refuse, type Outcome, type VerbEnv, type Verb } from './verb.js';

/** The model an implied vol was solved under, in words. */
const METHOD_WORDS: Record<IvMethod, string> = {
  american: 'American exercise (finite differences on the backward equation)',
  'american-jumps': 'American exercise (finite differences on the backward equation with Merton jumps; the iv is the diffusion vol)',
  merton: 'Merton jump diffusion (European); the iv is the diffusion vol',
  bsm: 'Black-Scholes-Merton (European)',
};

function runIv(text: string, req: IvRequest, env: VerbEnv): Outcome {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveIv(req, resolveContext(text, env, mark));
  if (!r.ok) throw refuse(text, r.error);
  const v = r.iv;
  const { result: s, method } = solveImpliedVol(v);
  const ivModel = METHOD_WORDS[method];
  if (!s.ok) {
    throw refuse(text, {
      message: s.message,
      at: req.termsAt.price ?? 0,
      length: 5,
      example: `iv ${v.kind} ${level(v.K)} ${v.expiry} price ${num((s.boundValue || v.price) * 1.05 + 0.01)} spot ${level(v.S)} rate ${rate(v.r)}`,
    });
  }
  const json = {
    kind: 'iv',
    iv: s.iv,
    vega: s.vega,
    type: v.kind,
    strike: v.K,
    expiry: v.expiry,
    years: v.T,
    price: v.price,
    asof: v.asof,
    market: { spot: v.S, rate: v.r, yield: v.q },
    model: ivModel,
    ...(v.jumps ? { jumps: v.jumps } : {}),
    notes: r.notes,
    ...(mark ? { mark: markJson(mark, env.now) } : {}),
  };
  const txt = [
    `Implied vol of ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} at ${num(v.price)}: ${rate(Number(s.iv.toFixed(6)))}`,
    `vega ${num(s.vega, 4)} per vol point · spot ${level(v.S)} · rate ${rate(v.r)} · yield ${rate(v.q)} · asof ${v.asof}`,
    `Assumptions: ${ivModel}, continuous rate and yield.`,
    ...r.notes.map((n) => `Note: ${n}`),
    ...(mark ? [markLine(mark, env.now)] : []),
  ].join('\n');
  const what = `iv ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} @${num(v.price)}`;
  const summary = { position: what, iv: s.iv, asof: v.asof, spot: v.S, rate: v.r, yield: v.q, price: v.price };
  return loggedOutcome(text, req, answer({ verb: 'iv', headline: `${what} → ${pct(s.iv, 2)}${staleWords(mark, env.now)}`, text: txt, json }), summary);
}

export function parseIv(src: string, toks: Tok[]): IvRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'iv');
  const kTok = c.needed('iv needs an option: iv call 105 2027-03-19 price 3.10 spot 100', 'call 105 2027-03-19 price 3.10 spot 100');
  const kind = TYPE_WORDS[kTok.low];
  if (kind !== 'call' && kind !== 'put') {
    const msg =
      kind === 'shares'
        ? 'implied vol is for a call or a put, not shares'
        : `iv at the start asks for an implied vol: iv call|put STRIKE EXPIRY price P …, found '${kTok.text}' (a check starts with a leg)`;
    throw c.reject(kTok, msg);
  }
  c.next();
  let strike: number | undefined;
  let expiry: ExpirySpec | undefined;
  const termsAt: IvRequest['termsAt'] = {};
  for (let k = 0; k < 2; k++) {
    const t = c.peek();
    if (!t) break;
    if (strike === undefined && NUMBER.test(t.text)) {
      strike = readPrice(c, kTok, 'the strike', SAMPLE.strike);
      termsAt.strike = t.at;
    } else if (expiry === undefined && (isSpecToken(t) || SPAN_WORDS.test(t.text))) {
      expiry = specOf(c, t, 'the expiry', 'a date (yyyy-mm-dd) or a span (30d, 6w, 3m, 1y)', true, SAMPLE.exp);
      termsAt.expiry = t.at;
      c.next();
    } else break;
  }
  const where = c.peek();
  if (strike === undefined) {
    const msg = `iv ${kTok.text} needs a strike, e.g. iv ${kTok.text} 105 2027-03-19 price 3.10`;
    throw where ? c.reject(where, msg, insertBefore(where, '105')) : c.missing(c.toks[c.i - 1], msg, '105');
  }
  if (expiry === undefined) {
    const msg = `iv ${kTok.text} ${fmtNum(strike)} needs an expiry (yyyy-mm-dd or 30d, 6w, 3m, 1y), e.g. 2027-03-19`;
    throw where ? c.reject(where, msg, insertBefore(where, '2027-03-19')) : c.missing(c.toks[c.i - 1], msg, '2027-03-19');
  }
  const body = readBody(c, 'iv');
  if (body.price === undefined) throw c.missing(toks[toks.length - 1], 'iv needs the option price: price 3.10', 'price 3.10');
  return {
    verb: 'iv',
    kind,
    strike,
    expiry,
    price: body.price,
    terms: body.terms,
    termsAt: { ...termsAt, ...(body.termsAt as IvRequest['termsAt']) },
    end: c.end(),
  };
}

export const iv: Verb<IvRequest> = {
  name: 'iv',
  schema: ivSchema,
  body: { terms: ['price', 'spot', 'rate', 'yield', 'asof', 'on', 'style', 'jumps'], legs: false },
  words: ['iv'],
  grammar: parseIv,
  rerun: { head: 4 },
  overview: { usage: 'iv …', says: 'implied vol of an option price' },
  buttons: 'delete',
  personalDefaults: ['rate', 'yield'],
  example: 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%',
  help: {
    title: 'iv — the implied vol of one option price',
    lines: [
      'iv call|put STRIKE EXPIRY price P [spot P] [rate PCT] [yield PCT] [asof DATE] [on SYMBOL] [style …]',
      'The price must lie strictly between the option\'s value at zero vol and its largest possible value.',
    ],
    examples: [
      'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%',
      'iv put 22 6w price 0.85 on BRISAND',
    ],
  },
  ...resolvedOnItsMark(resolveIv),
  run: runIv,
  figureChanges: (before: CheckSummary, after: CheckSummary) => joinFigures([figurePair('iv', before.iv, after.iv, (x) => pct(x, 2), pts)]),
  logWords: (s) => (isNum(s.iv) ? ` → iv ${pct(s.iv, 2)}` : ''),
};
