/**
 * Errors of the grammar: a rejection on its way up (`Reject`, with the fix that would correct the
 * user's own request), its ParseError (the fixed request as the example when it reads), and the
 * one screen a rejected request is shown as (`formatError`).
 */
import type { Tok } from '../lex.js';
import { exampleOf, type ExampleKey } from '../examples.js';
import { LIMITS } from '../limits.js';
import type { ParseError } from '../types.js';

/** A replacement of [at, at+length) by text: turns the user's request into a corrected one. */
export interface Edit {
  at: number;
  length: number;
  text: string;
}

/** Internal: a rejection on its way up to `parse`. */
export class Reject {
  constructor(
    readonly message: string,
    readonly at: number,
    readonly length: number,
    readonly fix?: Edit,
    readonly fallback: ExampleKey = 'check',
  ) {}
}

export function applyEdit(text: string, e: Edit): string {
  return (text.slice(0, e.at) + e.text + text.slice(e.at + e.length)).replace(/\s+/g, ' ').trim();
}

/**
 * Turn a rejection into a ParseError. The example is the user's own request with the fix applied
 * when that parses; otherwise the canonical example for the verb.
 */
export function toParseError(
  text: string,
  r: Reject,
  accept: (candidate: string) => boolean,
): ParseError {
  let example: string = exampleOf(r.fallback);
  if (r.fix && typeof text === 'string') {
    const candidate = applyEdit(text, r.fix);
    if (candidate.length > 0 && candidate.length <= LIMITS.textLength && candidate !== text.trim()) {
      try {
        if (accept(candidate)) example = candidate;
      } catch {
        /* keep the canonical example */
      }
    }
  }
  const end = typeof text === 'string' ? text.length : 0;
  return { message: r.message, at: Math.min(Math.max(0, r.at), end), length: Math.max(1, r.length), example };
}

/** The failure for anything unexpected inside the request layer (a fault of Kolmo, not of the text): `doing` is read or resolve. */
export function internalFailure(doing: string, e: unknown, example: string): { ok: false; error: ParseError } {
  return {
    ok: false,
    error: { message: `Kolmo could not ${doing} this request (internal error: ${e instanceof Error ? e.message : String(e)})`, at: 0, length: 1, example },
  };
}

export function rejectAt(t: Tok, message: string, fix?: Edit, fallback?: ExampleKey): Reject {
  return new Reject(message, t.at, t.len, fix, fallback);
}

export function replaceTok(t: Tok, text: string): Edit {
  return { at: t.at, length: t.len, text };
}

export function insertBefore(t: Tok, text: string): Edit {
  return { at: t.at, length: 0, text: text + ' ' };
}

export function insertAfter(t: Tok, text: string): Edit {
  return { at: t.at + t.len, length: 0, text: ' ' + text };
}

/** Position just after a token (where a missing value would go). */
export function after(t: Tok): number {
  return t.at + t.len + 1;
}

export function fmtNum(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  return String(Number(v.toPrecision(12)));
}

export function fmtBig(v: number): string {
  return v.toLocaleString('en-US');
}

// ---------------------------------------------------------------------------------------------
// Error display

/** Display width of a string's code points (tabs and other spaces shown as one space). */
function visible(s: string): string {
  return s.replace(/\s/gu, ' ');
}

/**
 * One screen for a rejected request: the request quoted (a window around the bad token when it is
 * long), a caret line under the bad token, what was expected, and one corrected example.
 */
export function formatError(text: string, e: ParseError): string {
  const src = typeof text === 'string' ? text : '';
  const WIDTH = 72;
  const at = Math.min(Math.max(0, e.at), src.length);
  const len = Math.max(1, Math.min(e.length, 40));
  let from = 0;
  let to = src.length;
  if (src.length > WIDTH) {
    from = Math.max(0, Math.min(at - 24, src.length - WIDTH));
    to = Math.min(src.length, from + WIDTH);
  }
  const cps = (s: string) => Array.from(s).length;
  const shown = (from > 0 ? '…' : '') + visible(src.slice(from, to)) + (to < src.length ? '…' : '');
  const pad = (from > 0 ? 1 : 0) + cps(src.slice(from, at));
  const caretLen = Math.max(1, Math.min(len, cps(src.slice(at, Math.min(at + len, to))) || 1));
  return [
    'Kolmo could not read this request:',
    `  ${shown}`,
    `  ${' '.repeat(pad)}${'^'.repeat(caretLen)}`,
    e.message,
    `Example: ${e.example}`,
  ].join('\n');
}
