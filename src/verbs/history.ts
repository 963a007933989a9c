/**
 * `history SYMBOL …`: vol and drift with their standard errors from a price history
 * (src/core/history.ts). The closes come, in this order of preference, from the request itself,
 * from a CSV/TSV file the asker shared with the request (a workspace file, or `--file` on the
 * command line: the shell hands its bytes over), or from the channel's stored history. Closes
 * given are appended to the stored history (a re-sent dated stretch replaces the stored one);
 * `save` also stores the estimates into the channel's mark for the symbol, so that the next
 * `on SYMBOL` check uses them as its view.
 *
 * Pure apart from the store handed over in `HistoryEnv`; never throws on a request (bad input
 * becomes a `HistoryRefusal` with the caret's position).
 */
import { appendCloses, checkCloses, estimateHistory, HISTORY_LIMITS, type Close } from '../core/history.js';
import { fileText, readClosesText } from '../request/closes.js';
import { LIMITS } from '../request/limits.js';
import type { HistoryRequest } from '../request/history.js';
import { historyChartInput, type HistoryChartInput } from '../report/history-chart.js';
import { historyHeadline, historyJson, historyText, type HistoryReportInput } from '../report/history.js';
import { readHistory } from '../request/history.js';
import type { Tok } from '../request/lex.js';
import { Reject } from '../request/parse.js';
import type { LogStore, Mark } from '../store/store.js';
import { answer, refuse, refuseFact, type Outcome, type Verb, type VerbEnv } from './verb.js';
import { historySchema } from '../request/schema.js';

/** The canonical example: a dated FERNWK fortnight (invented closes). */
const HISTORY_EXAMPLE =
  'history FERNWK 2026-01-05:84.10 2026-01-06:84.95 2026-01-07:85.40 2026-01-08:84.70 2026-01-09:85.90 2026-01-12:86.25 ' +
  '2026-01-13:85.80 2026-01-14:86.90 2026-01-15:87.35 2026-01-16:86.60 2026-01-19:87.80 2026-01-20:88.15';

/** A file shared with the request: its name and its bytes (base64, so it crosses process boundaries). */
export interface SharedFile {
  name: string;
  base64: string;
}

/** What `history` needs of the channel's memory. */
export interface HistoryStore {
  getCloses(channel: string, symbol: string): Promise<Close[]>;
  putCloses(channel: string, symbol: string, closes: Close[]): Promise<void>;
  /** the mark after storing the estimates (merged into the existing mark, or a new one at the last close) */
  saveEstimates(channel: string, symbol: string, est: { vol: number; drift: number; driftSe: number; spot: number }, user: string, at: string): Promise<{ spot?: number }>;
}

export interface HistoryEnv {
  channel: string;
  user: string;
  nowIso: string;
  files?: SharedFile[];
  store?: HistoryStore | null;
}

export interface HistoryRefusal {
  refused: true;
  message: string;
  at: number;
  length: number;
  example: string;
  /** a refusal about facts (nothing stored), not about reading the request */
  fact?: boolean;
}

export interface HistoryAnswer {
  refused: false;
  headline: string;
  text: string;
  json: Record<string, unknown>;
  chart: HistoryChartInput;
  summary: { position: string; vol: number; volSe: number; drift: number; driftSe: number; n: number };
  /** a note for the asker when the store could not be written */
  warnings: string[];
}

function refusal(message: string, at: number, length: number, example: string, fact = false): HistoryRefusal {
  return { refused: true, message, at, length, example, ...(fact ? { fact } : {}) };
}

/** The closes of the one shared file, or a refusal (caret on the verb's symbol). */
function closesFromFile(req: HistoryRequest, f: SharedFile): { closes: Close[]; lines: number[]; notes: string[] } | HistoryRefusal {
  const bytes = Buffer.from(f.base64, 'base64');
  const text = fileText(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength));
  const ex = `history ${req.symbol} (with a CSV of date,close lines such as 2026-01-05,84.10)`;
  if (!text.ok) return refusal(`${f.name}: ${text.message}`, req.symbolAt, req.symbol.length, ex);
  const r = readClosesText(f.name, text.text);
  if (!r.ok) return refusal(r.message, req.symbolAt, req.symbol.length, ex);
  return r.value;
}

export async function runHistory(text: string, req: HistoryRequest, env: HistoryEnv): Promise<HistoryAnswer | HistoryRefusal> {
  const sym = req.symbol;
  const symAt = req.symbolAt;
  const files = env.files ?? [];
  const store = env.store ?? null;
  const notes: string[] = [];
  const warnings: string[] = [];
  let given: Close[] = [];
  /** where each given close sits: a token of the request, or a line of the file */
  let place: (i: number) => { at: number; len: number; where: string };
  let source: string;
  if (req.closes.length > 0) {
    if (files.length > 0) {
      return refusal(`closes written in the request and a file shared with it: give them one way`, req.closes[0].at, req.closes[0].len, `history ${sym}`);
    }
    given = req.closes.map((c) => (c.date !== undefined ? { date: c.date, close: c.close } : { close: c.close }));
    place = (i) => ({ at: req.closes[i].at, len: req.closes[i].len, where: '' });
    source = 'closes in the request';
  } else if (files.length > 0) {
    if (files.length > 1) return refusal(`${files.length} files shared with the request: share one CSV/TSV of date, close`, symAt, sym.length, `history ${sym}`);
    const f = closesFromFile(req, files[0]);
    if ('refused' in f) return f;
    given = f.closes;
    notes.push(...f.notes);
    place = (i) => ({ at: symAt, len: sym.length, where: ` (line ${f.lines[i]} of ${files[0].name})` });
    source = files[0].name;
  } else {
    place = () => ({ at: symAt, len: sym.length, where: ' (stored history)' });
    source = "the channel's stored history";
  }

  // the stored history of this channel, and what it becomes
  let stored: Close[] = [];
  if (store) {
    try {
      stored = await store.getCloses(env.channel, sym);
    } catch (err) {
      if (given.length === 0) return refusal(`the stored history of ${sym} could not be read: ${why(err)}`, symAt, sym.length, HISTORY_EXAMPLE, true);
      warnings.push(`the stored history of ${sym} could not be read (${why(err)}): estimated from the closes given alone`);
    }
  }
  if (given.length === 0 && stored.length === 0) {
    return refusal(
      store
        ? `no closes given and none stored for ${sym} in this channel: write the closes (oldest first) or share a CSV/TSV file of date, close`
        : `no closes given (and this session keeps no stored history): write the closes, oldest first`,
      symAt,
      sym.length,
      HISTORY_EXAMPLE,
      true,
    );
  }
  // the closes given must be sound on their own, so the caret can point into the request
  if (given.length > 0) {
    const p = checkCloses(given);
    if (p && !(p.code === 'few' && stored.length > 0)) {
      const loc = place(p.code === 'few' ? Math.max(0, given.length - 1) : p.index);
      return refusal(`${p.message}${loc.where}`, loc.at, loc.len, HISTORY_EXAMPLE);
    }
  }
  let closes = given;
  if (given.length > 0 && stored.length > 0) {
    const joined = appendCloses(stored, given);
    if (!joined) {
      return refusal(
        `the stored history of ${sym} ${stored[0].date !== undefined ? 'has dates and these closes have none' : 'has no dates and these closes have them'}: write them the same way`,
        place(0).at,
        place(0).len,
        HISTORY_EXAMPLE,
      );
    }
    closes = joined;
    notes.push(`appended to the ${stored.length} stored closes of ${sym} in this channel`);
  } else if (given.length === 0) {
    closes = stored;
  }
  const problem = checkCloses(closes);
  if (problem) {
    // only the join can fail here (the given closes passed on their own): e.g. more than 20 years
    return refusal(`${problem.message} (with the stored history of ${sym})`, symAt, sym.length, `history ${sym} (fewer closes)`, true);
  }
  const est = estimateHistory(closes, req.yield ?? 0);
  if (!closes[0].date) notes.push(`closes without dates are taken as consecutive trading days, ${HISTORY_LIMITS.tradingDays} a year (common practice)`);
  else notes.push('time between closes in calendar days / 365, as everywhere in Kolmo; the 252-day column is the trading-day check');

  // keep the history, and save the estimates when asked
  let kept: number | undefined;
  let saved: HistoryReportInput['saved'];
  let notSaved: string | undefined;
  if (store && given.length > 0) {
    try {
      await store.putCloses(env.channel, sym, closes);
      kept = closes.length;
    } catch (err) {
      warnings.push(`the closes were not kept: ${why(err)}`);
    }
  } else if (store) kept = closes.length;
  if (req.save) {
    if (!store) {
      return refusal('save needs the channel\'s store, and this session has none', symAt, sym.length, `history ${sym}`, true);
    }
    // a mark must hold a view a check can use: estimates outside the request limits are not saved
    const off =
      !(est.vol >= LIMITS.volMin && est.vol <= LIMITS.volMax)
        ? `vol ${pct1(est.vol)} is outside ${pct1(LIMITS.volMin)} … ${pct1(LIMITS.volMax)}`
        : !(est.drift >= LIMITS.driftMin && est.drift <= LIMITS.driftMax)
          ? `drift ${pct1(est.drift)} is outside ${pct1(LIMITS.driftMin)} … ${pct1(LIMITS.driftMax)}`
          : !(est.driftSe <= LIMITS.driftSeMax)
            ? `the drift's standard error ${pct1(est.driftSe)} is above ${pct1(LIMITS.driftSeMax)}`
            : null;
    if (off) notSaved = `${off}; a longer history narrows it`;
    else {
      try {
        const spot = closes[closes.length - 1].close;
        const m = await store.saveEstimates(env.channel, sym, { vol: est.vol, drift: est.drift, driftSe: est.driftSe, spot }, env.user, env.nowIso);
        saved = { vol: est.vol, drift: est.drift, driftSe: est.driftSe, ...(m.spot !== undefined ? { spot: m.spot } : {}) };
      } catch (err) {
        notSaved = why(err);
      }
    }
  }
  const rep: HistoryReportInput = {
    symbol: sym,
    est,
    source,
    notes,
    ...(kept !== undefined ? { kept } : {}),
    ...(saved ? { saved } : {}),
    ...(notSaved ? { notSaved } : {}),
  };
  return {
    refused: false,
    headline: historyHeadline(rep),
    text: historyText(rep),
    json: historyJson(rep),
    chart: historyChartInput(sym, closes, est),
    summary: { position: `history ${sym} (${est.n} closes)`, vol: est.vol, volSe: est.volSe, drift: est.drift, driftSe: est.driftSe, n: est.n },
    warnings,
  };
}

function pct1(x: number): string {
  const v = Number((x * 100).toFixed(1));
  return `${v < 0 ? '−' : ''}${Math.abs(v).toLocaleString('en-US')}%`;
}

function why(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

// ---------------------------------------------------------------------------------------------
// The verb, as the registry sees it

/** What `history` needs of the channel's store: the closes, and the mark the estimates go into. */
function historyStore(store: LogStore): HistoryStore {
  return {
    getCloses: (c, s) => store.getCloses(c, s),
    putCloses: (c, s, closes) => store.putCloses(c, s, closes),
    async saveEstimates(channel, symbol, est, user, at) {
      // merged into the channel's mark (its market terms kept), or a new mark at the last close
      const prev = await store.getMark(channel, symbol);
      const m: Mark = { ...(prev ?? { channel, symbol, spot: est.spot }), channel, symbol, vol: est.vol, drift: est.drift, driftSe: est.driftSe, user, at };
      await store.putMark(m);
      return m.spot !== undefined ? { spot: m.spot } : {};
    },
  };
}

/** The grammar hook: the registry's dispatch hands over the tokens after the verb word. */
function grammar(src: string, toks: Tok[], from: number): HistoryRequest {
  const r = readHistory(src, toks, from);
  if (!r.ok) throw new Reject(r.error.message, r.error.at, r.error.length, undefined, 'history');
  return r.request;
}

async function runHistoryVerb(text: string, req: HistoryRequest, env: VerbEnv): Promise<Outcome> {
  const store = env.ctx.store ?? null;
  const r = await runHistory(text, req, {
    channel: env.ctx.channel,
    user: env.ctx.user,
    nowIso: env.nowIso,
    ...(env.ctx.files ? { files: env.ctx.files } : {}),
    store: store ? historyStore(store) : null,
  });
  if (r.refused) {
    const e = { message: r.message, at: r.at, length: r.length, example: r.example };
    throw r.fact ? refuseFact(text, e) : refuse(text, e);
  }
  // not logged: like a mark, a history keeps its own record (the closes, and the mark on save)
  return { answer: answer({ verb: 'history', headline: r.headline, text: r.text, json: r.json, chart: r.chart, warnings: r.warnings }) };
}

export const history: Verb<HistoryRequest> = {
  name: 'history',
  schema: historySchema,
  words: ['history'],
  overview: { usage: 'history SYM …', says: 'vol and drift ± standard errors from past closes (save: into the mark)', place: { after: 'mark' } },
  readsFiles: true,
  grammar,
  example: HISTORY_EXAMPLE,
  help: {
    title: 'history — vol and drift, with their standard errors, from past closes',
    lines: [
      'history SYMBOL [CLOSE …] [yield PCT] [save]',
      'CLOSE: a price (84.10: closes without dates are consecutive trading days, 252 a year) or',
      '       DATE:PRICE (2026-01-05:84.10), oldest first; at least 10 closes, at most 20 years.',
      'Or share a CSV/TSV file of date, close with the request (`kolmo "history SYM" --file F.csv`',
      'on the command line). The closes are kept for the channel: `history SYMBOL` alone re-reads',
      'them, and new closes append. vol = s.d. of log returns scaled to a year of calendar days/365',
      '(the 252-trading-day figure beside it as a check), ± vol/√(2·returns); drift = price drift +',
      'vol²/2 (+ yield) ± vol/√(years). save stores vol and drift ± s.e. into the mark SYMBOL.',
    ],
    examples: [
      HISTORY_EXAMPLE,
      'history QUILLOP 41.05 41.30 40.85 41.60 42.10 41.75 42.40 42.15 42.90 43.35 43.05 43.60 yield 2% save',
    ],
  },
  run: runHistoryVerb,
  // a few microseconds a close and the chart: small (bench: 0.1 ms for 20 years of closes)
};
