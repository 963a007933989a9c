/** Terms (`spot 100`, `jumps 0.5/yr -8% 12%`, …): one at a time, each at most once, with positions. */
import type { ExerciseStyle, Jumps } from '../../core/types.js';
import { SAMPLE } from '../examples.js';
import { LIMITS } from '../limits.js';
import { NUMBER, PERCENT, PER_YEAR, percentValue, type Tok } from '../lex.js';
import type { ExitLevelSpec, ExpirySpec, Terms } from '../types.js';
import { type Cursor, isKeyword } from './cursor.js';
import { fmtBig, fmtNum, insertBefore, replaceTok, type Edit } from './errors.js';
import { readPercent, readPrice, readSpec, readSymbol } from './values.js';
import { closest, type AnyTerm } from './words.js';

/** Terms read so far by one body, with positions; also the token range of each term. */
export interface Collected {
  terms: Terms;
  termsAt: Partial<Record<AnyTerm, number>>;
  price?: number;
  by?: ExpirySpec;
  /** token index range [from, to) of each term as written (used to rewrite requests) */
  termToks: Partial<Record<AnyTerm, [number, number]>>;
}

/** The kind of percentage each plain percentage term takes (what a bare number there probably meant). */
const PERCENT_KIND = { rate: 'rate', yield: 'rate', iv: 'vol', vol: 'vol' } as const;

export function readTermValue(c: Cursor, name: AnyTerm, t: Tok, into: Collected): void {
  const terms = into.terms;
  switch (name) {
    case 'spot':
      terms.spot = readPrice(c, t, 'spot', SAMPLE.spot);
      return;
    case 'rate':
    case 'yield':
    case 'iv':
    case 'vol':
      terms[name] = readPercent(c, t, name, PERCENT_KIND[name]);
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

export function readJumps(c: Cursor, term: Tok): Jumps {
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
export function readTerm(c: Cursor, name: AnyTerm, into: Collected): void {
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

