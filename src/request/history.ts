/**
 * The grammar of `history SYMBOL [CLOSE …] [yield PCT] [save]` (docs/design.md §2, "later issues"):
 * closes written inline as prices (`84.10 84.95 …`, consecutive trading days) or as dated pairs
 * (`2026-01-05:84.10 …`), oldest first; `yield` is added to the drift estimate; `save` stores the
 * estimates into the channel's mark. Without closes the closes come from a shared file (or
 * `--file` on the command line), else from the channel's stored history.
 *
 * Pure; errors carry the bad token's position, its length and a corrected example.
 */
import { CLOSES_MAX, readCloseToken } from './closes.js';
import { LIMITS } from './limits.js';
import { PERCENT, percentValue, type Tok } from './lex.js';

export interface HistoryClose {
  date?: string;
  close: number;
  /** character index and length of the close's token */
  at: number;
  len: number;
}

/** A history request (its shape and type: historySchema in ./schema.ts). */
export type { HistoryRequest } from './types.js';
import type { HistoryRequest } from './types.js';

export interface HistoryGrammarError {
  message: string;
  at: number;
  length: number;
  example: string;
}

const SYMBOL = /^[A-Za-z][A-Za-z0-9.-]*$/;
export const HISTORY_EXAMPLE = 'history FERNWK 2026-01-05:84.10 2026-01-06:84.95 2026-01-07:85.40 … save';

/** Reads a history request from the tokens after the verb word (`from`). */
export function readHistory(src: string, toks: Tok[], from: number): { ok: true; request: HistoryRequest } | { ok: false; error: HistoryGrammarError } {
  const fail = (t: Tok | undefined, message: string, example = HISTORY_EXAMPLE) => ({
    ok: false as const,
    error: { message, at: t ? t.at : src.length, length: t ? Math.max(1, t.len) : 1, example },
  });
  const symTok = toks[from];
  if (!symTok) return fail(undefined, 'history needs a symbol, e.g. history FERNWK 84.10 84.95 …', 'history FERNWK');
  if (!SYMBOL.test(symTok.text) || symTok.text.length > LIMITS.symbolLength) {
    return fail(symTok, `'${symTok.text}' is not a symbol: write the symbol first, e.g. history FERNWK 84.10 84.95 …`, 'history FERNWK 84.10 84.95 85.40 …');
  }
  const symbol = symTok.text.toUpperCase();
  const closes: HistoryClose[] = [];
  let save = false;
  let yieldRate: number | undefined;
  let yieldAt: number | undefined;
  for (let i = from + 1; i < toks.length; i++) {
    const t = toks[i];
    if (t.low === 'save') {
      if (save) return fail(t, 'save is written twice; keep one', `history ${symbol} save`);
      save = true;
      continue;
    }
    if (t.low === 'yield') {
      if (yieldRate !== undefined) return fail(t, 'yield is given twice; keep one', `history ${symbol} yield 1.2%`);
      const v = toks[i + 1];
      if (!v) return fail(undefined, 'yield needs a percentage, e.g. yield 1.2%', `history ${symbol} yield 1.2%`);
      if (!PERCENT.test(v.text)) {
        const n = Number(v.text);
        const hint = Number.isFinite(n) ? ` — did you mean ${n < 0.2 && n > 0 ? Number((n * 100).toPrecision(10)) : n}%?` : '';
        return fail(v, `yield needs a percentage such as 1.2%${hint} Percentages carry %.`, `history ${symbol} yield 1.2%`);
      }
      const y = percentValue(v);
      if (!(y >= LIMITS.rateMin && y <= LIMITS.rateMax)) return fail(v, `yield ${v.text} is outside −10% … 100%`, `history ${symbol} yield 1.2%`);
      yieldRate = y;
      yieldAt = t.at;
      i++;
      continue;
    }
    if (t.text === ';') return fail(t, "history reads one symbol's closes; ';' belongs to compare", `history ${symbol} 84.10 84.95 …`);
    const c = readCloseToken(t.text);
    if (!c.ok) {
      const known = /^[a-z]/i.test(t.text) && !/:/.test(t.text);
      return fail(
        t,
        known ? `unknown word '${t.text}' in a history; expected closes, yield PCT or save` : c.message,
        `history ${symbol} ${closes.length ? '84.10 ' : ''}${c.example} …`,
      );
    }
    if (closes.length >= CLOSES_MAX) return fail(t, `more than ${CLOSES_MAX} closes: share them as a file instead`, `history ${symbol}`);
    closes.push({ ...c.close, at: t.at, len: t.len });
  }
  return {
    ok: true,
    request: { verb: 'history', symbol, symbolAt: symTok.at, closes, ...(yieldRate !== undefined ? { yield: yieldRate, yieldAt } : {}), save },
  };
}
