/**
 * Typed requests: what the parser (src/request/parse.ts) makes of the text of a request
 * (grammar: docs/design.md §2). Values are in core units: percentages already divided by
 * 100 (iv 28% → 0.28), dates as ISO strings (yyyy-mm-dd). Relative expiries (`30d`, `6w`, `3m`,
 * `1y`) are kept relative here and turned into dates against `asof` by the resolver.
 *
 * Every field keeps the character index of its token in the request text (`…At`), so that a
 * later check (e.g. a horizon after an expiry) can still put a caret under the right token.
 */

import type { ExerciseStyle, Jumps, LegKind } from '../core/types.js';

/** An expiry as written: an ISO date, or a span from asof. */
export type ExpirySpec = { date: string } | { span: number; unit: 'd' | 'w' | 'm' | 'y' };

export interface LegSpec {
  qty: number;
  kind: LegKind;
  strike?: number;
  expiry?: ExpirySpec;
  entry?: number;
  iv?: number;
  /** index of the leg's first token */
  at: number;
  /** index of each term of the leg that was written */
  termsAt: Partial<Record<'strike' | 'expiry' | 'entry' | 'iv', number>>;
}

/**
 * An exit level as written (`target +400`, `stop -300`, `target 50%`): money P&L of the whole
 * position, or a percentage of the position's |cost| (`pct`, as a decimal: 50% → 0.5). `signed`
 * says whether a sign was written; unsigned, a target is a profit and a stop a loss.
 */
export interface ExitLevelSpec {
  value: number;
  pct: boolean;
  signed: boolean;
  /** index and length of the value's token (for a caret once the position's P&L is known) */
  at: number;
  len: number;
}

/** Terms that may follow the legs, in any order. All optional; the resolver fills defaults. */
export interface Terms {
  spot?: number;
  rate?: number;
  yield?: number;
  iv?: number;
  exp?: ExpirySpec;
  drift?: number;
  /** the drift's uncertainty (`drift 9% ± 6%`), part of the drift term: written only after a drift */
  driftSe?: number;
  vol?: number;
  horizon?: ExpirySpec;
  /** ISO date, or 'today' (`asof today`: the resolver's today) */
  asof?: string;
  mult?: number;
  style?: ExerciseStyle;
  jumps?: Jumps;
  on?: string;
  /** close the position when its P&L reaches this level (a profit level) */
  target?: ExitLevelSpec;
  /** close the position when its P&L falls to this level (a loss level) */
  stop?: ExitLevelSpec;
}

export type TermName = keyof Terms;

export interface CheckRequest {
  verb: 'check';
  legs: LegSpec[];
  terms: Terms;
  termsAt: Partial<Record<TermName, number>>;
  /** index just past the last token of the check (where a missing term would go) */
  end?: number;
}

export interface IvRequest {
  verb: 'iv';
  kind: 'call' | 'put';
  strike: number;
  expiry: ExpirySpec;
  price: number;
  terms: Terms;
  termsAt: Partial<Record<TermName | 'price' | 'strike' | 'expiry', number>>;
  /** index just past the last token (where a missing term would go) */
  end?: number;
}

export interface TouchRequest {
  verb: 'touch';
  level: number;
  /** the date by which the level must be touched */
  by: ExpirySpec;
  terms: Terms;
  termsAt: Partial<Record<TermName | 'level' | 'by', number>>;
  /** index just past the last token (where a missing term would go) */
  end?: number;
}

export interface MarkRequest {
  verb: 'mark';
  /** absent: list the channel's marks */
  symbol?: string;
  terms: Pick<Terms, 'spot' | 'iv' | 'yield' | 'rate' | 'vol' | 'drift' | 'driftSe'>;
}

export interface LogRequest {
  verb: 'log';
  count: number;
}

export interface AgainRequest {
  verb: 'again';
  number: number;
  /** the override text after the number, parsed as terms (and possibly legs) by the caller */
  rest: string;
  restAt: number;
}

export interface CompareRequest {
  verb: 'compare';
  /** the parts' texts between `;`, with their start index in the request */
  parts: { text: string; at: number }[];
  /**
   * each part as a check after inheriting from the one before (terms written in a part override,
   * legs written in a part replace the legs); positions index the whole request text
   */
  checks?: CheckRequest[];
}

export interface HelpRequest {
  verb: 'help';
  topic?: string;
}

import type { HistoryRequest } from './history.js';
export type { HistoryRequest };

export type Request =
  | HistoryRequest
  | CheckRequest
  | IvRequest
  | TouchRequest
  | MarkRequest
  | LogRequest
  | AgainRequest
  | CompareRequest
  | HelpRequest;

/** A parse error: message for humans, index of the first bad token, one corrected example. */
export interface ParseError {
  message: string;
  at: number;
  /** length of the bad token (for the caret line) */
  length: number;
  example: string;
}

export type ParseResult = { ok: true; request: Request } | { ok: false; error: ParseError };
