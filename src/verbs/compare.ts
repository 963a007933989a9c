/**
 * `compare A ; B ; …`: several checks side by side, each part inheriting from the one before.
 * Logged as one entry whose summary keeps every part's.
 */
import { compareSchema } from '../request/schema.js';
import type { Tok } from '../request/lex.js';
import { checkOf, readBody } from '../request/grammar/body.js';
import { mergeCheck } from '../request/grammar/body.js';
import { Cursor } from '../request/grammar/cursor.js';
import { Reject, after, insertAfter, insertBefore, rejectAt } from '../request/grammar/errors.js';
import { LIMITS } from '../request/limits.js';
import type { CheckRequest } from '../request/types.js';
import { resolveCheck } from '../request/resolve.js';
import { exampleOf } from '../request/examples.js';
import type { CompareRequest } from '../request/types.js';
import type { CheckAssembly } from '../result.js';
import { compareChartInput, compareHeadline, compareText, type ComparePart } from '../report/compare.js';
import { isStale } from '../report/log.js';
import { positionWords } from '../report/text.js';
import type { Mark } from '../store/store.js';
import { checkCost } from './budget.js';
import { addExits, checkSummary, computeCheck } from './check.js';
import { markFor, markJson, markLine, resolveContext } from './marks.js';
import { answer, loggedOutcome, PERSONAL_DEFAULTS, refuse, type Outcome, type VerbEnv, type Verb } from './verb.js';

function runCompare(text: string, req: CompareRequest, env: VerbEnv): Outcome {
  const checks = req.checks ?? [];
  if (checks.length !== req.parts.length) {
    throw refuse(text, { message: 'Kolmo could not read the parts of this comparison', at: 0, length: 7, example: exampleOf('compare') });
  }
  const parts: ComparePart[] = [];
  const asms: CheckAssembly[] = [];
  const marks = new Map<string, Mark>();
  checks.forEach((c, k) => {
    const mark = markFor(text, env, c.terms.on, c.termsAt.on);
    if (mark) marks.set(mark.symbol, mark);
    const r = resolveCheck(c, resolveContext(text, env, mark));
    if (!r.ok) throw refuse(text, { ...r.error, message: `part ${k + 1} of the comparison: ${r.error.message}` });
    const asm = computeCheck(r.check);
    addExits(text, r.check, asm, k + 1);
    asms.push(asm);
    parts.push({ label: req.parts[k].text, json: asm.json });
  });
  const ms = [...marks.values()];
  const stale = ms.filter((m) => isStale(m.at, env.now));
  const a = answer({
    verb: 'compare',
    headline: compareHeadline(parts) + (stale.length ? ` · mark ${stale.map((m) => m.symbol).join(', ')} stale` : ''),
    text: [compareText(parts, { verbose: env.verbose }), ...ms.map((m) => markLine(m, env.now))].join('\n'),
    json: {
      kind: 'compare',
      checks: parts.map((p) => p.json),
      ...(ms.length ? { marks: ms.map((m) => markJson(m, env.now)) } : {}),
    },
    chart: compareChartInput(parts, asms.map((x) => x.curves)),
  });
  const summary = {
    position: `compare ${parts.length}: ${positionWords(parts[0].json)}`,
    parts: parts.map((p) => checkSummary(p.json)),
  };
  return loggedOutcome(text, req, a, summary);
}

export function parseCompare(src: string, toks: Tok[]): CompareRequest {
  const head = toks[0];
  // split on ';'
  const groups: [number, number][] = [];
  let start = 1;
  for (let i = 1; i <= toks.length; i++) {
    if (i === toks.length || toks[i].text === ';') {
      if (i === start) {
        const semi = toks[i] ?? toks[i - 1];
        const msg = groups.length === 0 && i === 1 && toks.length === 1
          ? 'compare needs checks separated by ;'
          : 'an empty part: each part between ; needs a leg or a term (e.g. drift 0%)';
        if (toks.length === 1) throw new Reject(msg, after(head), 1, insertAfter(head, exampleOf('compare').slice(8)), 'compare');
        throw rejectAt(semi, msg, undefined, 'compare');
      }
      groups.push([start, i]);
      start = i + 1;
    }
  }
  if (groups.length > LIMITS.compareParts) {
    const first = toks[groups[LIMITS.compareParts][0]];
    const last = toks[groups[LIMITS.compareParts][1] - 1];
    const kept = toks[groups[LIMITS.compareParts - 1][1] - 1];
    throw new Reject(
      `a comparison takes at most ${LIMITS.compareParts} checks and this one has ${groups.length}: drop the parts from here on, or split it into two comparisons`,
      first.at,
      last.at + last.len - first.at,
      { at: kept.at + kept.len, length: src.length - kept.at - kept.len, text: '' },
      'compare',
    );
  }
  if (groups.length < 2) {
    const last = toks[toks.length - 1];
    throw new Reject(
      'compare needs at least two parts separated by ; (each part inherits from the one before)',
      after(last),
      1,
      insertAfter(last, '; drift 0%'),
      'compare',
    );
  }
  const parts: { text: string; at: number }[] = [];
  const checks: CheckRequest[] = [];
  groups.forEach(([from, to], k) => {
    const first = toks[from];
    const last = toks[to - 1];
    parts.push({ text: src.slice(first.at, last.at + last.len), at: first.at });
    const skip = first.low === 'check' ? 1 : 0;
    const c = new Cursor(src, toks, from + skip, to, 'compare');
    const body = readBody(c, 'check');
    if (k === 0 && body.legs.length === 0) {
      throw rejectAt(first, 'the first part of a comparison is a whole check and starts with a leg, e.g. +1 call 100 3m iv 30%', insertBefore(first, '+1 call 100 3m iv 30%'), 'compare');
    }
    if (from + skip === to) {
      throw rejectAt(first, 'an empty part: give a leg or a term after check', undefined, 'compare');
    }
    const part = checkOf(body, c.end());
    checks.push(k === 0 ? part : mergeCheck(checks[k - 1], part));
  });
  return { verb: 'compare', parts, checks };
}

export const compare: Verb<CompareRequest> = {
  name: 'compare',
  schema: compareSchema,
  words: ['compare'],
  grammar: parseCompare,
  readsSemicolons: true,
  rerun: 'parts',
  overview: { usage: 'compare A ; B', says: 'checks side by side, each part inheriting from the one before' },
  buttons: 'vary',
  personalDefaults: PERSONAL_DEFAULTS,
  example: 'compare +1 call 90 3m iv 30% spot 84.20 ; drift 0% ; drift 12%',
  help: {
    title: 'compare — several checks side by side',
    lines: [
      'compare CHECK ; PART ; PART …   (2 to 6 checks)',
      'Each part inherits from the one before: terms written in a part override,',
      'legs written in a part replace the legs. A leg\'s own iv is kept unless the leg is restated.',
    ],
    examples: [
      'compare +1 call 90 3m iv 30% on FERNWK ; drift 0% ; drift 12%',
      'compare +1 put 45 6w iv 35% spot 47.10 drift 5% ; +1 put 42 6w iv 38% ; vol 45%',
    ],
  },
  resolves: (req, ctx) => (req.checks ?? []).every((c) => resolveCheck(c, ctx).ok),
  // each part on its own mark
  answersHere: async (req, here) => {
    const checks = req.checks ?? [];
    if (checks.length < 2 || checks.length > LIMITS.compareParts) return false;
    for (const k of checks) {
      const c = await here.context(k.terms.on);
      if (!c || !resolveCheck(k, c).ok) return false;
    }
    return true;
  },
  run: runCompare,
  cost: (req, _text, ctx) => ({ units: (req.checks ?? []).reduce((s, c) => s + checkCost(c, ctx.now), 0), at: 0, what: 'comparison' }),
};
