/**
 * `compare A ; B ; …`: several checks side by side, each part inheriting from the one before.
 * Logged as one entry whose summary keeps every part's.
 */
import { parseCompare } from '../request/parse.js';
import { resolveCheck } from '../request/resolve.js';
import { EXAMPLES } from '../request/examples.js';
import type { CompareRequest } from '../request/types.js';
import type { CheckAssembly } from '../result.js';
import { compareChartInput, compareHeadline, compareText, type ComparePart } from '../report/compare.js';
import { isStale } from '../report/log.js';
import { positionWords } from '../report/text.js';
import type { Mark } from '../store/store.js';
import { checkCost } from './budget.js';
import { addExits, checkSummary, computeCheck } from './check.js';
import { markFor, markJson, markLine, resolveContext } from './marks.js';
import { answer, defineVerb, refuse, type Outcome, type VerbEnv } from './verb.js';

function runCompare(text: string, req: CompareRequest, env: VerbEnv): Outcome {
  const checks = req.checks ?? [];
  if (checks.length !== req.parts.length) {
    throw refuse(text, { message: 'Kolmo could not read the parts of this comparison', at: 0, length: 7, example: EXAMPLES.compare });
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
    text: [compareText(parts), ...ms.map((m) => markLine(m, env.now))].join('\n'),
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
  return { answer: a, log: { verb: 'compare', text, request: req, summary } };
}

export const compare = defineVerb({
  name: 'compare',
  words: ['compare'],
  grammar: parseCompare,
  readsSemicolons: true,
  rerunnable: true,
  run: runCompare,
  cost: (req, _text, ctx) => ({ units: (req.checks ?? []).reduce((s, c) => s + checkCost(c, ctx.now), 0), at: 0, what: 'comparison' }),
});
