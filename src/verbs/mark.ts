/**
 * `mark SYMBOL …` records the channel's market for a symbol (posted in the channel, not logged:
 * a mark records its own who and when); `mark` and `mark SYMBOL` show marks to the asker only.
 */
import { markSchema } from '../request/schema.js';
import { NUMBER, PERCENT, type Tok } from '../request/lex.js';
import { readBody } from '../request/grammar/body.js';
import { Cursor } from '../request/grammar/cursor.js';
import { insertBefore } from '../request/grammar/errors.js';
import { readSymbol } from '../request/grammar/values.js';
import { TERM_WORDS } from '../request/grammar/words.js';
import type { MarkRequest } from '../request/types.js';
import { marksText, whenUtc } from '../report/log.js';
import { level, rate } from '../report/format.js';
import type { Mark } from '../store/store.js';
import { markJson, markRecord, markTermsWords } from './marks.js';
import { answer, hasStore, needStore, refuseFact, storeCall, type Outcome, type VerbEnv, type Verb } from './verb.js';

function listing(marks: Mark[], env: VerbEnv): Outcome {
  return {
    answer: answer({
      verb: 'mark',
      headline: '',
      text: marksText(marks, env.now),
      json: { kind: 'marks', marks: marks.map((m) => ({ ...markRecord(m), ...markJson(m, env.now) })) },
      ephemeral: true,
    }),
  };
}

/** The terms a mark holds; a new mark updates those it names and keeps the others. */
const KEYS = ['spot', 'iv', 'yield', 'rate', 'vol', 'drift'] as const;
type Key = (typeof KEYS)[number];

function termWords(k: Key, m: Pick<Mark, Key | 'driftSe'>): string {
  const v = m[k];
  if (v === undefined) return 'none';
  if (k === 'spot') return level(v);
  return k === 'drift' && m.driftSe ? `${rate(v)} ± ${rate(m.driftSe)}` : rate(v);
}

/** What the answer to a recorded mark says beyond the terms: before → after, what it keeps, what is unset. */
function recordedLines(m: Mark, prev: Mark | undefined, t: MarkRequest['terms']): string[] {
  const sym = m.symbol;
  const lines: string[] = [];
  if (prev) {
    const changed = KEYS.filter((k) => t[k] !== undefined).map((k) => `${k} ${termWords(k, prev)} → ${termWords(k, m)}`);
    const kept = KEYS.filter((k) => t[k] === undefined && m[k] !== undefined).map((k) => `${k} ${termWords(k, m)}`);
    lines.push(
      `Mark ${sym} updated for this channel by ${m.user} at ${whenUtc(m.at)} UTC: ${changed.join(', ')}` +
        `${kept.length ? ` (kept: ${kept.join(', ')})` : ''}; it replaces the mark of ${whenUtc(prev.at)} UTC by ${prev.user}.`,
    );
  } else {
    lines.push(`Mark ${sym} recorded for this channel by ${m.user} at ${whenUtc(m.at)} UTC: ${markTermsWords(m)}.`);
  }
  lines.push(`Requests that say \`on ${sym}\` take these terms; terms written in a request override them.`);
  const unset = (['spot', 'iv', 'yield', 'rate'] as const).filter((k) => m[k] === undefined);
  if (unset.length) {
    const defaults = unset.filter((k) => k !== 'spot');
    lines.push(
      `Not in this mark: ${unset.join(', ')}.` +
        (unset.includes('spot') ? ` Requests on ${sym} must write spot.` : '') +
        (defaults.length ? ` Where a request on ${sym} leaves ${defaults.join(' or ')} out, the usual default applies.` : ''),
    );
  }
  return lines;
}

async function runMark(text: string, req: MarkRequest, env: VerbEnv): Promise<Outcome> {
  const store = needStore(text, env, 'mark');
  const channel = env.ctx.channel;
  if (!req.symbol) return listing(await storeCall(text, 'the marks of this channel could not be read', 0, () => store.listMarks(channel)), env);
  const sym = req.symbol.toUpperCase();
  const symAt = Math.max(0, text.toUpperCase().indexOf(sym));
  const prev = await storeCall(text, 'the marks of this channel could not be read', symAt, () => store.getMark(channel, sym));
  const t = req.terms;
  if (KEYS.every((k) => t[k] === undefined)) {
    // `mark SYMBOL` alone shows that mark
    if (!prev) {
      throw refuseFact(text, { message: `no mark for ${sym} in this channel: record one with spot, iv, yield or rate`, at: symAt, length: sym.length, example: `mark ${sym} spot 84.20 iv 31% yield 1.2%` });
    }
    return listing([prev], env);
  }
  // a mark updates only what it names and keeps the rest of the channel's mark for the symbol
  // (the view's drift and its uncertainty go together: a drift written without ± has none)
  const m: Mark = { channel, symbol: sym, user: env.ctx.user, at: env.nowIso };
  for (const k of KEYS) {
    const v = t[k] !== undefined ? t[k] : prev?.[k];
    if (v !== undefined) m[k] = v;
  }
  const driftSe = t.drift !== undefined ? t.driftSe : prev?.driftSe;
  if (m.drift !== undefined && driftSe) m.driftSe = driftSe;
  await storeCall(text, `the mark for ${sym} was not recorded`, symAt, () => store.putMark(m));
  return {
    answer: answer({
      verb: 'mark',
      headline: '',
      text: recordedLines(m, prev, t).join('\n'),
      json: { kind: 'mark', ...markRecord(m), ...(prev ? { replaced: markRecord(prev) } : {}) },
    }),
  };
}

export function parseMark(src: string, toks: Tok[]): MarkRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'mark');
  if (c.done()) return { verb: 'mark', terms: {} };
  const sTok = c.peek()!;
  if (sTok.low in TERM_WORDS || NUMBER.test(sTok.text) || PERCENT.test(sTok.text)) {
    throw c.reject(sTok, `mark needs the symbol first: mark FERNWK spot 84.20 iv 31%`, insertBefore(sTok, 'FERNWK'));
  }
  const symbol = readSymbol(c, toks[0], sTok, 'mark');
  const body = readBody(c, 'mark');
  const { spot, iv, yield: q, rate, vol, drift, driftSe } = body.terms;
  const terms: MarkRequest['terms'] = {};
  if (vol !== undefined) terms.vol = vol;
  if (drift !== undefined) terms.drift = drift;
  if (driftSe !== undefined) terms.driftSe = driftSe;
  if (spot !== undefined) terms.spot = spot;
  if (iv !== undefined) terms.iv = iv;
  if (q !== undefined) terms.yield = q;
  if (rate !== undefined) terms.rate = rate;
  return { verb: 'mark', symbol, terms };
}

export const mark: Verb<MarkRequest> = {
  name: 'mark',
  schema: markSchema,
  body: { terms: ['spot', 'iv', 'yield', 'rate', 'vol', 'drift'], legs: false },
  words: ['mark'],
  overview: { usage: 'mark SYMBOL …', says: 'store spot, iv, yield, rate for later `on SYMBOL`' },
  grammar: parseMark,
  run: runMark,
  answersHere: hasStore,
  example: 'mark FERNWK spot 84.20 iv 31% yield 1.2%',
  help: {
    title: 'mark — store the market for a symbol in this channel',
    lines: [
      'mark SYMBOL [spot P] [iv PCT] [yield PCT] [rate PCT] [vol PCT] [drift PCT [± PCT]]   ·   mark   (lists the channel\'s marks)',
      'Later requests say on SYMBOL; terms written in the request override the mark. A mark\'s vol and',
      'drift (± its uncertainty) are the view where a request writes none (history … save sets them).',
      'A mark older than a day is flagged as stale in the answer.',
    ],
    examples: ['mark FERNWK spot 84.20 iv 31% yield 1.2%', 'mark QUORVEL spot 145.10', 'mark'],
  },
};
