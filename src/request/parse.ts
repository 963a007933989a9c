/**
 * The request grammar (docs/design.md §2): text → typed request, or an error with the character index
 * of the first bad token, what was expected and one corrected example.
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

import type { ExerciseStyle, Jumps, LegKind } from '../core/types.js';
import { checkDate, looksLikeDate } from './dates.js';
import { EXAMPLES, SAMPLE, type ExampleKey } from './examples.js';
import { HELP_TOPICS } from './help.js';
import { LIMITS, SPAN_MAX } from './limits.js';
import { NUMBER, PERCENT, PER_YEAR, SPAN, percentValue, tokenize, type Tok } from './lex.js';
import { requestSchema } from './schema.js';
import { verbNamed, verbNames, verbOfWord } from '../verbs/registry.js';
import type {
  ExitLevelSpec,
  AgainRequest,
  CheckRequest,
  CompareRequest,
  ExpirySpec,
  HelpRequest,
  IvRequest,
  LegSpec,
  LogRequest,
  MarkRequest,
  ParseError,
  ParseResult,
  Request,
  TermName,
  Terms,
  TouchRequest,
} from './types.js';

// ---------------------------------------------------------------------------------------------
// Errors

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

function applyEdit(text: string, e: Edit): string {
  return (text.slice(0, e.at) + e.text + text.slice(e.at + e.length)).replace(/\s+/g, ' ').trim();
}

/**
 * Turn a rejection into a ParseError. The example is the user's own request with the fix applied
 * when that parses; otherwise the canonical example for the verb.
 */
export function toParseError(
  text: string,
  r: Reject,
  accept: (candidate: string) => boolean = (c) => parseAt(c, 1).ok,
): ParseError {
  let example: string = EXAMPLES[r.fallback];
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

function rejectAt(t: Tok, message: string, fix?: Edit, fallback?: ExampleKey): Reject {
  return new Reject(message, t.at, t.len, fix, fallback);
}

function replaceTok(t: Tok, text: string): Edit {
  return { at: t.at, length: t.len, text };
}

function insertBefore(t: Tok, text: string): Edit {
  return { at: t.at, length: 0, text: text + ' ' };
}

function insertAfter(t: Tok, text: string): Edit {
  return { at: t.at + t.len, length: 0, text: ' ' + text };
}

/** Position just after a token (where a missing value would go). */
function after(t: Tok): number {
  return t.at + t.len + 1;
}

function fmtNum(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  return String(Number(v.toPrecision(12)));
}

function fmtBig(v: number): string {
  return v.toLocaleString('en-US');
}

// ---------------------------------------------------------------------------------------------
// Words

const TYPE_WORDS: Record<string, LegKind> = {
  call: 'call',
  calls: 'call',
  c: 'call',
  put: 'put',
  puts: 'put',
  p: 'put',
  shares: 'shares',
  share: 'shares',
  sh: 'shares',
};

const TERM_WORDS: Record<string, TermName> = {
  spot: 'spot',
  rate: 'rate',
  yield: 'yield',
  iv: 'iv',
  exp: 'exp',
  expiry: 'exp',
  drift: 'drift',
  vol: 'vol',
  horizon: 'horizon',
  asof: 'asof',
  mult: 'mult',
  style: 'style',
  jumps: 'jumps',
  on: 'on',
  target: 'target',
  stop: 'stop',
};

/** Extra terms of particular verbs. */
type Extra = 'price' | 'by';
type AnyTerm = TermName | Extra;

const ALL_TERMS: readonly TermName[] = [
  'spot',
  'rate',
  'yield',
  'iv',
  'exp',
  'drift',
  'vol',
  'horizon',
  'asof',
  'mult',
  'style',
  'jumps',
  'on',
  'target',
  'stop',
];

const ALLOWED: Record<'check' | 'iv' | 'touch' | 'mark' | 'again', readonly AnyTerm[]> = {
  check: ALL_TERMS,
  iv: ['price', 'spot', 'rate', 'yield', 'asof', 'on', 'style', 'jumps'],
  touch: ['by', 'spot', 'rate', 'yield', 'drift', 'vol', 'iv', 'asof', 'on', 'jumps'],
  mark: ['spot', 'iv', 'yield', 'rate', 'vol', 'drift'],
  again: [...ALL_TERMS, 'price', 'by'],
};

/** Restricted Damerau–Levenshtein distance (for "did you mean"). */
function editDistance(a: string, b: string): number {
  const d: number[][] = [];
  for (let i = 0; i <= a.length; i++) {
    d.push(new Array<number>(b.length + 1).fill(0));
    d[i][0] = i;
  }
  for (let j = 0; j <= b.length; j++) d[0][j] = j;
  for (let i = 1; i <= a.length; i++) {
    for (let j = 1; j <= b.length; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      d[i][j] = Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) {
        d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
      }
    }
  }
  return d[a.length][b.length];
}

/** The closest of `words` to `w`, if close enough to be a likely typo. */
export function closest(w: string, words: readonly string[]): string | undefined {
  if (w.length < 2 || w.length > 20) return undefined;
  let best: string | undefined;
  let bestD = Infinity;
  for (const c of words) {
    if (c.length < 3) continue;
    const dist = editDistance(w, c);
    if (dist < bestD) {
      bestD = dist;
      best = c;
    }
  }
  const allowed = w.length <= 4 ? 1 : 2;
  return bestD <= allowed ? best : undefined;
}

const SPAN_WORDS = /^(\d+)\s*(days?|weeks?|wks?|months?|mos?|mths?|years?|yrs?)$/i;
const SYMBOL = /^[A-Za-z][A-Za-z0-9.-]*$/;

// ---------------------------------------------------------------------------------------------
// The token cursor

class Cursor {
  i: number;
  constructor(
    readonly src: string,
    readonly toks: Tok[],
    from: number,
    readonly to: number,
    readonly fallback: ExampleKey,
  ) {
    this.i = from;
  }
  peek(k = 0): Tok | undefined {
    const j = this.i + k;
    return j < this.to ? this.toks[j] : undefined;
  }
  next(): Tok {
    return this.toks[this.i++];
  }
  done(): boolean {
    return this.i >= this.to;
  }
  /** index just past the last token of this range (or of the text) */
  end(): number {
    const last = this.to > 0 ? this.toks[this.to - 1] : undefined;
    return last ? last.at + last.len : 0;
  }
  reject(t: Tok, message: string, fix?: Edit): Reject {
    return rejectAt(t, message, fix, this.fallback);
  }
  /** A value is missing after `t` (the term word). */
  missing(t: Tok, message: string, sample: string): Reject {
    return new Reject(message, after(t), 1, insertAfter(t, sample), this.fallback);
  }
}

function isSpecToken(t: Tok): boolean {
  return SPAN.test(t.text) || looksLikeDate(t.text);
}

/** Is the word a keyword of the grammar (so it cannot be a value)? */
function isKeyword(low: string): boolean {
  return low in TERM_WORDS || low in TYPE_WORDS || (verbNames() as readonly string[]).includes(low) || low === 'price' || low === 'by';
}

/**
 * A number written the way people write money: `1,000`, `$84.20`, `84.20$`. Returns the plain
 * form to suggest, or undefined.
 */
function plainNumber(t: Tok): string | undefined {
  const m = /^[$€£]?([+-]?\d{1,3}(?:,\d{3})+(?:\.\d+)?|[+-]?\d+(?:\.\d+)?)[$€£]?$/.exec(t.text);
  if (!m || NUMBER.test(t.text)) return undefined;
  return m[1].replace(/,/g, '');
}

function plainReject(c: Cursor, t: Tok, plain: string): Reject {
  return c.reject(t, `numbers are written plainly, without thousands separators or currency signs: ${plain}`, replaceTok(t, plain));
}

// ---------------------------------------------------------------------------------------------
// Value readers

/** A positive price (spot, strike, level, option price). */
function readPrice(c: Cursor, term: Tok, label: string, sample: string): number {
  const t = c.peek();
  if (!t || t.text === ';') throw c.missing(term, `${label} needs a number, e.g. ${sample}`, sample);
  if (PERCENT.test(t.text)) {
    throw c.reject(t, `${label} is a price, not a percentage: write ${t.text.slice(0, -1)}`, replaceTok(t, t.text.slice(0, -1)));
  }
  if (!NUMBER.test(t.text)) {
    const plain = plainNumber(t);
    if (plain !== undefined) throw plainReject(c, t, plain);
    if (isKeyword(t.low) || t.text === '@') {
      throw c.reject(t, `${label} needs a number before '${t.text}', e.g. ${sample}`, insertBefore(t, sample));
    }
    throw c.reject(t, `${label} needs a number, e.g. ${sample}; found '${t.text}'`, replaceTok(t, sample));
  }
  const v = Number(t.text);
  if (!Number.isFinite(v)) throw c.reject(t, `${t.text} is too large to be ${label}`, replaceTok(t, sample));
  if (v <= 0) throw c.reject(t, `${label} must be positive, not ${t.text}`, replaceTok(t, v < 0 ? t.text.slice(1) : sample));
  if (v > LIMITS.price) {
    throw c.reject(t, `${label} ${t.text} is above the limit of ${fmtBig(LIMITS.price)}`, replaceTok(t, sample));
  }
  c.next();
  return v;
}

type PctKind = 'vol' | 'rate' | 'drift' | 'driftSe' | 'jumpMean' | 'jumpSd';

const PCT_RANGE: Record<PctKind, [number, number]> = {
  vol: [LIMITS.volMin, LIMITS.volMax],
  rate: [LIMITS.rateMin, LIMITS.rateMax],
  drift: [LIMITS.driftMin, LIMITS.driftMax],
  driftSe: [0, LIMITS.driftSeMax],
  jumpMean: [LIMITS.jumpMeanMin, LIMITS.jumpMeanMax],
  jumpSd: [0, LIMITS.jumpSdMax],
};

const PCT_SAMPLE: Record<PctKind, string> = {
  vol: '25%',
  rate: '4.5%',
  drift: '9%',
  driftSe: '6%',
  jumpMean: '-8%',
  jumpSd: '12%',
};

/** The likely meaning of a bare number written where a percentage belongs. */
export function suggestPercent(kind: PctKind, v: number): string {
  const a = Math.abs(v);
  // rates and yields are rarely above 20%, so 0.045 means 4.5% but 0.5 means 0.5%
  const decimalBelow = kind === 'rate' ? 0.2 : 1;
  const pct = a > 0 && a < decimalBelow ? v * 100 : v;
  return `${fmtNum(pct)}%`;
}

function readPercent(c: Cursor, term: Tok, name: string, kind: PctKind): number {
  const t = c.peek();
  const sample = PCT_SAMPLE[kind];
  if (!t || t.text === ';') throw c.missing(term, `${name} needs a percentage, e.g. ${name} ${sample}`, sample);
  if (PERCENT.test(t.text)) {
    const v = percentValue(t);
    if (!Number.isFinite(v)) throw c.reject(t, `${t.text} is too large for ${name}`, replaceTok(t, sample));
    const [lo, hi] = PCT_RANGE[kind];
    if (kind === 'vol' && v <= 0) {
      throw c.reject(t, `${name} must be positive, not ${t.text}`, replaceTok(t, v < 0 ? t.text.slice(1) : sample));
    }
    if (kind === 'driftSe' && v < 0) {
      throw c.reject(t, `the drift's uncertainty is a standard error and must not be negative, not ${t.text}`, replaceTok(t, t.text.slice(1)));
    }
    if (kind === 'jumpSd' && v < 0) {
      throw c.reject(t, `the jump s.d. must not be negative, not ${t.text}`, replaceTok(t, t.text.slice(1)));
    }
    if (kind === 'vol' && v < lo) {
      const times100 = Number((v * 100).toPrecision(12));
      const guess = times100 >= lo && times100 <= hi ? ` — did you mean ${fmtNum(times100 * 100)}%?` : '';
      throw c.reject(
        t,
        `${name} ${t.text} is below the ${fmtNum(lo * 100)}% floor${guess}`,
        replaceTok(t, guess ? `${fmtNum(times100 * 100)}%` : sample),
      );
    }
    if (v < lo || v > hi) {
      throw c.reject(
        t,
        `${name} ${t.text} is outside ${fmtNum(lo * 100)}% … ${fmtNum(hi * 100)}%`,
        replaceTok(t, sample),
      );
    }
    c.next();
    return v;
  }
  if (NUMBER.test(t.text)) {
    const v = Number(t.text);
    if (!Number.isFinite(v)) throw c.reject(t, `${t.text} is too large for ${name}`, replaceTok(t, sample));
    const s = suggestPercent(kind, v);
    throw c.reject(t, `${name} ${t.text} — did you mean ${s}? Percentages carry %.`, replaceTok(t, s));
  }
  if (isKeyword(t.low) || t.text === '@') {
    throw c.reject(t, `${name} needs a percentage before '${t.text}', e.g. ${name} ${sample}`, insertBefore(t, sample));
  }
  throw c.reject(t, `${name} needs a percentage such as ${sample}, found '${t.text}'`, replaceTok(t, sample));
}

/** An expiry, horizon or by-date: ISO date or span. */
function readSpec(c: Cursor, term: Tok, name: string, sample: string, spans = true): ExpirySpec {
  const t = c.peek();
  const form = spans ? 'a date (yyyy-mm-dd) or a span (30d, 6w, 3m, 1y)' : 'a date (yyyy-mm-dd)';
  if (!t || t.text === ';') throw c.missing(term, `${name} needs ${form}, e.g. ${sample}`, sample);
  const spec = specOf(c, t, name, form, spans, sample);
  c.next();
  return spec;
}

function specOf(c: Cursor, t: Tok, name: string, form: string, spans: boolean, sample: string): ExpirySpec {
  const span = SPAN.exec(t.text);
  if (span) {
    if (!spans) throw c.reject(t, `${name} takes a date (yyyy-mm-dd), not a span`, replaceTok(t, sample));
    const n = Number(span[1]);
    const unit = span[2].toLowerCase() as 'd' | 'w' | 'm' | 'y';
    if (n < 1) throw c.reject(t, `a span of ${t.text} is no time at all: use 1${unit} or more`, replaceTok(t, `1${unit}`));
    if (n > SPAN_MAX[unit]) {
      throw c.reject(t, `${t.text} is more than ${LIMITS.spanYears} years`, replaceTok(t, sample));
    }
    return { span: n, unit };
  }
  if (looksLikeDate(t.text)) {
    const d = checkDate(t.text);
    if (d.ok) return { date: d.date };
    const hint = d.suggestion ? ` — did you mean ${d.suggestion}?` : '';
    throw c.reject(t, `${name} ${t.text}: ${d.reason}${hint}`, replaceTok(t, d.suggestion ?? sample));
  }
  const words = SPAN_WORDS.exec(t.text);
  if (words && spans) {
    const fixed = `${words[1]}${words[2][0].toLowerCase()}`;
    throw c.reject(t, `spans are written 30d, 6w, 3m or 1y — did you mean ${fixed}?`, replaceTok(t, fixed));
  }
  if (NUMBER.test(t.text)) {
    throw c.reject(t, `${name} needs ${form}; a bare number is not a date`, replaceTok(t, sample));
  }
  if (isKeyword(t.low) || t.text === '@') {
    throw c.reject(t, `${name} needs ${form} before '${t.text}'`, insertBefore(t, sample));
  }
  throw c.reject(t, `${name} needs ${form}, found '${t.text}'`, replaceTok(t, sample));
}

function readSymbol(c: Cursor, term: Tok | undefined, t: Tok | undefined, what: string): string {
  if (!t || t.text === ';') {
    if (term) throw c.missing(term, `${what} needs a symbol, e.g. FERNWK`, 'FERNWK');
    throw new Reject(`${what} needs a symbol, e.g. FERNWK`, 0, 1, undefined, c.fallback);
  }
  if (!SYMBOL.test(t.text) || t.text.length > LIMITS.symbolLength) {
    throw c.reject(
      t,
      `'${t.text}' is not a symbol: letters first, then letters, digits, '.' or '-', at most ${LIMITS.symbolLength} characters`,
      replaceTok(t, 'FERNWK'),
    );
  }
  if (isKeyword(t.low)) {
    throw c.reject(t, `${what} needs a symbol before '${t.text}', e.g. FERNWK`, insertBefore(t, 'FERNWK'));
  }
  c.next();
  return t.text.toUpperCase();
}

// ---------------------------------------------------------------------------------------------
// Terms

/** Terms read so far by one body, with positions; also the token range of each term. */
interface Collected {
  terms: Terms;
  termsAt: Partial<Record<AnyTerm, number>>;
  price?: number;
  by?: ExpirySpec;
  /** token index range [from, to) of each term as written (used to rewrite requests) */
  termToks: Partial<Record<AnyTerm, [number, number]>>;
}

function readTermValue(c: Cursor, name: AnyTerm, t: Tok, into: Collected): void {
  const terms = into.terms;
  switch (name) {
    case 'spot':
      terms.spot = readPrice(c, t, 'spot', SAMPLE.spot);
      return;
    case 'rate':
      terms.rate = readPercent(c, t, 'rate', 'rate');
      return;
    case 'yield':
      terms.yield = readPercent(c, t, 'yield', 'rate');
      return;
    case 'iv':
      terms.iv = readPercent(c, t, 'iv', 'vol');
      return;
    case 'vol':
      terms.vol = readPercent(c, t, 'vol', 'vol');
      return;
    case 'drift': {
      terms.drift = readPercent(c, t, 'drift', 'drift');
      // `drift 9% ± 6%` (also `9%±6%`, `9% +/- 6%`): the drift's uncertainty, part of the drift term
      const pm = c.peek();
      if (pm && (pm.text === '±' || pm.low === '+/-')) {
        c.next();
        terms.driftSe = readPercent(c, pm, `the drift's uncertainty after ${pm.text}`, 'driftSe');
      }
      return;
    }
    case 'exp':
      terms.exp = readSpec(c, t, 'exp', SAMPLE.exp);
      return;
    case 'horizon':
      terms.horizon = readSpec(c, t, 'horizon', SAMPLE.horizon);
      return;
    case 'by':
      into.by = readSpec(c, t, 'by', SAMPLE.by);
      return;
    case 'asof': {
      const v = c.peek();
      if (v && v.low === 'today') {
        c.next();
        terms.asof = 'today';
        return;
      }
      const spec = readSpec(c, t, 'asof', SAMPLE.asof, false);
      if ('date' in spec) terms.asof = spec.date;
      return;
    }
    case 'mult': {
      const v = c.peek();
      if (!v || v.text === ';') throw c.missing(t, 'mult needs a whole number, e.g. mult 100', '100');
      const n = NUMBER.test(v.text) ? Number(v.text) : NaN;
      if (!Number.isFinite(n) || !Number.isInteger(n) || n < LIMITS.multMin || n > LIMITS.multMax) {
        throw c.reject(
          v,
          `mult needs a whole number from ${LIMITS.multMin} to ${fmtBig(LIMITS.multMax)} (shares per contract), found '${v.text}'`,
          isKeyword(v.low) ? insertBefore(v, '100') : replaceTok(v, '100'),
        );
      }
      c.next();
      terms.mult = n;
      return;
    }
    case 'style': {
      const v = c.peek();
      if (!v || v.text === ';') throw c.missing(t, 'style needs american or european', 'american');
      if (v.low !== 'american' && v.low !== 'european') {
        const guess = closest(v.low, ['american', 'european']);
        throw c.reject(
          v,
          `style needs american or european, found '${v.text}'${guess ? ` — did you mean ${guess}?` : ''}`,
          isKeyword(v.low) ? insertBefore(v, 'american') : replaceTok(v, guess ?? 'american'),
        );
      }
      c.next();
      terms.style = v.low as ExerciseStyle;
      return;
    }
    case 'jumps': {
      terms.jumps = readJumps(c, t);
      return;
    }
    case 'on':
      terms.on = readSymbol(c, t, c.peek(), 'on');
      return;
    case 'price':
      into.price = readPrice(c, t, 'price', SAMPLE.price);
      return;
    case 'target':
    case 'stop':
      terms[name] = readExitLevel(c, t, name);
      return;
  }
}

/**
 * An exit level: money P&L of the whole position (`target +400`, `stop -300`; unsigned, a target
 * is a profit and a stop a loss) or a percentage of the position's |cost| (`target 50%`,
 * `stop 100%`). Whether it makes sense for the position (above or below the P&L now, within the
 * maximum loss) is checked once the position is valued.
 */
function readExitLevel(c: Cursor, term: Tok, name: 'target' | 'stop'): ExitLevelSpec {
  const t = c.peek();
  const sample = name === 'target' ? SAMPLE.target : SAMPLE.stop;
  const form = `${name} needs a P&L in money (${name} ${sample}) or a percentage of the position's cost (${name} ${name === 'target' ? '50%' : '100%'})`;
  if (!t || t.text === ';') throw c.missing(term, form, sample);
  const pct = PERCENT.test(t.text);
  if (!pct && !NUMBER.test(t.text)) {
    if (isKeyword(t.low) || t.text === '@') throw c.reject(t, `${form}, before '${t.text}'`, insertBefore(t, sample));
    throw c.reject(t, `${form}; found '${t.text}'`, replaceTok(t, sample));
  }
  const v = pct ? percentValue(t) : Number(t.text);
  const signed = /^[+-]/.test(t.text);
  if (!Number.isFinite(v)) throw c.reject(t, `${t.text} is too large for ${name}`, replaceTok(t, sample));
  if (v === 0) throw c.reject(t, `a ${name} of ${t.text} is the P&L of a position entered at fair value: give a level away from zero`, replaceTok(t, sample));
  if (pct ? Math.abs(v) > LIMITS.exitPctMax : Math.abs(v) > LIMITS.exitMoneyMax) {
    throw c.reject(
      t,
      `${name} ${t.text} is beyond the limit of ${pct ? `${fmtNum(LIMITS.exitPctMax * 100)}% of the cost` : fmtBig(LIMITS.exitMoneyMax)}`,
      replaceTok(t, pct ? (name === 'target' ? '50%' : '100%') : sample),
    );
  }
  c.next();
  return { value: v, pct, signed, at: t.at, len: t.len };
}

function readJumps(c: Cursor, term: Tok): Jumps {
  const r = c.peek();
  const form = 'jumps RATE/yr MEAN% SD%, e.g. jumps 0.5/yr -8% 12%';
  if (!r || r.text === ';') throw c.missing(term, `jumps needs three values: ${form}`, SAMPLE.jumps);
  const m = PER_YEAR.exec(r.text);
  let intensity: number;
  if (m) {
    intensity = Number(m[1]);
    if (!Number.isFinite(intensity) || intensity <= 0 || intensity > LIMITS.jumpIntensityMax) {
      throw c.reject(
        r,
        `the jump intensity must be above 0 and at most ${LIMITS.jumpIntensityMax} per year, found ${r.text}`,
        replaceTok(r, '0.5/yr'),
      );
    }
  } else if (NUMBER.test(r.text)) {
    throw c.reject(r, `the jump intensity is a number per year: write ${r.text}/yr`, replaceTok(r, `${r.text}/yr`));
  } else {
    throw c.reject(r, `${form}; found '${r.text}'`, insertBefore(r, SAMPLE.jumps));
  }
  c.next();
  const mean = readPercent(c, r, 'the jump mean', 'jumpMean');
  const sdAfter = c.toks[c.i - 1];
  const sd = readPercent(c, sdAfter, 'the jump s.d.', 'jumpSd');
  return { intensity, mean, sd };
}

/** Read one term (its word is at the cursor), rejecting duplicates. */
function readTerm(c: Cursor, name: AnyTerm, into: Collected): void {
  const t = c.next();
  const from = c.i - 1;
  const first = into.termsAt[name];
  if (first !== undefined) {
    // find the value's extent for the fix, then reject at the repeated word
    let fix: Edit | undefined;
    try {
      const scratch: Collected = { terms: {}, termsAt: {}, termToks: {} };
      readTermValue(c, name, t, scratch);
      const last = c.toks[c.i - 1];
      fix = { at: t.at, length: last.at + last.len - t.at, text: '' };
    } catch {
      fix = undefined;
    }
    throw c.reject(t, `${name} is given twice (first at character ${first + 1}); keep one`, fix);
  }
  readTermValue(c, name, t, into);
  into.termsAt[name] = t.at;
  into.termToks[name] = [from, c.i];
}

// ---------------------------------------------------------------------------------------------
// Legs

function isLegStart(c: Cursor): boolean {
  const a = c.peek();
  const b = c.peek(1);
  return !!a && !!b && NUMBER.test(a.text) && b.low in TYPE_WORDS;
}

function readLeg(c: Cursor, index: number): LegSpec {
  const qTok = c.next();
  const tTok = c.next();
  const kind = TYPE_WORDS[tTok.low];
  const qty = Number(qTok.text);
  const unit = kind === 'shares' ? 'shares' : 'contracts';
  const limit = kind === 'shares' ? LIMITS.qtyShares : LIMITS.qtyContracts;
  if (!Number.isFinite(qty) || Math.abs(qty) > limit) {
    throw c.reject(qTok, `${qTok.text} ${unit} is above the limit of ${fmtBig(limit)} ${unit} per leg`, replaceTok(qTok, '+1'));
  }
  if (qty === 0) {
    throw c.reject(qTok, `a quantity of 0 has no effect: give a size such as +1 (long) or -1 (short)`, replaceTok(qTok, '+1'));
  }
  if (!Number.isInteger(qty)) {
    throw c.reject(qTok, `the quantity must be a whole number of ${unit}, not ${qTok.text}`, replaceTok(qTok, String(Math.round(qty) || 1)));
  }
  const leg: LegSpec = { qty, kind, at: qTok.at, termsAt: {} };
  const legName = `leg ${index + 1} (${qTok.text} ${tTok.text})`;
  for (;;) {
    const t = c.peek();
    if (!t || t.text === ';' || isLegStart(c)) break;
    if (t.text === '@') {
      if (leg.entry !== undefined) {
        throw c.reject(t, `${legName} already has an entry price (@${fmtNum(leg.entry)}); keep one`);
      }
      c.next();
      const v = c.peek();
      if (!v || v.text === ';') throw c.missing(t, `@ needs the entry price per share, e.g. @3.10`, '3.10');
      if (!NUMBER.test(v.text)) {
        const plain = plainNumber(v);
        if (plain !== undefined) throw plainReject(c, v, plain);
        throw c.reject(
          v,
          PERCENT.test(v.text) ? `the entry price is money per share, not a percentage` : `@ needs the entry price per share, e.g. @3.10; found '${v.text}'`,
          isKeyword(v.low) ? insertBefore(v, '3.10') : replaceTok(v, PERCENT.test(v.text) ? v.text.slice(0, -1) : '3.10'),
        );
      }
      const e = Number(v.text);
      if (!Number.isFinite(e) || e > LIMITS.price) {
        throw c.reject(v, `the entry price ${v.text} is above the limit of ${fmtBig(LIMITS.price)}`, replaceTok(v, '3.10'));
      }
      if (e < 0) {
        throw c.reject(
          v,
          `the entry price is what one share of the leg cost, never negative: the sign of the quantity says long or short`,
          replaceTok(v, v.text.slice(1)),
        );
      }
      c.next();
      leg.entry = e;
      leg.termsAt.entry = t.at;
      continue;
    }
    if (t.low === 'iv' && kind !== 'shares') {
      if (leg.iv !== undefined) {
        throw c.reject(
          t,
          `${legName} already has iv ${fmtNum(leg.iv * 100)}%; to set an iv for all legs, write it after a market term (e.g. spot 100 iv 30%)`,
        );
      }
      c.next();
      leg.iv = readPercent(c, t, 'iv', 'vol');
      leg.termsAt.iv = t.at;
      continue;
    }
    if (isSpecToken(t) || SPAN_WORDS.test(t.text)) {
      if (kind === 'shares') throw c.reject(t, `a shares leg has no expiry; for the date of the outcome write horizon ${t.text}`, insertBefore(t, 'horizon'));
      if (leg.expiry !== undefined) throw c.reject(t, `${legName} already has an expiry; keep one`);
      leg.expiry = specOf(c, t, 'the expiry', 'a date (yyyy-mm-dd) or a span (30d, 6w, 3m, 1y)', true, SAMPLE.exp);
      leg.termsAt.expiry = t.at;
      c.next();
      continue;
    }
    if (NUMBER.test(t.text)) {
      if (kind === 'shares') {
        throw c.reject(t, `a shares leg has no strike; its entry price goes after @ (e.g. 100 shares @${t.text})`, replaceTok(t, `@${t.text}`));
      }
      if (leg.strike !== undefined) {
        throw c.reject(
          t,
          `unexpected number ${t.text}: ${legName} already has strike ${fmtNum(leg.strike)} (a new leg is QTY TYPE STRIKE…; market terms need their name, e.g. spot ${t.text})`,
        );
      }
      leg.strike = readPrice(c, tTok, 'the strike', SAMPLE.strike);
      leg.termsAt.strike = t.at;
      continue;
    }
    if (PERCENT.test(t.text)) {
      throw c.reject(t, `a percentage needs its name in front: iv ${t.text} (or rate, yield, drift, vol)`, insertBefore(t, 'iv'));
    }
    const plain = plainNumber(t);
    if (plain !== undefined) throw plainReject(c, t, plain);
    break;
  }
  if (kind !== 'shares' && leg.strike === undefined) {
    throw c.reject(tTok, `the ${kind} of leg ${index + 1} needs a strike right after '${tTok.text}', e.g. ${qTok.text} ${tTok.text} 100`, insertAfter(tTok, SAMPLE.strike));
  }
  return leg;
}

// ---------------------------------------------------------------------------------------------
// Bodies

interface Body extends Collected {
  legs: LegSpec[];
  /** token index range [from, to) of each leg (used to rewrite requests) */
  legToks: [number, number][];
}

type BodyVerb = 'check' | 'iv' | 'touch' | 'mark' | 'again';

/** Something that is neither a leg nor an allowed term: say what it is and what was expected. */
function stray(c: Cursor, t: Tok, verb: BodyVerb, allowed: readonly AnyTerm[], legs: LegSpec[]): Reject {
  const list = allowed.join(', ');
  const legsOk = verb === 'check' || verb === 'again';
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
  if ((verbNames() as readonly string[]).includes(low)) {
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

function readBody(c: Cursor, verb: BodyVerb, legsAllowed: boolean): Body {
  const allowed = ALLOWED[verb];
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
    throw stray(c, t, verb, allowed, body.legs);
  }
  return body;
}

function checkOf(body: Body, end: number): CheckRequest {
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

// ---------------------------------------------------------------------------------------------
// Verbs

function parseCheck(src: string, toks: Tok[], from: number, to: number): CheckPart {
  const c = new Cursor(src, toks, from, to, 'check');
  const body = readBody(c, 'check', true);
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
      termsAt[k] = next.termsAt[k];
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
        if (toks.length === 1) throw new Reject(msg, after(head), 1, insertAfter(head, EXAMPLES.compare.slice(8)), 'compare');
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
    const body = readBody(c, 'check', true);
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

export function parseIv(src: string, toks: Tok[]): IvRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'iv');
  const head = toks[0];
  const kTok = c.peek();
  if (!kTok) throw c.missing(head, 'iv needs an option: iv call 105 2027-03-19 price 3.10 spot 100', 'call 105 2027-03-19 price 3.10 spot 100');
  const kind = TYPE_WORDS[kTok.low];
  if (kind !== 'call' && kind !== 'put') {
    const msg =
      kind === 'shares'
        ? 'implied vol is for a call or a put, not shares'
        : `iv at the start asks for an implied vol: iv call|put STRIKE EXPIRY price P …, found '${kTok.text}' (a check starts with a leg)`;
    throw c.reject(kTok, msg);
  }
  c.next();
  let strike: number | undefined;
  let expiry: ExpirySpec | undefined;
  const termsAt: IvRequest['termsAt'] = {};
  for (let k = 0; k < 2; k++) {
    const t = c.peek();
    if (!t) break;
    if (strike === undefined && NUMBER.test(t.text)) {
      strike = readPrice(c, kTok, 'the strike', SAMPLE.strike);
      termsAt.strike = t.at;
    } else if (expiry === undefined && (isSpecToken(t) || SPAN_WORDS.test(t.text))) {
      expiry = specOf(c, t, 'the expiry', 'a date (yyyy-mm-dd) or a span (30d, 6w, 3m, 1y)', true, SAMPLE.exp);
      termsAt.expiry = t.at;
      c.next();
    } else break;
  }
  const where = c.peek();
  if (strike === undefined) {
    const msg = `iv ${kTok.text} needs a strike, e.g. iv ${kTok.text} 105 2027-03-19 price 3.10`;
    throw where ? c.reject(where, msg, insertBefore(where, '105')) : c.missing(c.toks[c.i - 1], msg, '105');
  }
  if (expiry === undefined) {
    const msg = `iv ${kTok.text} ${fmtNum(strike)} needs an expiry (yyyy-mm-dd or 30d, 6w, 3m, 1y), e.g. 2027-03-19`;
    throw where ? c.reject(where, msg, insertBefore(where, '2027-03-19')) : c.missing(c.toks[c.i - 1], msg, '2027-03-19');
  }
  const body = readBody(c, 'iv', false);
  if (body.price === undefined) {
    const last = toks[toks.length - 1];
    throw new Reject('iv needs the option price: price 3.10', after(last), 1, insertAfter(last, 'price 3.10'), 'iv');
  }
  return {
    verb: 'iv',
    kind,
    strike,
    expiry,
    price: body.price,
    terms: body.terms,
    termsAt: { ...termsAt, ...(body.termsAt as IvRequest['termsAt']) },
    end: c.end(),
  };
}

export function parseTouch(src: string, toks: Tok[]): TouchRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'touch');
  const head = toks[0];
  const lTok = c.peek();
  if (!lTok) throw c.missing(head, 'touch needs a level: touch 120 by 2027-03-19 spot 100', '120 by 2027-03-19 spot 100');
  const level = readPrice(c, head, 'the touch level', SAMPLE.level);
  const body = readBody(c, 'touch', false);
  if (body.by === undefined) {
    const last = toks[toks.length - 1];
    throw new Reject('touch needs a date: by 2027-03-19 (or a span such as by 3m)', after(last), 1, insertAfter(last, 'by 2027-03-19'), 'touch');
  }
  return {
    verb: 'touch',
    level,
    by: body.by,
    terms: body.terms,
    termsAt: { level: lTok.at, ...(body.termsAt as TouchRequest['termsAt']) },
    end: c.end(),
  };
}

export function parseMark(src: string, toks: Tok[]): MarkRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'mark');
  if (c.done()) return { verb: 'mark', terms: {} };
  const sTok = c.peek()!;
  if (sTok.low in TERM_WORDS || NUMBER.test(sTok.text) || PERCENT.test(sTok.text)) {
    throw c.reject(sTok, `mark needs the symbol first: mark FERNWK spot 84.20 iv 31%`, insertBefore(sTok, 'FERNWK'));
  }
  const symbol = readSymbol(c, toks[0], sTok, 'mark');
  const body = readBody(c, 'mark', false);
  const { spot, iv, yield: q, rate, vol, drift, driftSe } = body.terms;
  const terms: MarkRequest['terms'] = {};
  if (vol !== undefined) terms.vol = vol;
  if (drift !== undefined) terms.drift = drift;
  if (driftSe !== undefined) terms.driftSe = driftSe;
  if (spot !== undefined) terms.spot = spot;
  if (iv !== undefined) terms.iv = iv;
  if (q !== undefined) terms.yield = q;
  if (rate !== undefined) terms.rate = rate;
  return { verb: 'mark', symbol, terms };
}

function readWholeNumber(c: Cursor, t: Tok, what: string, min: number, max: number, sample: string): number {
  const n = NUMBER.test(t.text) ? Number(t.text) : NaN;
  if (!Number.isFinite(n) || !Number.isInteger(n) || n < min || n > max) {
    throw c.reject(t, `${what} needs a whole number from ${min} to ${fmtBig(max)}, found '${t.text}'`, replaceTok(t, sample));
  }
  c.next();
  return n;
}

export function parseLog(src: string, toks: Tok[]): LogRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'log');
  if (c.done()) return { verb: 'log', count: LIMITS.logDefault };
  const count = readWholeNumber(c, c.peek()!, 'log', 1, LIMITS.logMax, '20');
  const extra = c.peek();
  if (extra) throw c.reject(extra, `log takes only a count, e.g. log 20`, { at: extra.at, length: c.end() - extra.at, text: '' });
  return { verb: 'log', count };
}

export function parseAgain(src: string, toks: Tok[]): AgainRequest {
  const semi = toks.find((t) => t.text === ';');
  if (semi) throw rejectAt(semi, `again takes overrides for one check; ';' belongs to compare`, undefined, 'again');
  const c = new Cursor(src, toks, 1, toks.length, 'again');
  const nTok = c.peek();
  if (!nTok) throw c.missing(toks[0], 'again needs the number of a check in the log, e.g. again 17', '17');
  const number = readWholeNumber(c, nTok, 'again', 1, LIMITS.againMax, '17');
  const restTok = c.peek();
  if (!restTok) return { verb: 'again', number, rest: '', restAt: src.length };
  // validate the overrides now, so a typo is caught before the log is read
  readBody(c, 'again', true);
  return { verb: 'again', number, rest: src.slice(restTok.at, c.end()), restAt: restTok.at };
}

export function parseHelp(src: string, toks: Tok[]): HelpRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'help');
  const t = c.peek();
  if (!t) return { verb: 'help' };
  const topics = HELP_TOPICS as readonly string[];
  if (!topics.includes(t.low)) {
    const guess = closest(t.low, topics);
    throw c.reject(
      t,
      `no help on '${t.text}'${guess ? ` — did you mean ${guess}?` : ''}; topics: ${topics.join(', ')}`,
      replaceTok(t, guess ?? 'check'),
    );
  }
  c.next();
  const extra = c.peek();
  if (extra) throw c.reject(extra, `help takes one topic, e.g. help check`, { at: extra.at, length: c.end() - extra.at, text: '' });
  return { verb: 'help', topic: t.low };
}

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
  if (verb) return verb.grammar(src, toks, 1);
  const c = new Cursor(src, toks, 0, toks.length, 'check');
  if (isLegStart(c)) return verbNamed('check').grammar(src, toks, 0);
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
      return { ok: false, error: { message: 'the request must be text', at: 0, length: 1, example: EXAMPLES.check } };
    }
    const request = parseRequest(text);
    const checked = requestSchema.safeParse(request);
    if (!checked.success) {
      const issue = checked.error.issues[0];
      return {
        ok: false,
        error: {
          message: `Kolmo could not read this request (a value failed the final check: ${issue?.path.join('.') ?? ''} ${issue?.message ?? ''})`,
          at: 0,
          length: Math.max(1, text.length),
          example: EXAMPLES.check,
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
    return {
      ok: false,
      error: {
        message: `Kolmo could not read this request (internal error: ${e instanceof Error ? e.message : String(e)})`,
        at: 0,
        length: 1,
        example: EXAMPLES.check,
      },
    };
  }
}

/** Read a request. Never throws; every failure is `{ ok: false, error }`. */
export function parse(text: string): ParseResult {
  return parseAt(text, 0);
}

/**
 * Read a check's text (possibly only overrides: terms and/or legs, as after `again N`) with full
 * detail: the typed check and the token ranges of its legs and terms. Legs are not required.
 * Used to rewrite a logged request with overrides (./again.ts). Never throws.
 */
export function parseCheckPart(
  text: string,
  verb: 'check' | 'iv' | 'touch' = 'check',
  depth = 0,
): { ok: true; part: CheckPart; price?: number; by?: ExpirySpec } | { ok: false; error: ParseError } {
  try {
    const toks = tokenize(text);
    const c = new Cursor(text, toks, 0, toks.length, verb);
    const body = readBody(c, verb, verb === 'check');
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
    return { ok: false, error: { message: 'Kolmo could not read this request', at: 0, length: 1, example: EXAMPLES[verb] } };
  }
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
