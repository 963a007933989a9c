/**
 * `iv call|put STRIKE EXPIRY price P …`: the implied vol of one option price, under the model its
 * style and jumps call for (chosen in src/core/models.ts). Logged.
 */
import { solveImpliedVol, type IvMethod } from '../core/models.js';
import { parseIv } from '../request/parse.js';
import { resolveIv } from '../request/resolve.js';
import type { IvRequest } from '../request/types.js';
import { level, num, pct, pts, rate, shortDate } from '../report/format.js';
import type { CheckSummary } from '../store/store.js';
import { figurePair, joinFigures } from './check.js';
import { markFor, markJson, markLine, resolveContext, staleWords } from './marks.js';
import { answer, defineVerb, refuse, type Outcome, type VerbEnv } from './verb.js';

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
  const { result: s, method } = solveImpliedVol({ kind: v.kind, price: v.price, S: v.S, K: v.K, T: v.T, r: v.r, q: v.q, style: v.style, jumps: v.jumps });
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
  return {
    answer: answer({ verb: 'iv', headline: `${what} → ${pct(s.iv, 2)}${staleWords(mark, env.now)}`, text: txt, json }),
    log: { verb: 'iv', text, request: req, summary },
  };
}

const isNum = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

export const iv = defineVerb({
  name: 'iv',
  words: ['iv'],
  grammar: parseIv,
  rerunnable: true,
  run: runIv,
  figureChanges: (before: CheckSummary, after: CheckSummary) => joinFigures([figurePair('iv', before.iv, after.iv, (x) => pct(x, 2), pts)]),
  logWords: (s) => (isNum(s.iv) ? ` → iv ${pct(s.iv, 2)}` : ''),
});
