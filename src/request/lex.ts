/**
 * Tokens of a request: whitespace-separated words, with `;`, `@` and `±` always standing alone
 * (`@3.10` is `@` `3.10`, `9%±6%` is `9%` `±` `6%`), a lone `%` joined to the number before it (`28 %` reads as `28%`),
 * and one trailing comma dropped (`spot 100, rate 4.5%`). Each token keeps its character index
 * and length in the original text, so errors can put a caret under it.
 *
 * The Unicode minus sign (U+2212) reads as `-` (same length, so indices are kept).
 *
 * Quantities may be written the way people say them (`legQuantities`): `buy 2 call …` is `+2 call`,
 * `sell 2 call …` is `-2 call`, `buy call …` is `+1 call`, and `2x call …` is `2 call`. The
 * rewritten token spans what it replaces, so a caret still lands under the words as typed.
 */

export interface Tok {
  /** the token as written (U+2212 replaced by '-') */
  text: string;
  /** lower case, for matching words */
  low: string;
  /** character index in the request */
  at: number;
  /** length in characters */
  len: number;
}

const SPACE = /\s/u;

export function tokenize(src: string): Tok[] {
  const toks: Tok[] = [];
  const n = src.length;
  let i = 0;
  const push = (at: number, end: number) => {
    const text = src.slice(at, end).replace(/\u2212/g, '-');
    toks.push({ text, low: text.toLowerCase(), at, len: end - at });
  };
  while (i < n) {
    const c = src[i];
    if (SPACE.test(c)) {
      i++;
      continue;
    }
    if (c === ';' || c === '@' || c === '±') {
      push(i, i + 1);
      i++;
      continue;
    }
    let j = i;
    while (j < n && !SPACE.test(src[j]) && src[j] !== ';' && src[j] !== '@' && src[j] !== '±') j++;
    let end = j;
    // one trailing comma is punctuation, not part of the token
    if (end - i > 1 && src[end - 1] === ',') end--;
    push(i, end);
    i = j;
  }
  // join a lone '%' to the number right before it
  const out: Tok[] = [];
  for (const t of toks) {
    const prev = out[out.length - 1];
    if (t.text === '%' && prev && NUMBER.test(prev.text) && src.slice(prev.at + prev.len, t.at).trim() === '') {
      const text = src.slice(prev.at, t.at + 1);
      out[out.length - 1] = {
        text: prev.text + '%',
        low: prev.low + '%',
        at: prev.at,
        len: text.length,
      };
    } else out.push(t);
  }
  return legQuantities(out);
}

const TYPE_START = /^(?:calls?|puts?|c|p|shares?|sh)$/i;
const TIMES = /^([+-]?\d+)x$/i;

/** `buy`/`sell` and `Nx` in front of a leg's type word, as the signed quantity they mean. */
function legQuantities(toks: Tok[]): Tok[] {
  const out: Tok[] = [];
  for (let i = 0; i < toks.length; i++) {
    const t = toks[i];
    const next = toks[i + 1];
    const after = toks[i + 2];
    const times = TIMES.exec(t.text);
    if (times && next && TYPE_START.test(next.text)) {
      out.push({ ...t, text: times[1], low: times[1] });
      continue;
    }
    if ((t.low === 'buy' || t.low === 'sell') && next) {
      const sign = t.low === 'buy' ? '+' : '-';
      if (TYPE_START.test(next.text)) {
        out.push({ ...t, text: `${sign}1`, low: `${sign}1` });
        continue;
      }
      const n = /^(\d+)x?$/i.exec(next.text);
      if (n && after && TYPE_START.test(after.text)) {
        const text = `${sign}${n[1]}`;
        out.push({ text, low: text, at: t.at, len: next.at + next.len - t.at });
        i++;
        continue;
      }
    }
    out.push(t);
  }
  return out;
}

/** A plain decimal number: optional sign, digits, optional fraction, optional exponent. */
export const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:e[+-]?\d+)?$/i;
/** A percentage: a number followed by `%`. */
export const PERCENT = /^([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:e[+-]?\d+)?)%$/i;
/** A span from asof: `30d`, `6w`, `3m`, `1y`. */
export const SPAN = /^(\d+)([dwmy])$/i;
/** A rate per year: `0.5/yr`, `2/y`, `1/year`. */
export const PER_YEAR = /^((?:\d+(?:\.\d*)?|\.\d+)(?:e[+-]?\d+)?)\/(?:yr|y|year)$/i;

export function isNumber(t: Tok | undefined): boolean {
  return !!t && NUMBER.test(t.text);
}

/** Value of a number token (may be ±Infinity for `1e309`; callers check finiteness). */
export function numberValue(t: Tok): number {
  return Number(t.text);
}

/**
 * Value of a percentage token as a decimal (28% → 0.28). Rounded to 15 significant digits so that
 * `4.5%` gives exactly the double nearest 0.045 (what a reader of the JSON expects).
 */
export function percentValue(t: Tok): number {
  const m = PERCENT.exec(t.text);
  if (!m) return NaN;
  const v = Number(m[1]) / 100;
  return Number.isFinite(v) ? Number(v.toPrecision(15)) : v;
}
