/**
 * What every verb file provides (see ./registry.ts for the list) and the small kit the verb files
 * share: the request's clock, refusals, and the store as the seam hands it over.
 *
 * A verb file never imports the registry or the seam (./ask.ts): everything it needs from them
 * (the store, the clock, rerunning another verb, the list of verbs) arrives in its `VerbEnv`.
 */
import { formatError } from '../request/grammar/errors.js';
import type { z } from 'zod';
import type { ParseError } from '../request/types.js';
import type { Tok } from '../request/lex.js';
import type { AnyTerm } from '../request/grammar/words.js';
import type { HelpPage } from '../request/help.js';
import type { ResolveContext } from '../request/resolve/context.js';
import { CAUTION, type Answer, type Rejection } from '../reply.js';
import { StoreError, type CheckSummary, type LogStore, type Mark } from '../store/store.js';

export interface AskContext {
  /** the channel (workspace channel id, `cli`, `console`): the log and the marks are per channel */
  channel: string;
  user: string;
  /** the time of the request (default: the clock); drives `asof` defaults and the marks' age */
  now?: Date;
  /** the channel's memory (the async store, or a worker's view of its instance's store) */
  store?: LogStore | null;
  /** answering in a workspace: log listings return thread links apart (Answer.links) instead of inline */
  inWorkspace?: boolean;
  /** compute units this request may use (default COMPUTE_BUDGET_DEFAULT, ./budget.ts) */
  budget?: number;
  /** files shared with the request (a workspace upload, or `--file` on the command line): read by `history` */
  files?: { name: string; base64: string }[];
}

/** What `answersHere` may look at: the channel, its store, and a resolve context per `on SYMBOL`. */
export interface Here {
  channel: string;
  store?: LogStore | null;
  /** the context a request resolves in, with the channel's mark for `on` (null: there is no such mark) */
  context(on: string | undefined): Promise<ResolveContext | null>;
}

/** A verb's work as the seam hands it over: the request's time and day, once, and the store. */
export interface VerbEnv {
  ctx: AskContext;
  now: Date;
  today: string;
  nowIso: string;
  /**
   * the channel's marks, read once by the seam before the verb runs (so resolving `on SYMBOL`
   * needs no I/O); the StoreError when they could not be read; undefined without a store
   */
  marks?: Map<string, Mark> | StoreError;
  /** the request ended with `verbose`: method notes in the text too */
  verbose?: boolean;
  /** the marks this request used (the seam logs them, so that `again N` reruns it as logged) */
  used?: Map<string, Mark>;
  /** the verb of that name, and all of them (from the registry, handed over by the seam) */
  verb(name: string): Verb;
  verbs(): readonly Verb[];
}

/** Any request, as far as the verb kit needs to know (the registry names the exact union). */
export interface AnyRequest {
  verb: string;
}

/** What a verb returns: the answer, and what the log keeps of it (verbs that are not logged leave it out). */
export interface Outcome {
  answer: Answer;
  log?: { verb: string; text: string; request: AnyRequest; summary: CheckSummary };
}

/** Units of computing a request needs (./budget.ts); `at` is where the caret goes when it is too much. */
export interface Cost {
  units: number;
  at: number;
  what: string;
}

export interface CostContext {
  now: Date;
  /** the logged text of check N of the asker's channel (for `again N`), if it can be read */
  logged?: (n: number) => string | undefined;
  /** the cost of another request (for `again N`: the request it reruns) */
  costOf(req: AnyRequest, text: string): Cost | null;
}

/** A person's defaults (set on my desk), which a request may take where it leaves the term out. */
export const PERSONAL_DEFAULTS = ['rate', 'yield', 'mult', 'horizon'] as const;
export type PersonalDefault = (typeof PERSONAL_DEFAULTS)[number];

/** `answersHere` of a verb that needs nothing of the channel but its store (log, mark). */
export async function hasStore(_req: AnyRequest, here: Here): Promise<boolean> {
  return !!here.store;
}

/**
 * A verb's line in the help overview: `usage` in the first column, `says` after it (a function when
 * it is read from elsewhere, as help's list of topics). Lines follow the registry's order; `place`
 * moves one: `{ after: V }` on the line after verb V's, `{ with: V }` on V's own line, after it.
 */
export interface OverviewLine {
  usage: string;
  says: string | (() => string);
  place?: { after: string } | { with: string };
}

/** One verb: everything the rest of Kolmo needs to know about it. `R` is its request. */
export interface Verb<R extends AnyRequest = AnyRequest> {
  name: R['verb'];
  /** first words that start a request of this verb (the first is its name) */
  words: readonly string[];
  /** the shape of its request: the last check before the request leaves the parser, and its type */
  schema: z.ZodType<R>;
  /**
   * grammar hook: reads the tokens from `from` (just after the verb word; 0 for a check written
   * without its verb) into the verb's request; throws the grammar's Reject
   */
  grammar(src: string, toks: Tok[], from: number): R;
  /** the terms its body takes after the verb's own head, and whether it takes legs (absent: no body) */
  body?: { terms: readonly AnyTerm[]; legs: boolean };
  /** reads `;` itself (every other verb refuses it as a misplaced comparison) */
  readsSemicolons?: boolean;
  /**
   * how `again N` rewrites a logged request of this verb with changes (absent: `again` cannot
   * rerun it, and the log never keeps it): 'legs' — its legs and terms (a check); 'parts' — each
   * part of a comparison; `{ head }` — its first `head` words kept, then its terms (iv, touch)
   */
  rerun?: 'legs' | 'parts' | { head: number };
  /** its canonical example (invented symbols, market terms written out): rejections fall back to it */
  example: string;
  /** its page of `help NAME` (the verb's name is the topic); `help` itself has none */
  help?: HelpPage;
  /** its line in the help overview (the "Verbs:" block of `help`) */
  overview: OverviewLine;
  /**
   * the buttons under its logged answer in a workspace (src/chat/actions/buttons.ts): 'vary' —
   * the variations (spot, vol, drift, today's mark), edit in the check form and delete; 'delete'
   * — delete only; both add "post to a channel" to a private answer. Absent: no buttons.
   */
  buttons?: 'vary' | 'delete';
  /**
   * the person's defaults its request takes where it and its mark leave the term out (written
   * into its `terms`; a comparison's into its first part); absent: none
   */
  personalDefaults?: readonly PersonalDefault[];
  /** it reads the files shared with the request (`AskContext.files`): a shell hands files only to it */
  readsFiles?: boolean;
  /**
   * whether a request of this verb resolves in this context: a rejection offers the user's own
   * request corrected as its example only when it does (absent: never offered, the canonical
   * example is)
   */
  resolves?(req: R, ctx: ResolveContext): boolean;
  /**
   * whether a request of this verb would be answered in this channel, short of running it (the
   * test an "Example:" of a rejection passes before it is offered, ./working-example.ts): the
   * marks it names exist and it resolves, the log entry it names exists, the store it needs is
   * there. Absent: it is always answered. (Verbs that resolve a position are then also run.)
   */
  answersHere?(req: R, here: Here): Promise<boolean>;
  /** resolve, compute, render; refusals are thrown as `Refused` */
  run(text: string, req: R, env: VerbEnv): Outcome | Promise<Outcome>;
  /**
   * the number of the channel's log entry a request of this verb reruns (`again N`): the seam reads
   * that entry's text for `cost` (CostContext.logged) and the channel's marks, which the rerun may
   * use, before it runs
   */
  entryOf?(req: R): number;
  /** units against the compute budget; absent: its work is small */
  cost?(req: R, text: string, ctx: CostContext): Cost | null;
  /** figures of a logged summary against a rerun's, in words (for `again`) */
  figureChanges?(before: CheckSummary, after: CheckSummary): string;
  /** what the log shows after the position words of an entry of this verb (e.g. " → iv 26.98%") */
  logWords?(summary: Record<string, unknown>): string;
}

export function isoDay(d: Date): string {
  return d.toISOString().slice(0, 10);
}

export function envOf(ctx: AskContext, registry: Pick<VerbEnv, 'verb' | 'verbs'>): VerbEnv {
  const now = ctx.now instanceof Date && Number.isFinite(ctx.now.getTime()) ? ctx.now : new Date();
  return { ctx, now, today: isoDay(now), nowIso: now.toISOString(), ...registry };
}

/** What a logged verb returns: its answer, and its request as written with the figures the log keeps. */
export function loggedOutcome(text: string, req: AnyRequest, a: Answer, summary: CheckSummary): Outcome {
  return { answer: a, log: { verb: req.verb, text, request: req, summary } };
}

export function reject(text: string, e: ParseError): Rejection {
  return { kind: 'rejected', message: formatError(text, e), at: e.at };
}

export function answer(partial: Omit<Answer, 'kind' | 'caution' | 'warnings' | 'ephemeral'> & Partial<Answer>): Answer {
  return { kind: 'answer', caution: CAUTION, warnings: [], ephemeral: false, ...partial };
}

/** A request Kolmo will not answer: thrown inside the verbs, returned by the seam. */
export class Refused extends Error {
  constructor(readonly reply: Rejection) {
    super(reply.message);
  }
}

export function refuse(text: string, e: ParseError): Refused {
  return new Refused(reject(text, e));
}

/** A refusal that is not about reading the request (no such check, the log unavailable, …). */
export function refuseFact(text: string, e: ParseError): Refused {
  const r = reject(text, e);
  return new Refused({ ...r, message: r.message.replace(/^Kolmo could not read this request:/, 'Kolmo cannot answer this request:') });
}

/** Runs a store call; a StoreError becomes a refusal with `what` in front of its message. */
export async function storeCall<T>(text: string, what: string, at: number, fn: () => Promise<T>): Promise<T> {
  try {
    return await fn();
  } catch (err) {
    if (err instanceof StoreError) {
      throw refuseFact(text, { message: `${what}: ${err.message}`, at, length: 1, example: 'help' });
    }
    throw err;
  }
}

export function needStore(text: string, env: VerbEnv, verb: string): LogStore {
  const s = env.ctx.store;
  if (!s) {
    throw refuseFact(text, {
      message: `${verb} needs the channel's log, and this session has none (the log could not be opened, or it was turned off)`,
      at: 0,
      length: verb.length,
      example: 'help',
    });
  }
  return s;
}
