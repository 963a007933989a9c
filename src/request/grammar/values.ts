/** Readers of one value each: a price, a percentage, a date or span, a symbol, a whole number. */
import { checkDate, looksLikeDate } from '../dates.js';
import { LIMITS, SPAN_MAX } from '../limits.js';
import { NUMBER, PERCENT, SPAN, percentValue, type Tok } from '../lex.js';
import type { ExpirySpec } from '../types.js';
import { type Cursor, isKeyword, plainNumber, plainReject } from './cursor.js';
import { Reject, fmtBig, fmtNum, insertBefore, replaceTok } from './errors.js';
import { SPAN_WORDS, SYMBOL } from './words.js';

/** A positive price (spot, strike, level, option price). */
export function readPrice(c: Cursor, term: Tok, label: string, sample: string): number {
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

export type PctKind = 'vol' | 'rate' | 'drift' | 'driftSe' | 'jumpMean' | 'jumpSd';

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
function suggestPercent(kind: PctKind, v: number): string {
  const a = Math.abs(v);
  // rates and yields are rarely above 20%, so 0.045 means 4.5% but 0.5 means 0.5%
  const decimalBelow = kind === 'rate' ? 0.2 : 1;
  const pct = a > 0 && a < decimalBelow ? v * 100 : v;
  return `${fmtNum(pct)}%`;
}

export function readPercent(c: Cursor, term: Tok, name: string, kind: PctKind): number {
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
export function readSpec(c: Cursor, term: Tok, name: string, sample: string, spans = true): ExpirySpec {
  const t = c.peek();
  const form = spans ? 'a date (yyyy-mm-dd) or a span (30d, 6w, 3m, 1y)' : 'a date (yyyy-mm-dd)';
  if (!t || t.text === ';') throw c.missing(term, `${name} needs ${form}, e.g. ${sample}`, sample);
  const spec = specOf(c, t, name, form, spans, sample);
  c.next();
  return spec;
}

/** A horizon in minutes or hours (`30min`, `2h`): taken as such, and warned about in the answer. */
const MINUTES = /^(\d+)(min|mins|minutes?|h|hrs?|hours?)$/i;

export function specOf(c: Cursor, t: Tok, name: string, form: string, spans: boolean, sample: string): ExpirySpec {
  const mins = name === 'horizon' ? MINUTES.exec(t.text) : null;
  if (mins) {
    const n = Number(mins[1]) * (/^h/i.test(mins[2]) ? 60 : 1);
    if (n < 1 || n > 7 * 24 * 60) throw c.reject(t, `a horizon of ${t.text} is outside 1 minute … 7 days; write days instead (e.g. 30d)`, replaceTok(t, '30d'));
    return { minutes: n };
  }
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

export function readSymbol(c: Cursor, term: Tok | undefined, t: Tok | undefined, what: string): string {
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

export function readWholeNumber(c: Cursor, t: Tok, what: string, min: number, max: number, sample: string): number {
  const n = NUMBER.test(t.text) ? Number(t.text) : NaN;
  if (!Number.isFinite(n) || !Number.isInteger(n) || n < min || n > max) {
    throw c.reject(t, `${what} needs a whole number from ${min} to ${fmtBig(max)}, found '${t.text}'`, replaceTok(t, sample));
  }
  c.next();
  return n;
}

