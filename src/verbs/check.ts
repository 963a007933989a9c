/**
 * `check`: fair value, Greeks and the likely outcome of a position under the user's view.
 * Resolves against the channel's mark, runs the core, answers with the table and the chart, and
 * is logged with its headline figures.
 */
import { checkSchema } from '../request/schema.js';
import { runCheck } from '../core/outcome.js';
import { knownDriftFigures } from '../core/predictive.js';
import { activeJumps } from '../core/jumps.js';
import { parseCheckVerb } from '../request/grammar/body.js';
import { ALL_TERMS } from '../request/grammar/words.js';
import { resolveCheck, type ResolvedCheck } from '../request/resolve.js';
import type { CheckRequest } from '../request/types.js';
import type { CheckAssembly, CheckJson, LegJson } from '../result.js';
import { checkHeadline, checkText, positionWords } from '../report/text.js';
import { checkChartInput } from '../report/chart-input.js';
import { checkNoteText } from '../report/notes.js';
import { money, pct, pts, isNum } from '../report/format.js';
import type { CheckSummary } from '../store/store.js';
import { checkCost } from './budget.js';
import { computeExits, exitLevels } from './exits.js';
import { markFor, markJson, markLine, resolveContext, staleWords, resolvedOnItsMark } from './marks.js';
import { answer, loggedOutcome, PERSONAL_DEFAULTS, refuse, type Outcome, type VerbEnv, type Verb } from './verb.js';

/** Runs the core for a resolved check and assembles the JSON result (docs/design.md §4). */
export function computeCheck(rc: ResolvedCheck): CheckAssembly {
  const input = rc.input;
  const core = runCheck(input);
  // the market column comes from the same run (same P&L function, the market walk's distribution)
  const mk = core.outcomeMarket!; // computed by default (RunOptions.marketFigures)
  const legs: LegJson[] = input.legs.map((l, i) => {
    const g = core.legs[i];
    const isOpt = l.kind !== 'shares';
    return {
      qty: l.qty,
      type: l.kind,
      strike: isOpt ? l.strike : null,
      expiry: rc.legExpiries[i] ?? null,
      years: isOpt ? l.years : null,
      iv: isOpt ? l.iv : null,
      entry: l.entry ?? g.value,
      entryGiven: l.entry !== null,
      value: g.value,
      delta: g.delta,
      gamma: g.gamma,
      vega: g.vega,
      theta: g.theta,
      rho: g.rho,
      probItmRiskNeutral: isOpt ? g.probItmRiskNeutral : null,
      probItmView: isOpt ? g.probItmView : null,
    };
  });
  const jumps = activeJumps(input.view.jumps);
  const json: CheckJson = {
    kind: 'check',
    ...(rc.symbol ? { symbol: rc.symbol } : {}),
    asof: rc.asof,
    horizon: rc.horizon,
    horizonYears: input.horizonYears,
    market: { spot: input.market.spot, rate: input.market.rate, yield: input.market.yield },
    view: {
      drift: input.view.drift,
      vol: input.view.vol,
      model: jumps ? 'merton-jumps' : 'lognormal',
      ...(jumps ? { jumps } : {}),
      ...(input.view.driftSe ? { driftSe: input.view.driftSe } : {}),
    },
    style: input.style,
    mult: input.mult,
    notes: [...rc.notes, ...core.notes.map(checkNoteText)],
    legs,
    position: core.position,
    outcome: core.outcome,
    outcomeMarket: {
      probProfit: mk.probProfit,
      expectedPnl: mk.expectedPnl,
      pnlQuantiles: mk.pnlQuantiles,
      tailMean05: mk.tailMean05,
    },
    marketVol: core.marketVol,
  };
  // with a drift uncertainty, the same figures with the drift known, for the line that compares them
  const known = knownDriftFigures(input);
  if (known) json.knownDrift = { probProfit: known.probProfit, pnlQuantiles: { p05: known.p05, p95: known.p95 } };
  return { json, curves: core.curves };
}

/**
 * Adds the exit figures of a check with a target or a stop (./exits.ts); a level that makes no
 * sense for the position is refused with a caret under it (`part` names the comparison's part).
 */
export function addExits(text: string, rc: ResolvedCheck, asm: CheckAssembly, part?: number): void {
  if (!rc.exits) return;
  const lv = exitLevels(rc, asm.json, text);
  if (!lv.ok) throw refuse(text, part === undefined ? lv.error : { ...lv.error, message: `part ${part} of the comparison: ${lv.error.message}` });
  asm.json.exits = computeExits(rc, lv.levels);
}

/** What the log keeps of a check: its position in words, headline figures and inputs. */
export function checkSummary(c: CheckJson): CheckSummary {
  return {
    position: positionWords(c),
    probProfit: c.outcome.probProfit,
    expectedPnl: c.outcome.expectedPnl,
    viewEdge: c.outcome.viewEdge,
    asof: c.asof,
    horizon: c.horizon,
    spot: c.market.spot,
    rate: c.market.rate,
    yield: c.market.yield,
    drift: c.view.drift,
    vol: c.view.vol,
  };
}

/** "label a → b (Δ)" when both figures are there, else null. */
export function figurePair(label: string, a: unknown, b: unknown, f: (x: number) => string, d: (x: number) => string): string | null {
  return isNum(a) && isNum(b) ? `${label} ${f(a)} → ${f(b)} (${d(b - a)})` : null;
}

/** Figures that were there, joined; a sentence when none were. */
export function joinFigures(items: (string | null)[]): string {
  const got = items.filter((x): x is string => x !== null);
  return got.length ? got.join(' · ') : 'no figures of the earlier check to set against';
}

/** Chance and expected P&L then and now ("chance of profit 48.1% → 52.3% (+4.2 pts) · …"). */
export function checkFigureChanges(before: CheckSummary, after: CheckSummary): string {
  const moneyD = (x: number) => money(x, { sign: true });
  return joinFigures([
    figurePair('chance of profit', before.probProfit, after.probProfit, (x) => pct(x), pts),
    figurePair('expected P&L', before.expectedPnl, after.expectedPnl, moneyD, moneyD),
  ]);
}

function runCheckVerb(text: string, req: CheckRequest, env: VerbEnv): Outcome {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveCheck(req, resolveContext(text, env, mark));
  if (!r.ok) throw refuse(text, r.error);
  const asm = computeCheck(r.check);
  addExits(text, r.check, asm);
  const a = answer({
    verb: 'check',
    headline: checkHeadline(asm.json) + staleWords(mark, env.now),
    text: checkText(asm.json, { verbose: env.verbose }) + (mark ? `\n${markLine(mark, env.now)}` : ''),
    json: { ...asm.json, ...(mark ? { mark: markJson(mark, env.now) } : {}) } as unknown as Record<string, unknown>,
    chart: checkChartInput(asm),
  });
  return loggedOutcome(text, req, a, checkSummary(asm.json));
}

export const check: Verb<CheckRequest> = {
  name: 'check',
  schema: checkSchema,
  body: { terms: ALL_TERMS, legs: true },
  words: ['check'],
  grammar: parseCheckVerb,
  rerun: 'legs',
  overview: { usage: 'LEG …', says: 'check a position (e.g. +1 call 100 3m iv 30% spot 98.50 drift 8%)' },
  buttons: 'vary',
  personalDefaults: PERSONAL_DEFAULTS,
  example: '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9%',
  help: {
    title: 'check — fair value, Greeks and the likely outcome of a position under your view',
    lines: [
      '[check] LEG [LEG …] [TERMS]   (check is implied when the request starts with a leg)',
      'LEG:   QTY TYPE [STRIKE] [EXPIRY] [@ENTRY] [iv PCT]',
      '       QTY signed (+2 long, -2 short, 3 = long; also buy 2, sell 2, 2x); TYPE call|put|shares',
      '       (c, p, sh); EXPIRY yyyy-mm-dd, 19Mar27, Mar27 (the third Friday of the month) or',
      '       30d / 6w / 3m / 1y from asof; ENTRY price per share; terms right after a leg',
      '       (strike, expiry, @entry, iv) belong to that leg; an iv after the last leg applies to',
      '       every leg without one when no other iv is written.',
      'TERMS (any order, each once): spot P · rate PCT · yield PCT · iv PCT (legs without one) ·',
      '       exp DATE|SPAN (legs without one) · drift PCT [± PCT] · vol PCT (the view) ·',
      '       horizon DATE|SPAN · asof DATE|today · mult N · style american|european ·',
      '       jumps RATE/yr MEAN% SD% · on SYMBOL (market terms from the channel\'s mark) ·',
      '       target MONEY|PCT · stop MONEY|PCT (exit levels; see help exits)',
      'Defaults: asof today · rate and yield 0% (said in the notes) · horizon the earliest expiry',
      '       (required for shares alone) · vol the position\'s iv, else the iv of the leg nearest',
      '       the money · drift the rate (then the view edge is 0) · mult 100 ·',
      '       style european · a leg without @ is entered at its fair value.',
      'Answer: your view beside the market (drift = rate, vol = the market vol: the position\'s iv,',
      '       else the iv of the leg nearest the money), the expected P&L split into its parts',
      '       (entry vs fair, carry, early exercise, legs\' iv, vol view, drift view). End a request',
      '       with verbose for the method notes.',
    ],
    examples: [
      '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04',
      '-1 put 80 3m @2.40 iv 33% on FERNWK drift 6%',
      '100 shares @84.20 -1 call 90 2m @1.85 iv 29% spot 84.20 rate 4% drift 7%',
    ],
  },
  ...resolvedOnItsMark(resolveCheck),
  run: runCheckVerb,
  cost: (req, _text, ctx) => ({ units: checkCost(req, ctx.now), at: req.termsAt.jumps ?? req.termsAt.style ?? req.termsAt.target ?? req.termsAt.stop ?? 0, what: 'check' }),
  figureChanges: checkFigureChanges,
};
