/** The grammar's words: leg types, term names, the terms of every check, and "did you mean". */
import type { LegKind } from '../../core/types.js';
import { TERM_NAMES } from '../schema.js';
import type { TermName } from '../types.js';

export const TYPE_WORDS: Record<string, LegKind> = {
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

export const TERM_WORDS: Record<string, TermName> = {
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
export type Extra = 'price' | 'by';
export type AnyTerm = TermName | Extra;

/** Every term a check takes, in the order help lists them. */
export const ALL_TERMS: readonly TermName[] = TERM_NAMES;

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

export const SPAN_WORDS = /^(\d+)\s*(days?|weeks?|wks?|months?|mos?|mths?|years?|yrs?)$/i;
export const SYMBOL = /^[A-Za-z][A-Za-z0-9.-]*$/;

