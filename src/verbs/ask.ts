/**
 * The one seam: text in, Reply out, for every shell (chat app, workers, console, command line).
 *
 *   budget → parse → verb → log → reply
 *
 * The text is parsed once; the compute budget is held against the parsed request (./budget.ts);
 * the verb (./registry.ts) resolves, computes and renders; what it asks to be logged is written to
 * the channel's log before the shell posts the answer. Never throws: anything unexpected becomes a
 * rejection the asker sees, and every rejection is counted in the channel's rejected counter.
 *
 * The channel's memory (the log and the marks, src/store) reaches the verbs only through the store
 * handed over in the context:
 * - check, compare, iv and touch are logged (again logs the request it actually ran, so `again`
 *   of it works); help, log, mark listings and `mark SYMBOL …` are not.
 * - a store that cannot be written (read-only, full, busy) never costs the answer: it is answered
 *   and flagged in `warnings` as not logged.
 * - an entry of another channel is answered exactly like a number that does not exist.
 */
import { parse } from '../request/parse.js';
import type { Answer, Rejection, Reply } from '../reply.js';
import { StoreError } from '../store/store.js';
import { budgetRejection, COMPUTE_BUDGET_DEFAULT } from './budget.js';
import { markRecord } from './marks.js';
import { verbNamed, verbs } from './registry.js';
import { workingExample } from './working-example.js';
import { envOf, reject, Refused, type AnyRequest, type AskContext, type Cost, type CostContext, type Outcome, type VerbEnv } from './verb.js';

export type { AskContext } from './verb.js';
export { COMPUTE_BUDGET_DEFAULT } from './budget.js';
/** the largest file of closes a shell hands to `history` (read by the shells before they read it) */
export { CLOSES_FILE_BYTES } from '../request/closes.js';

/** Units a parsed request would need (null: its work is small). */
function costOf(req: AnyRequest, text: string, ctx: Omit<CostContext, 'costOf'>): Cost | null {
  const v = verbNamed(req.verb);
  return v.cost ? v.cost(req, text, { ...ctx, costOf: (r, t) => costOf(r, t, ctx) }) : null;
}

/**
 * The cost context of a request: for one that reruns a log entry (its verb's `entryOf`: `again N`),
 * the entry's text is read first (the budget needs it before the verb runs; an unreadable log just
 * leaves the cost unknown).
 */
async function costContext(ctx: AskContext, now: Date, req: AnyRequest): Promise<Omit<CostContext, 'costOf'>> {
  const { store, channel } = ctx;
  const n = verbNamed(req.verb).entryOf?.(req);
  if (n === undefined || !store) return { now };
  const entry = await store.get(channel, n).catch(() => undefined);
  return { now, logged: (k) => (k === n ? entry?.text : undefined) };
}

/**
 * Reads the channel's marks once before the verb runs, when the request may use one (`on SYMBOL`,
 * or a rerun of a log entry, `again`, which may): the verbs resolve marks without I/O (VerbEnv.marks).
 */
async function withMarks(env: VerbEnv, text: string, req: AnyRequest): Promise<void> {
  const store = env.ctx.store;
  if (!store || !(verbNamed(req.verb).entryOf || /\bon\b/i.test(text))) return;
  try {
    env.marks = new Map((await store.listMarks(env.ctx.channel)).map((m) => [m.symbol, m]));
  } catch (err) {
    if (!(err instanceof StoreError)) throw err;
    env.marks = err;
  }
}

/**
 * Units the request would need, where they can be known from its text (a check, a comparison, or
 * `again N` with its changes applied to the logged check); 0 for verbs whose work is small and for
 * text that does not parse (the seam rejects it with its own message).
 */
export function requestCost(text: string, ctx: { now?: Date; logged?: (n: number) => string | undefined } = {}): Cost {
  const p = parse(text);
  const c = p.ok ? costOf(p.request, text, { now: ctx.now ?? new Date(), logged: ctx.logged }) : null;
  return c ?? { units: 0, at: 0, what: '' };
}

/** A rejection when the request is over the budget, else null. */
export function overBudget(text: string, budget: number, ctx: { now?: Date; logged?: (n: number) => string | undefined } = {}): Rejection | null {
  return budgetRejection(text, requestCost(text, ctx), budget);
}

/**
 * Writes the entry before the answer goes out. A store that cannot take it (read-only, full,
 * busy, refused input) costs only the number: the answer is returned, flagged in `warnings`.
 */
async function logged(env: VerbEnv, o: Outcome): Promise<Answer> {
  const { ctx } = env;
  if (!ctx.store || !o.log) return o.answer;
  // the marks the check used go into the log with it, so that `again N` reruns it as logged
  const used = env.used?.size ? [...env.used.values()].map(markRecord) : [];
  try {
    const e = await ctx.store.appendCheck({
      channel: ctx.channel,
      user: ctx.user,
      at: env.nowIso,
      verb: o.log.verb,
      text: o.log.text,
      normalized: JSON.stringify(o.log.request),
      summary: used.length ? { ...o.log.summary, marks: used } : o.log.summary,
    });
    return { ...o.answer, logNumber: e.number };
  } catch (err) {
    if (!(err instanceof StoreError)) throw err;
    return {
      ...o.answer,
      warnings: [...o.answer.warnings, `Not logged: ${err.message}. The answer is complete, but it has no number in the log, so \`again\` cannot rerun it.`],
    };
  }
}

async function counted(ctx: AskContext, r: Rejection): Promise<Rejection> {
  try {
    await ctx.store?.countRejected(ctx.channel);
  } catch {
    /* a counter that cannot be written loses nothing the asker needs */
  }
  return r;
}

const INTERNAL: Rejection = {
  kind: 'rejected',
  // the internal text stays out of the reply: it can name code paths and inputs of no use to the asker
  message:
    'Kolmo could not answer this request: the engine ran into a problem computing it (an internal error, not a reading of your request).\n' +
    'Nothing was logged. Try nearer dates or milder jump terms, or `help` for the grammar.',
  at: 0,
};

/** The seam: budget → parse → verb → log → reply. Never throws. */
export async function ask(typed: string, ctx: AskContext): Promise<Reply> {
  // a request may end with `verbose`: the text answer then carries the method notes too (the
  // JSON always does); the word is not part of the check, so it is neither parsed nor logged
  let text = typed;
  let verbose = false;
  const vb = typeof typed === 'string' ? /\s+verbose\s*$/i.exec(typed) : null;
  if (vb && typed.slice(0, vb.index).trim()) {
    text = typed.slice(0, vb.index);
    verbose = true;
  }
  let env: VerbEnv | undefined;
  // every Example: of a rejection is a request this channel would answer (./working-example.ts);
  // an example of a verb that resolves a position (check, comparison, iv, touch: its `resolves`)
  // is run for real (within the budget, nothing logged), because some of their refusals (targets
  // and stops) come only once the position is valued
  const runs = async (ex: string, req: AnyRequest): Promise<boolean> => {
    if (!env || !verbNamed(req.verb).resolves) return true;
    if (budgetRejection(ex, costOf(req, ex, await costContext(ctx, env.now, req)), ctx.budget ?? COMPUTE_BUDGET_DEFAULT)) return false;
    try {
      const e: VerbEnv = { ...env, used: new Map() };
      await withMarks(e, ex, req);
      await verbNamed(req.verb).run(ex, req, e);
      return true;
    } catch {
      return false;
    }
  };
  const rejected = async (r: Rejection): Promise<Rejection> => counted(ctx, env ? await workingExample(r, ctx, env, runs) : r);
  try {
    env = { ...envOf(ctx, { verb: verbNamed, verbs }), verbose, used: new Map() };
    const p = parse(text);
    if (!p.ok) return await rejected(reject(text, p.error));
    const req = p.request;
    const over = budgetRejection(text, costOf(req, text, await costContext(ctx, env.now, req)), ctx.budget ?? COMPUTE_BUDGET_DEFAULT);
    if (over) return await rejected(over);
    await withMarks(env, text, req);
    return await logged(env, await verbNamed(req.verb).run(text, req, env));
  } catch (err) {
    if (err instanceof Refused) return rejected(err.reply).catch(() => err.reply);
    return INTERNAL;
  }
}

// The store a shell opens and hands back in the context (the shells import nothing else of it).
export {
  defaultDbPath,
  openDatabase,
  databaseFromEnv,
  StoreError,
  type AsyncStore,
  type LogStore,
  type DatabaseChoice,
  type LogEntry,
  type LogEntryInput,
  type QueuedRequest,
  type Interaction,
  type ClaimedRequest,
  type Progress,
  type RequestQueue,
  type RateOptions,
  type RateDecision,
  type Admission,
} from '../store/store.js';
export { answerButtons, isRerunnable, personalDefaultsOf, readsFiles, verbOfText } from './registry.js';
export type { PersonalDefault } from './verb.js';

// What the shells may read of the grammar: they build request text (the check form, the buttons'
// variations, personal defaults) and check it against the parser before it comes back here.
export { parse, parseCheckPart, formatError } from '../request/parse.js';
export { resolveCheck, type MarkTerms } from '../request/resolve.js';
export { termsOfMark } from './marks.js';
export { LIMITS, SPAN_MAX } from '../request/limits.js';
export { resolveSpec } from '../request/dates.js';
export type { CheckRequest, ExpirySpec, Request } from '../request/types.js';
