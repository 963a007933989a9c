/**
 * The request grammar's entry (docs/design.md §2): text → typed request, or an error with the character
 * index of the first bad token, what was expected and one corrected example.
 *
 * The first word picks the verb through the registry (src/verbs/registry.ts); the verb's grammar
 * hook (in its file, src/verbs/<verb>.ts) reads the rest with the pieces in ./grammar/: errors.ts
 * (rejections, the corrected example, the error screen), words.ts, cursor.ts, values.ts (one value
 * each), terms.ts, legs.ts and body.ts (legs and terms after a verb, with the terms the verb takes).
 *
 * `parse` is pure and never throws: a catch-all at the top turns anything unexpected into an
 * error. Every successful request is checked once more against a zod schema (./schema.ts) at the
 * edge, so no NaN, infinity or out-of-range value can leave this module.
 *
 * Reading rules:
 * - words are case-insensitive; symbols are upper-cased;
 * - a leg is `QTY TYPE [STRIKE] [EXPIRY] [@ENTRY] [iv PCT]`; a leg starts at a number followed
 *   by a type word (`call|calls|c`, `put|puts|p`, `shares|share|sh`); the leg's own terms
 *   (strike, expiry, `@entry`, `iv PCT`) may come in any order right after it, up to the next leg
 *   or market term;
 * - market terms (`spot`, `rate`, ...) may come in any order, each at most once;
 * - percentages carry `%`; a bare number where a percentage is expected is rejected with the
 *   likely meaning ("vol 0.25 — did you mean 25%?");
 * - limits: ./limits.ts.
 */

import { exampleOf } from './examples.js';
import { LIMITS } from './limits.js';
import { NUMBER, tokenize } from './lex.js';
import type { ParseResult, Request } from './types.js';
import { verbNamed, verbNames, verbOfWord } from '../verbs/registry.js';
import { Cursor, plainNumber, plainReject } from './grammar/cursor.js';
import { isLegStart } from './grammar/legs.js';
import { signedAfterBuySell } from './grammar/body.js';
import { Reject, after, fmtBig, internalFailure, insertAfter, insertBefore, rejectAt, replaceTok, toParseError } from './grammar/errors.js';
import { TERM_WORDS, TYPE_WORDS, closest } from './grammar/words.js';

export { Reject, formatError, toParseError, type Edit } from './grammar/errors.js';
export { mergeCheck, parseCheckPart, type CheckPart } from './grammar/body.js';

function parseRequest(src: string): Request {
  if (src.length > LIMITS.textLength) {
    throw new Reject(`the request is ${fmtBig(src.length)} characters long; the limit is ${fmtBig(LIMITS.textLength)}`, LIMITS.textLength, 1);
  }
  const toks = tokenize(src);
  if (toks.length === 0) {
    throw new Reject('the request is empty: start with a leg (e.g. +1 call 100 3m) or a verb (help lists them)', 0, 1, undefined, 'check');
  }
  const first = toks[0];
  const verb = verbOfWord(first.low);
  // any ';' outside a comparison is a misplaced compare
  if (!verb?.readsSemicolons) {
    const semi = toks.find((t) => t.text === ';');
    if (semi) {
      throw rejectAt(semi, `';' separates the parts of a comparison: start the request with compare`, { at: 0, length: 0, text: 'compare ' }, 'compare');
    }
  }
  // each verb's hook returns its own request, one member of the registry's union
  if (verb) return verb.grammar(src, toks, 1) as Request;
  const c = new Cursor(src, toks, 0, toks.length, 'check');
  if (isLegStart(c)) return verbNamed('check').grammar(src, toks, 0) as Request;
  const bs = signedAfterBuySell(first, toks[1], 'check');
  if (bs) throw bs;
  // not a verb, not a leg
  const plain = plainNumber(first);
  if (plain !== undefined) throw plainReject(c, first, plain);
  if (first.low in TYPE_WORDS) {
    throw rejectAt(first, `a leg starts with its quantity: +1 ${first.text} (long) or -1 ${first.text} (short)`, insertBefore(first, '+1'));
  }
  if (NUMBER.test(first.text)) {
    const next = toks[1];
    if (!next) throw new Reject(`a leg needs a type after the quantity: call, put or shares`, after(first), 1, insertAfter(first, 'call 100 3m iv 30% spot 100'));
    const guess = closest(next.low, ['call', 'put', 'shares']);
    throw rejectAt(
      next,
      `a leg is QTY TYPE STRIKE…: expected call, put or shares after ${first.text}, found '${next.text}'${guess ? ` — did you mean ${guess}?` : ''}`,
      guess ? replaceTok(next, guess) : undefined,
    );
  }
  if (first.low in TERM_WORDS) {
    throw rejectAt(first, `a check starts with its legs; market terms such as ${TERM_WORDS[first.low]} come after them`, insertBefore(first, '+1 call 100 3m iv 30%'));
  }
  const names = verbNames();
  const guess = closest(first.low, names);
  throw rejectAt(
    first,
    `unknown verb '${first.text}'${guess ? ` — did you mean ${guess}?` : ''}; a request starts with a leg (e.g. +1 call 100 3m) or one of ${names.join(', ')}`,
    guess ? replaceTok(first, guess) : undefined,
  );
}

// ---------------------------------------------------------------------------------------------
// Entry points

function parseAt(text: string, depth: number): ParseResult {
  try {
    if (typeof text !== 'string') {
      return { ok: false, error: { message: 'the request must be text', at: 0, length: 1, example: exampleOf('check') } };
    }
    const request = parseRequest(text);
    const checked = verbNamed(request.verb).schema.safeParse(request);
    if (!checked.success) {
      const issue = checked.error.issues[0];
      return {
        ok: false,
        error: {
          message: `Kolmo could not read this request (a value failed the final check: ${issue?.path.join('.') ?? ''} ${issue?.message ?? ''})`,
          at: 0,
          length: Math.max(1, text.length),
          example: exampleOf('check'),
        },
      };
    }
    return { ok: true, request };
  } catch (e) {
    if (e instanceof Reject) {
      return {
        ok: false,
        error: toParseError(text, e, depth === 0 ? (c) => parseAt(c, depth + 1).ok : () => false),
      };
    }
    return internalFailure('read', e, exampleOf('check'));
  }
}

/** Read a request. Never throws; every failure is `{ ok: false, error }`. */
export function parse(text: string): ParseResult {
  return parseAt(text, 0);
}

