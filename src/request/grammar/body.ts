/**
 * Bodies: the legs and terms after a verb, read with the terms the verb takes (its `body` in the
 * registry); a check's body, and how a later part of a comparison inherits from the one before.
 */
import { exampleOf, type ExampleKey } from '../examples.js';
import { LIMITS } from '../limits.js';
import { NUMBER, PERCENT, tokenize, type Tok } from '../lex.js';
import type { CheckRequest, ExpirySpec, LegSpec, ParseError, TermName, Terms } from '../types.js';
import { verbNamed, verbNames, type VerbName } from '../../verbs/registry.js';
import { Cursor, isSpecToken, plainNumber, plainReject } from './cursor.js';
import { Reject, after, insertAfter, insertBefore, replaceTok, toParseError } from './errors.js';
import { isLegStart, readLeg } from './legs.js';
import { readTerm, readTermValue, type Collected } from './terms.js';
import { SPAN_WORDS, TERM_WORDS, TYPE_WORDS, closest, type AnyTerm } from './words.js';

export interface Body extends Collected {
  legs: LegSpec[];
  /** token index range [from, to) of each leg (used to rewrite requests) */
  legToks: [number, number][];
}

/** A verb whose request has a body of legs and terms (its `body` in the registry says which). */
export type BodyVerb = VerbName;

/** The terms a verb's body takes, and whether it takes legs (from the registry). */
function bodyOf(verb: BodyVerb): { terms: readonly AnyTerm[]; legs: boolean } {
  const b = verbNamed(verb).body;
  if (!b) throw new Error(`${verb} has no body`);
  return b;
}

/** Something that is neither a leg nor an allowed term: say what it is and what was expected. */
/** `buy -2 call`: the word gives the sign, so a signed quantity after it is refused. */
export function signedAfterBuySell(t: Tok, next: Tok | undefined, fallback: ExampleKey): Reject | undefined {
  if ((t.low !== 'buy' && t.low !== 'sell') || !next || !/^[+-]\d+x?$/i.test(next.text)) return undefined;
  const n = next.text.replace(/^[+-]/, '').replace(/x$/i, '');
  return new Reject(`${t.low} gives the sign: write ${t.low} ${n} (or ${t.low === 'buy' ? '+' : '-'}${n} without ${t.low})`, next.at, next.len, { at: next.at, length: next.len, text: n }, fallback);
}

function stray(c: Cursor, t: Tok, verb: BodyVerb, legs: LegSpec[]): Reject {
  const bs = signedAfterBuySell(t, c.peek(1), c.fallback);
  if (bs) return bs;
  const { terms: allowed, legs: legsOk } = bodyOf(verb);
  const list = allowed.join(', ');
  if (t.text === ';') {
    return c.reject(t, `';' separates the parts of a comparison: start the request with compare`, { at: 0, length: 0, text: 'compare ' });
  }
  const plain = plainNumber(t);
  if (plain !== undefined) return plainReject(c, t, plain);
  if (t.text === '@') {
    const v = c.peek(1);
    const fix = v && NUMBER.test(v.text) ? { at: t.at, length: v.at + v.len - t.at, text: '' } : undefined;
    const msg = legs.length
      ? `an entry price (@3.10) goes right after its leg, before market terms`
      : `@ gives a leg's entry price and goes right after the leg`;
    return c.reject(t, msg, fix);
  }
  if (PERCENT.test(t.text)) {
    return c.reject(t, `a percentage needs its name in front (one of ${list})`);
  }
  if (isSpecToken(t)) {
    const names = (['exp', 'horizon', 'asof', 'by'] as AnyTerm[]).filter((n) => allowed.includes(n));
    return c.reject(t, `a date needs its name in front: ${names.join(', ')}`, names.length ? insertBefore(t, names[0]) : undefined);
  }
  if (NUMBER.test(t.text)) {
    return c.reject(
      t,
      `expected ${legsOk ? 'a leg (QTY TYPE STRIKE…) or ' : ''}a term name (${list}), found the number ${t.text}`,
      allowed.includes('spot') ? insertBefore(t, 'spot') : undefined,
    );
  }
  const low = t.low;
  if (low in TERM_WORDS || low === 'price' || low === 'by') {
    const name = (TERM_WORDS[low] ?? low) as AnyTerm;
    // the fix drops the term and its value (found by reading it on a scratch cursor)
    let length = t.len;
    try {
      const scratch = new Cursor(c.src, c.toks, c.i + 1, c.to, c.fallback);
      readTermValue(scratch, name, t, { terms: {}, termsAt: {}, termToks: {} });
      const last = c.toks[scratch.i - 1];
      length = last.at + last.len - t.at;
    } catch {
      /* drop the word only */
    }
    return c.reject(t, `${name} does not apply to ${verb}; ${verb} takes ${list}`, { at: t.at, length, text: '' });
  }
  if (low in TYPE_WORDS) {
    if (!legsOk) return c.reject(t, `${verb} takes no legs; it takes ${list}`);
    return c.reject(t, `a leg starts with its quantity: +1 ${t.text} (long) or -1 ${t.text} (short)`, insertBefore(t, '+1'));
  }
  if ((verbNames() as string[]).includes(low)) {
    return c.reject(t, `'${t.text}' is a verb and goes at the start of a request`);
  }
  const words = SPAN_WORDS.exec(t.text);
  if (words) return c.reject(t, `spans are written 30d, 6w, 3m or 1y, after exp, horizon or a leg's strike`);
  const guess = closest(low, [...allowed, ...(legsOk ? ['call', 'put', 'shares'] : [])]);
  return c.reject(
    t,
    `unknown word '${t.text}'${guess ? ` — did you mean ${guess}?` : ''}; expected ${legsOk ? 'a leg or ' : ''}one of ${list}`,
    guess ? replaceTok(t, guess) : { at: t.at, length: t.len, text: '' },
  );
}

export function readBody(c: Cursor, verb: BodyVerb): Body {
  const { terms: allowed, legs: legsAllowed } = bodyOf(verb);
  const body: Body = { legs: [], legToks: [], terms: {}, termsAt: {}, termToks: {} };
  while (!c.done()) {
    const t = c.peek()!;
    if (legsAllowed && isLegStart(c)) {
      if (body.legs.length >= LIMITS.legs) {
        throw c.reject(t, `a check has at most ${LIMITS.legs} legs`);
      }
      const from = c.i;
      body.legs.push(readLeg(c, body.legs.length));
      body.legToks.push([from, c.i]);
      continue;
    }
    const name = (TERM_WORDS[t.low] ?? (t.low === 'price' || t.low === 'by' ? t.low : undefined)) as AnyTerm | undefined;
    if (name && allowed.includes(name)) {
      readTerm(c, name, body);
      continue;
    }
    throw stray(c, t, verb, body.legs);
  }
  return body;
}

export function checkOf(body: Body, end: number): CheckRequest {
  return {
    verb: 'check',
    legs: body.legs,
    terms: body.terms,
    termsAt: body.termsAt as CheckRequest['termsAt'],
    end,
  };
}

/** One part of a check (a whole check, a compare part, or again's overrides). */
export interface CheckPart {
  check: CheckRequest;
  /** token ranges of the legs and terms, for rewriting the text (see ./again.ts) */
  legToks: [number, number][];
  termToks: Partial<Record<AnyTerm, [number, number]>>;
  toks: Tok[];
}

export function parseCheck(src: string, toks: Tok[], from: number, to: number): CheckPart {
  const c = new Cursor(src, toks, from, to, 'check');
  const body = readBody(c, 'check');
  if (body.legs.length === 0) {
    const t = toks[from];
    const msg = 'a check needs at least one leg first, e.g. +1 call 100 3m iv 30%';
    if (t) throw c.reject(t, msg, insertBefore(t, '+1 call 100 3m iv 30%'));
    const prev = toks[from - 1];
    throw new Reject(msg, prev ? after(prev) : 0, 1, prev ? insertAfter(prev, '+1 call 100 3m iv 30% spot 100') : undefined, 'check');
  }
  return { check: checkOf(body, c.end()), legToks: body.legToks, termToks: body.termToks, toks };
}

/** The grammar hook of `check`: a check from `from` (after the word `check`, or 0 when it starts with a leg). */
export function parseCheckVerb(src: string, toks: Tok[], from: number): CheckRequest {
  return parseCheck(src, toks, from, toks.length).check;
}

/** Merge a later part into the check before it: terms override, legs (if any) replace. */
export function mergeCheck(prev: CheckRequest, next: CheckRequest): CheckRequest {
  const terms: Terms = { ...prev.terms };
  const termsAt = { ...prev.termsAt };
  for (const k of Object.keys(next.terms) as TermName[]) {
    if (next.terms[k] !== undefined) {
      (terms as Record<string, unknown>)[k] = next.terms[k];
      // the drift's uncertainty is part of the drift term and has no position of its own
      const at = (next.termsAt as Partial<Record<string, number>>)[k];
      if (at !== undefined) (termsAt as Partial<Record<string, number>>)[k] = at;
    }
  }
  // a drift written again replaces the drift term whole, its uncertainty included
  if (next.terms.drift !== undefined && next.terms.driftSe === undefined) delete terms.driftSe;
  return {
    verb: 'check',
    legs: next.legs.length ? next.legs : prev.legs,
    terms,
    termsAt,
    end: next.end ?? prev.end,
  };
}

/**
 * Read a check's text (possibly only overrides: terms and/or legs, as after `again N`) with full
 * detail: the typed check and the token ranges of its legs and terms. Legs are not required.
 * Used to rewrite a logged request with overrides (./again.ts). Never throws.
 */
export function parseCheckPart(
  text: string,
  verb: BodyVerb = 'check',
  depth = 0,
): { ok: true; part: CheckPart; price?: number; by?: ExpirySpec } | { ok: false; error: ParseError } {
  try {
    const toks = tokenize(text);
    const c = new Cursor(text, toks, 0, toks.length, verb);
    const body = readBody(c, verb);
    return {
      ok: true,
      part: { check: checkOf(body, c.end()), legToks: body.legToks, termToks: body.termToks, toks },
      price: body.price,
      by: body.by,
    };
  } catch (e) {
    if (e instanceof Reject) {
      return { ok: false, error: toParseError(text, e, (cand) => depth === 0 && parseCheckPart(cand, verb, 1).ok) };
    }
    return { ok: false, error: { message: 'Kolmo could not read this request', at: 0, length: 1, example: exampleOf(verb) } };
  }
}

