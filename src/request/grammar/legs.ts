/** Legs: `QTY TYPE [STRIKE] [EXPIRY] [@ENTRY] [iv PCT]`, the leg's own terms in any order. */
import { SAMPLE } from '../examples.js';
import { LIMITS } from '../limits.js';
import { NUMBER, PERCENT, type Tok } from '../lex.js';
import type { LegSpec } from '../types.js';
import { type Cursor, isKeyword, isSpecToken, plainNumber, plainReject } from './cursor.js';
import { fmtBig, fmtNum, insertAfter, insertBefore, replaceTok } from './errors.js';
import { readPercent, readPrice, specOf } from './values.js';
import { SPAN_WORDS, TYPE_WORDS } from './words.js';

export function isLegStart(c: Cursor): boolean {
  const a = c.peek();
  const b = c.peek(1);
  return !!a && !!b && NUMBER.test(a.text) && b.low in TYPE_WORDS;
}

/** `@ENTRY`: the entry price per share of the leg (the `@` is at the cursor). */
function readEntry(c: Cursor, leg: LegSpec, legName: string, t: Tok): void {
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
}

export function readLeg(c: Cursor, index: number): LegSpec {
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
      readEntry(c, leg, legName, t);
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

