/**
 * What every resolution shares: its context (today, the mark, the text), the `Resolver` that
 * turns a problem into a rejection with the caret on the offending term and the user's own request
 * corrected as the example, and the guard that keeps anything unexpected from escaping.
 */
import { exampleOf, type ExampleKey } from '../examples.js';
import { Reject, parse, toParseError, type Edit } from '../parse.js';
import { internalFailure } from '../grammar/errors.js';
import type { MarkFigures } from '../../core/types.js';
import type { ParseError } from '../types.js';
import { verbNamed } from '../../verbs/registry.js';

/** The mark a request's `on SYMBOL` reads. */
export type MarkTerms = MarkFigures;

export interface ResolveContext {
  /** yyyy-mm-dd */
  today: string;
  /** the channel's mark for the request's `on SYMBOL` */
  mark?: MarkTerms;
  /** ISO time now, for the mark's age (default: the start of `today`, UTC) */
  now?: string;
  /** the request text: when given, errors carry the user's own request corrected as the example */
  text?: string;
}

export type Fail = { ok: false; error: ParseError };

export function pct(v: number): string {
  return `${Number((v * 100).toPrecision(10))}%`;
}

/** A decimal as a percentage with at most two decimals (estimates stored in a mark carry more digits than they deserve). */
export function pct2(v: number): string {
  return `${Number((v * 100).toFixed(2))}%`;
}

export function num(v: number): string {
  return String(Number(v.toPrecision(10)));
}

/** Length of the token starting at `at` in the text (1 when the text is unknown). */
export function tokLen(text: string | undefined, at: number): number {
  if (!text) return 1;
  let j = at;
  while (j < text.length && !/\s/u.test(text[j])) j++;
  return Math.max(1, j - at);
}

export class Resolver {
  constructor(
    readonly ctx: ResolveContext,
    readonly fallback: ExampleKey,
    readonly end: number,
  ) {}

  /** reject with the caret on the token at `at` */
  at(at: number | undefined, message: string, fix?: Edit): Reject {
    const pos = at ?? this.end;
    return new Reject(message, pos, tokLen(this.ctx.text, pos), fix, this.fallback);
  }

  /** reject for a missing term: caret just past the end, fix appends the term */
  missing(message: string, append: string): Reject {
    return new Reject(message, this.end + 1, 1, { at: this.end, length: 0, text: ` ${append}` }, this.fallback);
  }

  /** a replacement of the token at `at` (only when the text is known) */
  replace(at: number | undefined, text: string): Edit | undefined {
    if (at === undefined || !this.ctx.text) return undefined;
    return { at, length: tokLen(this.ctx.text, at), text };
  }

  /** where the value of the term word at `at` starts (the token after the word) */
  valueAt(at: number | undefined): number | undefined {
    const t = this.ctx.text;
    if (at === undefined || !t) return undefined;
    let j = at + tokLen(t, at);
    while (j < t.length && /\s/u.test(t[j])) j++;
    return j < t.length ? j : undefined;
  }

  /** reject with the caret under a term word and its value (e.g. `horizon 2027-04-15`) */
  term(at: number | undefined, message: string, fix?: Edit): Reject {
    const v = this.valueAt(at);
    const len = at !== undefined && v !== undefined ? v + tokLen(this.ctx.text, v) - at : 1;
    return new Reject(message, at ?? this.end, len, fix, this.fallback);
  }

  error(r: Reject): Fail {
    const text = this.ctx.text;
    if (!text) {
      return { ok: false, error: { message: r.message, at: Math.max(0, r.at), length: Math.max(1, r.length), example: exampleOf(r.fallback) } };
    }
    const accept = (candidate: string): boolean => {
      const p = parse(candidate);
      if (!p.ok) return false;
      const sub: ResolveContext = { ...this.ctx, text: undefined };
      // the verb says whether its request resolves here (its `resolves` in src/verbs/<verb>.ts)
      return verbNamed(p.request.verb).resolves?.(p.request, sub) ?? false;
    };
    return { ok: false, error: toParseError(text, r, accept) };
  }
}

/** Every number in a value is finite (the last guard before the core). */
export function allFinite(x: unknown): boolean {
  if (typeof x === 'number') return Number.isFinite(x);
  if (Array.isArray(x)) return x.every(allFinite);
  if (x && typeof x === 'object') return Object.values(x).every(allFinite);
  return true;
}

export function guard<T>(R: () => Resolver, f: () => T): T | Fail {
  try {
    const out = f();
    if (!allFinite(out)) throw new Error('a resolved figure is not a finite number');
    return out;
  } catch (e) {
    const r = R();
    if (e instanceof Reject) return r.error(e);
    return internalFailure('resolve', e, exampleOf(r.fallback));
  }
}

/**
 * Runs a resolution under the guard with a Resolver for `verb` (its example is the fallback):
 * what `body` returns, marked ok, or the failure. Never throws.
 */
export function resolveWith<T extends object>(ctx: ResolveContext, verb: ExampleKey, req: { end?: number }, body: (R: Resolver) => T): ({ ok: true } & T) | Fail {
  const mk = () => new Resolver(ctx, verb, endOf(req, ctx));
  const out = guard(mk, () => body(mk()));
  return 'ok' in out ? out : { ok: true, ...out };
}

export function endOf(req: { end?: number }, ctx: ResolveContext): number {
  return req.end ?? (ctx.text ? ctx.text.trimEnd().length : 0);
}

