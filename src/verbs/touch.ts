/**
 * `touch LEVEL by DATE …`: the chance that the stock touches a level by a date, under the view and
 * the market walk (drift = rate, the request's iv else the view's vol; closed form, or Monte Carlo under jumps: src/core/models.ts). Logged.
 */
import { touchSchema } from '../request/schema.js';
import { SAMPLE } from '../request/examples.js';
import type { Tok } from '../request/lex.js';
import { readBody } from '../request/grammar/body.js';
import { Cursor } from '../request/grammar/cursor.js';
import { readPrice } from '../request/grammar/values.js';
import { activeJumps } from '../core/jumps.js';
import { TOUCH_MC_SEED, touchFigures } from '../core/models.js';
import { resolveTouch } from '../request/resolve.js';
import type { TouchRequest } from '../request/types.js';
import { jumpWords, level, pct, pts, rate, isNum, table } from '../report/format.js';
import { wrapParts } from '../report/text.js';
import type { CheckSummary } from '../store/store.js';
import { figurePair, joinFigures } from './check.js';
import { markFor, markJson, markLine, resolveContext, staleWords, resolvedOnItsMark } from './marks.js';
import { answer, loggedOutcome, refuse, type Outcome, type VerbEnv, type Verb } from './verb.js';

function runTouch(text: string, req: TouchRequest, env: VerbEnv): Outcome {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveTouch(req, resolveContext(text, env, mark));
  if (!r.ok) throw refuse(text, r.error);
  const t = r.touch;
  const jumps = activeJumps(t.view.jumps);
  const dir = t.level >= t.S ? 'above' : 'below';
  const q = { S: t.S, level: t.level, T: t.T, q: t.q, vol: t.view.vol, jumps };
  const view = touchFigures(q, t.view.drift, t.view.driftSe ?? 0);
  const rn = touchFigures({ ...q, vol: t.marketVol }, t.rate);
  const [pv, prn, bv, brn] = [view.touch, rn.touch, view.beyond, rn.beyond];
  const mc = view.paths !== undefined ? { view: view.stderr!, riskNeutral: rn.stderr!, paths: view.paths } : undefined;
  const model = jumps ? 'merton-jumps' : 'lognormal';
  const json = {
    kind: 'touch',
    level: t.level,
    by: t.by,
    years: t.T,
    asof: t.asof,
    market: { spot: t.S, rate: t.rate, yield: t.q },
    view: { drift: t.view.drift, vol: t.view.vol, model, ...(jumps ? { jumps } : {}), ...(t.view.driftSe ? { driftSe: t.view.driftSe } : {}) },
    probTouchView: pv,
    probTouchMarket: prn,
    probBeyondAtEndView: bv,
    probBeyondAtEndMarket: brn,
    marketVol: t.marketVol,
    ...(mc ? { monteCarlo: { paths: mc.paths, seed: TOUCH_MC_SEED, stderrView: mc.view, stderrMarket: mc.riskNeutral } } : {}),
    notes: r.notes,
    ...(mark ? { mark: markJson(mark, env.now) } : {}),
  };
  const pm = (p: number, se?: number) => (se === undefined ? pct(p) : `${pct(p)} ±${pct(se, 2)}`);
  const rows = [
    `Touching ${level(t.level)} (${dir} spot ${level(t.S)}) by ${t.by}`,
    ...table([
      ['', 'your view', `market (vol ${rate(t.marketVol)})`],
      ['chance of touching', pm(pv, mc?.view), pm(prn, mc?.riskNeutral)],
      [`chance ending ${dir === 'above' ? 'above' : 'below'}`, pct(bv), pct(brn)],
    ]),
    '',
    wrapParts('Assumptions:', [
      `asof ${t.asof}`,
      `view drift ${rate(t.view.drift)}${t.view.driftSe ? ` ± ${rate(t.view.driftSe)} (view figures averaged over the uncertain drift)` : ''}, vol ${rate(t.view.vol)}${jumps ? `, jumps ${jumpWords(jumps)}` : ''}`,
      `rate ${rate(t.rate)}`,
      `yield ${rate(t.q)}`,
      `${jumps ? 'Merton jump diffusion' : 'lognormal walk'}, continuous monitoring`,
    ]),
    ...(mc ? [`Note: touching under jumps by Monte Carlo (${mc.paths.toLocaleString('en-US')} paths, seed ${TOUCH_MC_SEED}; ± is one standard error); ending beyond is exact.`] : []),
    ...r.notes.map((n) => `Note: ${n}`),
    ...(mark ? [markLine(mark, env.now)] : []),
  ];
  const what = `touch ${level(t.level)} by ${t.by}`;
  const summary = {
    position: what,
    probTouch: pv,
    probTouchRiskNeutral: prn,
    asof: t.asof,
    by: t.by,
    spot: t.S,
    rate: t.rate,
    yield: t.q,
    drift: t.view.drift,
    vol: t.view.vol,
  };
  return loggedOutcome(text, req, answer({ verb: 'touch', headline: `${what}: ${pct(pv)} under the view${staleWords(mark, env.now)}`, text: rows.join('\n'), json }), summary);
}

export function parseTouch(src: string, toks: Tok[]): TouchRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'touch');
  const lTok = c.needed('touch needs a level: touch 120 by 2027-03-19 spot 100', '120 by 2027-03-19 spot 100');
  const level = readPrice(c, toks[0], 'the touch level', SAMPLE.level);
  const body = readBody(c, 'touch');
  if (body.by === undefined) throw c.missing(toks[toks.length - 1], 'touch needs a date: by 2027-03-19 (or a span such as by 3m)', 'by 2027-03-19');
  return {
    verb: 'touch',
    level,
    by: body.by,
    terms: body.terms,
    termsAt: { level: lTok.at, ...(body.termsAt as TouchRequest['termsAt']) },
    end: c.end(),
  };
}

export const touch: Verb<TouchRequest> = {
  name: 'touch',
  schema: touchSchema,
  body: { terms: ['by', 'spot', 'rate', 'yield', 'drift', 'vol', 'iv', 'asof', 'on', 'jumps'], legs: false },
  words: ['touch'],
  grammar: parseTouch,
  rerun: { head: 2 },
  overview: { usage: 'touch L by D …', says: 'chance of touching a level by a date' },
  buttons: 'delete',
  personalDefaults: ['rate', 'yield'],
  example: 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25%',
  help: {
    title: 'touch — the chance that the stock touches a level by a date',
    lines: [
      'touch LEVEL by DATE|SPAN [spot P] [drift PCT [± PCT]] [vol PCT | iv PCT] [rate PCT] [yield PCT] [jumps …] [asof DATE] [on SYMBOL]',
      'Both your view (drift and vol) and the market (drift = rate, vol = iv, else your vol) are shown.',
    ],
    examples: ['touch 120 by 2027-03-19 spot 100 drift 8% vol 25%', 'touch 70 by 2m on FERNWK vol 34%'],
  },
  ...resolvedOnItsMark(resolveTouch),
  run: runTouch,
  figureChanges: (before: CheckSummary, after: CheckSummary) =>
    joinFigures([figurePair('chance of touching', before.probTouch, after.probTouch, (x) => pct(x), pts)]),
  logWords: (s) => (isNum(s.probTouch) ? ` → ${pct(s.probTouch)} (view)` : ''),
};
