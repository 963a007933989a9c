/**
 * What both backends share: the size limits, the checks on every input before it is stored (so
 * SQLite and PostgreSQL refuse exactly the same things with the same words), and the conversion
 * of stored rows back to records.
 */
import { StoreError } from './errors.js';
import type { CheckSummary, DeliveryState, LogEntry, LogEntryInput, Mark, Posted, StoredClose, UserDefaults } from './store.js';
import type { Admission, ClaimedRequest, Interaction, Progress, QueuedRequest, RateDecision, RateOptions } from './async.js';

/**
 * Size limits. Identifiers are refused when too long (cutting a channel id could merge two
 * channels); free text is cut, ending with "…"; the parsed request is refused when too large,
 * because a cut JSON could not be re-run.
 */
export const LIMITS = {
  /** channel, user and symbol identifiers, in characters (refused above) */
  idChars: 128,
  symbolChars: 32,
  verbChars: 32,
  /** ISO time strings, in characters (refused above) */
  atChars: 64,
  /** the request as typed, in UTF-8 bytes (cut above) */
  textBytes: 4096,
  /** the position label in the summary, in characters (cut above) */
  positionChars: 256,
  /** JSON of the parsed request, in UTF-8 bytes (refused above) */
  normalizedBytes: 256 * 1024,
  /** JSON of the summary, in UTF-8 bytes (refused above) */
  summaryBytes: 16 * 1024,
  /** thread timestamp and permalink, in characters (refused above) */
  threadTsChars: 64,
  permalinkChars: 2048,
  /** most entries `recent` returns */
  recentMax: 1000,
  /** most closes kept for one symbol in one channel (20 years of trading days with room) */
  closesMax: 6000,
} as const;


export interface CheckRow {
  channel: string;
  number: number;
  user: string;
  at: string;
  verb: string;
  text: string;
  normalized: string;
  summary: string;
  thread_ts: string | null;
  permalink: string | null;
  delivered: DeliveryState;
  varied_from?: number | null;
  deleted_at?: string | null;
  posted?: string | null;
}

export interface MarkRow {
  channel: string;
  symbol: string;
  spot: number | null;
  iv: number | null;
  yield: number | null;
  rate: number | null;
  vol: number | null;
  drift: number | null;
  drift_se: number | null;
  user: string;
  at: string;
}

export interface CloseRow {
  seq: number;
  day: string | null;
  close: number;
}

/** A check ready to be stored (everything but its number), or a StoreError 'invalid'. */
export function checkRowOf(e: LogEntryInput): Omit<CheckRow, 'number' | 'thread_ts' | 'permalink' | 'delivered' | 'varied_from' | 'deleted_at' | 'posted'> & { summaryRecord: CheckSummary } {
  const channel = id(e?.channel, 'channel');
  const user = id(e.user, 'user');
  const at = isoTime(e.at);
  const verb = shortText(e.verb, 'verb', LIMITS.verbChars);
  if (typeof e.text !== 'string') throw invalid('the request text is missing');
  // PostgreSQL's text cannot hold U+0000; both backends store the same replacement character
  const text = cutBytes(e.text.replaceAll('\u0000', '\uFFFD'), LIMITS.textBytes);
  const normalized = json(e.normalized);
  const summaryRecord = cleanSummary(e.summary);
  const summary = JSON.stringify(summaryRecord);
  if (bytes(summary) > LIMITS.summaryBytes) {
    throw invalid(`the summary is too large to store (${kb(bytes(summary))} > ${kb(LIMITS.summaryBytes)})`);
  }
  return { channel, user, at, verb, text, normalized, summary, summaryRecord };
}

/** A mark ready to be stored, or a StoreError 'invalid'. */
export function markRowOf(m: Mark): MarkRow {
  return {
    channel: id(m?.channel, 'channel'),
    symbol: symbol(m.symbol),
    spot: finiteOrNull(m.spot, 'spot'),
    iv: finiteOrNull(m.iv, 'iv'),
    yield: finiteOrNull(m.yield, 'yield'),
    rate: finiteOrNull(m.rate, 'rate'),
    vol: finiteOrNull(m.vol, 'vol'),
    drift: finiteOrNull(m.drift, 'drift'),
    drift_se: finiteOrNull(m.driftSe, 'drift uncertainty'),
    user: id(m.user, 'user'),
    at: isoTime(m.at),
  };
}

/** The thread arguments of setThread, checked; null when the number cannot exist. */
export function threadArgsOf(channel: string, number: number, threadTs: string, permalink?: string | null): { channel: string; ts: string; permalink?: string | null } | null {
  const ch = id(channel, 'channel');
  if (!isEntryNumber(number)) return null;
  const ts = shortText(threadTs, 'thread timestamp', LIMITS.threadTsChars);
  if (permalink === undefined) return { channel: ch, ts };
  if (permalink !== null) shortText(permalink, 'permalink', LIMITS.permalinkChars);
  return { channel: ch, ts, permalink };
}

/** The delivery arguments of setDelivery, checked; null when the number cannot exist. */
export function deliveryArgsOf(channel: string, number: number, state: 'delivered' | 'undelivered'): { channel: string; state: 'delivered' | 'undelivered' } | null {
  const ch = id(channel, 'channel');
  if (state !== 'delivered' && state !== 'undelivered') throw invalid(`delivery state must be delivered or undelivered, not ${String(state)}`);
  if (!isEntryNumber(number)) return null;
  return { channel: ch, state };
}

/** The row limit of `recent`, or 0 when nothing can be returned. */
export function recentLimitOf(channel: unknown, n: unknown): number {
  if (typeof channel !== 'string' || typeof n !== 'number' || !(n >= 1)) return 0;
  return Math.min(Math.floor(n), LIMITS.recentMax);
}


export function invalid(reason: string): StoreError {
  return new StoreError('invalid', 'write', reason);
}

export function id(v: unknown, what: string): string {
  if (typeof v !== 'string' || v.trim() === '') throw invalid(`the ${what} is missing`);
  if (v.includes('\u0000')) throw invalid(`the ${what} contains a NUL character`);
  if (v.length > LIMITS.idChars) throw invalid(`the ${what} is longer than ${LIMITS.idChars} characters`);
  return v;
}

export function shortText(v: unknown, what: string, max: number): string {
  if (typeof v !== 'string' || v === '') throw invalid(`the ${what} is missing`);
  if (v.includes('\u0000')) throw invalid(`the ${what} contains a NUL character`);
  if (v.length > max) throw invalid(`the ${what} is longer than ${max} characters`);
  return v;
}

export function symbol(v: unknown): string {
  if (typeof v !== 'string' || v.trim() === '') throw invalid('the symbol is missing');
  const s = v.trim().toUpperCase();
  if (s.includes('\u0000')) throw invalid('the symbol contains a NUL character');
  if (s.length > LIMITS.symbolChars) throw invalid(`the symbol is longer than ${LIMITS.symbolChars} characters`);
  return s;
}

export function isoTime(v: unknown): string {
  if (typeof v !== 'string' || v.length > LIMITS.atChars || !Number.isFinite(Date.parse(v))) {
    throw invalid(`the time must be an ISO date-time, not ${JSON.stringify(v)?.slice(0, 80)}`);
  }
  return v;
}

export function finiteOrNull(v: unknown, what: string): number | null {
  if (v === undefined || v === null) return null;
  if (typeof v !== 'number' || !Number.isFinite(v)) throw invalid(`the ${what} must be a finite number, not ${String(v)}`);
  return v;
}

/** A number an entry can have: a whole number from 1 to the INTEGER column's largest (2³¹ − 1, PostgreSQL's bound). */
export function isEntryNumber(n: unknown): n is number {
  return typeof n === 'number' && Number.isSafeInteger(n) && n >= 1 && n <= 2147483647;
}

/** The checked channel of an entry to change, or null when one of the numbers (the entry's, another it names) cannot exist. */
export function entryChannelOf(channel: string, ...numbers: number[]): string | null {
  const ch = id(channel, 'channel');
  return numbers.every(isEntryNumber) ? ch : null;
}

export function json(v: unknown): string {
  if (typeof v !== 'string') throw invalid('the parsed request is missing');
  if (bytes(v) > LIMITS.normalizedBytes) {
    throw invalid(`the request is too large to store (${kb(bytes(v))} > ${kb(LIMITS.normalizedBytes)})`);
  }
  try {
    JSON.parse(v);
  } catch {
    throw invalid('the parsed request is not valid JSON');
  }
  return v;
}

/** Drops non-finite numbers (JSON would turn them into null) and cuts the position label. */
export function cleanSummary(s: unknown): CheckSummary {
  if (!s || typeof s !== 'object' || Array.isArray(s)) throw invalid('the summary is missing');
  const src = s as Record<string, unknown>;
  if (typeof src.position !== 'string') throw invalid('the summary has no position');
  let text: string;
  try {
    text = JSON.stringify(src, (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? undefined : v));
  } catch (e) {
    throw invalid(`the summary cannot be stored: ${(e as Error).message}`);
  }
  const out = JSON.parse(text) as CheckSummary;
  out.position = cutChars(out.position, LIMITS.positionChars);
  return out;
}

export function bytes(s: string): number {
  return Buffer.byteLength(s, 'utf8');
}

export function kb(n: number): string {
  return `${Math.ceil(n / 1024)} KB`;
}

/** Cuts to at most `max` UTF-8 bytes on a code point boundary, ending with "…" when cut. */
export function cutBytes(s: string, max: number): string {
  if (bytes(s) <= max) return s;
  const budget = max - 3; // "…" is 3 bytes
  let used = 0;
  let out = '';
  for (const cp of s) {
    const b = bytes(cp);
    if (used + b > budget) break;
    out += cp;
    used += b;
  }
  return out + '…';
}

function cutChars(s: string, max: number): string {
  const cps = Array.from(s);
  return cps.length <= max ? s : cps.slice(0, max - 1).join('') + '…';
}

export function toEntry(r: CheckRow): LogEntry {
  let summary: CheckSummary;
  try {
    summary = JSON.parse(r.summary) as CheckSummary;
    if (!summary || typeof summary !== 'object' || typeof summary.position !== 'string') throw new Error('shape');
  } catch {
    summary = { position: '' };
  }
  return {
    channel: r.channel,
    number: r.number,
    user: r.user,
    at: r.at,
    verb: r.verb,
    text: r.text,
    normalized: r.normalized,
    summary,
    threadTs: r.thread_ts,
    permalink: r.permalink,
    delivered: r.delivered,
    variedFrom: r.varied_from ?? null,
    deletedAt: r.deleted_at ?? null,
    posted: postedOf(r.posted ?? null),
  };
}

function postedOf(s: string | null): Posted | null {
  if (s === null) return null;
  try {
    const o = JSON.parse(s) as Posted;
    if (typeof o.channel === 'string' && Array.isArray(o.ts) && Array.isArray(o.files)) {
      return { channel: o.channel, ts: o.ts.filter((x) => typeof x === 'string'), files: o.files.filter((x) => typeof x === 'string') };
    }
  } catch {
    /* unreadable: nothing recorded */
  }
  return null;
}

/** the most messages and files one answer's record keeps */
export const POSTED_MAX = 200;

/** A record of what an answer posted, checked, as JSON. */
export function postedJsonOf(p: Posted): string {
  const ch = id(p?.channel, 'channel');
  const list = (v: unknown, what: string) => {
    if (!Array.isArray(v) || v.length > POSTED_MAX) throw invalid(`the posted ${what} must be a list of at most ${POSTED_MAX}`);
    return v.map((x) => shortText(x, what, LIMITS.threadTsChars));
  };
  return JSON.stringify({ channel: ch, ts: list(p.ts, 'message ts'), files: list(p.files, 'file id') });
}

/** the tombstone's stored summary: no figures */
export const TOMBSTONE_SUMMARY = JSON.stringify({ position: 'deleted by the asker', deleted: true });

export interface DefaultsRow {
  user: string;
  rate: number | null;
  yield: number | null;
  mult: number | null;
  horizon: string | null;
  at: string;
}

/** Personal defaults ready to be stored, or a StoreError 'invalid'. */
export function defaultsRowOf(user: string, d: UserDefaults, at: string): DefaultsRow {
  const mult = d?.mult;
  if (mult !== undefined && !(Number.isSafeInteger(mult) && mult >= 1)) throw invalid(`the multiplier must be a whole number from 1, not ${String(mult)}`);
  const horizon = d.horizon;
  if (horizon !== undefined && !/^\d{1,5}[dwmy]$/.test(horizon)) throw invalid(`the default horizon must be a span such as 30d, not ${String(horizon).slice(0, 20)}`);
  return {
    user: id(user, 'user'),
    rate: finiteOrNull(d.rate, 'rate'),
    yield: finiteOrNull(d.yield, 'yield'),
    mult: mult ?? null,
    horizon: horizon ?? null,
    at: isoTime(at),
  };
}

export function toDefaults(r: DefaultsRow | undefined): UserDefaults {
  const d: UserDefaults = {};
  if (!r) return d;
  if (r.rate !== null) d.rate = r.rate;
  if (r.yield !== null) d.yield = r.yield;
  if (r.mult !== null) d.mult = Number(r.mult);
  if (r.horizon !== null) d.horizon = r.horizon;
  return d;
}

export function emptyDefaults(d: UserDefaults): boolean {
  return d.rate === undefined && d.yield === undefined && d.mult === undefined && d.horizon === undefined;
}

export function toMark(r: MarkRow): Mark {
  const m: Mark = { channel: r.channel, symbol: r.symbol, user: r.user, at: r.at };
  if (r.spot !== null) m.spot = r.spot;
  if (r.iv !== null) m.iv = r.iv;
  if (r.yield !== null) m.yield = r.yield;
  if (r.rate !== null) m.rate = r.rate;
  if (r.vol !== null && r.vol !== undefined) m.vol = r.vol;
  if (r.drift !== null && r.drift !== undefined) m.drift = r.drift;
  if (r.drift_se !== null && r.drift_se !== undefined) m.driftSe = r.drift_se;
  return m;
}

/** A price history ready to be stored (rows in order), or a StoreError 'invalid'. */
export function closeRowsOf(channel: string, sym: string, closes: StoredClose[]): { channel: string; symbol: string; rows: CloseRow[] } {
  const ch = id(channel, 'channel');
  const s = symbol(sym);
  if (!Array.isArray(closes)) throw invalid('the closes must be a list');
  if (closes.length > LIMITS.closesMax) throw invalid(`at most ${LIMITS.closesMax} closes are kept for a symbol (got ${closes.length})`);
  const rows = closes.map((c, seq) => {
    if (!(typeof c?.close === 'number' && Number.isFinite(c.close) && c.close > 0)) throw invalid(`close ${seq + 1} is not a positive number`);
    if (c.date !== undefined && !(typeof c.date === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(c.date))) throw invalid(`close ${seq + 1} has no ISO date`);
    return { seq, day: c.date ?? null, close: c.close };
  });
  return { channel: ch, symbol: s, rows };
}

export function toClose(r: CloseRow): StoredClose {
  return r.day !== null ? { date: r.day, close: r.close } : { close: r.close };
}

// ---- the request queue and rate buckets ----------------------------------------------------

export interface RequestRow {
  seq: number | string;
  key: string;
  source: string;
  channel: string;
  user: string;
  thread_ts: string | null;
  response_url: string | null;
  text: string;
  now: string;
  received_ms: number | string;
  attempts: number;
  progress: string;
  files: string | null;
  interaction: string | null;
}

/** A request ready to be queued (identifiers checked, the text kept whole up to the request limit). */
export function requestRowOf(r: QueuedRequest) {
  const key = shortText(r?.key, 'delivery key', 256);
  if (r.source !== 'command' && r.source !== 'mention') throw invalid(`the source must be command or mention, not ${String(r.source)}`);
  if (typeof r.text !== 'string') throw invalid('the request text is missing');
  return {
    key,
    source: r.source,
    channel: id(r.channel, 'channel'),
    user: id(r.user, 'user'),
    thread_ts: r.threadTs === undefined ? null : shortText(r.threadTs, 'thread timestamp', LIMITS.threadTsChars),
    response_url: r.responseUrl === undefined ? null : shortText(r.responseUrl, 'response URL', LIMITS.permalinkChars),
    // a request longer than the log keeps is refused by the grammar anyway; keep what it needs to say so
    text: cutBytes(r.text.replaceAll('\u0000', '\uFFFD'), 64 * 1024),
    now: isoTime(r.now),
    files: filesJson(r.files),
    interaction: interactionJson(r.interaction),
  };
}

const INTERACTION_SOURCES: ReadonlySet<string> = new Set(['command', 'mention', 'action', 'form', 'dm']);

/** An interactive request's answering terms as JSON (checked like every other field), or null. */
function interactionJson(i: Interaction | undefined): string | null {
  if (i === undefined) return null;
  if (typeof i !== 'object' || i === null || !INTERACTION_SOURCES.has(i.source)) throw invalid('an interaction names its source: command, mention, action, form or dm');
  if (i.variedFrom !== undefined && !(Number.isInteger(i.variedFrom) && i.variedFrom >= 1)) throw invalid('variedFrom must be a check number (an integer ≥ 1)');
  const clean: Interaction = {
    source: i.source,
    ...(i.log !== undefined ? { log: id(i.log, 'log') } : {}),
    ...(i.flat ? { flat: true } : {}),
    ...(i.tellIn !== undefined ? { tellIn: id(i.tellIn, 'conversation for notices') } : {}),
    ...(i.variedFrom !== undefined ? { variedFrom: i.variedFrom } : {}),
    // the preface quotes the request: kept whole up to the request's own bound
    ...(i.preface ? { preface: cutBytes(i.preface.replaceAll('\u0000', '\uFFFD'), 66 * 1024) } : {}),
  };
  return JSON.stringify(clean);
}

function interactionOf(json: string | null): { interaction?: Interaction } {
  if (!json) return {};
  try {
    const i = JSON.parse(json) as Interaction;
    return i && typeof i === 'object' && INTERACTION_SOURCES.has(i.source) ? { interaction: i } : {};
  } catch {
    return {};
  }
}

/** The shared files' references as JSON (at most 5, each a name and an http(s) URL), or null. */
function filesJson(files: QueuedRequest['files']): string | null {
  if (files === undefined || files.length === 0) return null;
  if (!Array.isArray(files) || files.length > 5) throw invalid('at most 5 shared files are kept with a request');
  const clean = files.map((f) => ({
    name: shortText(f?.name, 'file name', 200),
    url: shortText(f.url, 'file URL', LIMITS.permalinkChars),
    ...(typeof f.size === 'number' && Number.isFinite(f.size) ? { size: f.size } : {}),
  }));
  return JSON.stringify(clean);
}

export function progressOf(json: string): Progress {
  try {
    const p = JSON.parse(json) as Progress;
    return p && typeof p === 'object' ? p : {};
  } catch {
    return {};
  }
}

export function toClaimed(r: RequestRow): ClaimedRequest {
  return {
    key: r.key,
    source: r.source === 'mention' ? 'mention' : 'command',
    channel: r.channel,
    user: r.user,
    ...(r.thread_ts ? { threadTs: r.thread_ts } : {}),
    ...(r.response_url ? { responseUrl: r.response_url } : {}),
    text: r.text,
    now: r.now,
    seq: Number(r.seq),
    attempts: r.attempts,
    receivedMs: Number(r.received_ms),
    progress: progressOf(r.progress),
    ...(r.files ? { files: JSON.parse(r.files) as NonNullable<QueuedRequest['files']> } : {}),
    ...interactionOf(r.interaction),
  };
}

export function checkRate(o: RateOptions): void {
  if (!(o.burst >= 1 && o.perMinute > 0 && o.noticeEverySeconds >= 0)) throw invalid('rate limit: burst ≥ 1, perMinute > 0, noticeEverySeconds ≥ 0');
}

/** The decision from a bucket's state after the take: `granted` 1 (taken), 0 (refused) or 2 (refused, and the asker is told), tokens left. */
export function rateDecision(granted: number | boolean, tokens: number, noticed: boolean, o: RateOptions): RateDecision {
  if (granted === true || granted === 1) return { ok: true };
  const perMs = o.perMinute / 60000;
  return { ok: false, retryInSeconds: Math.max(1, Math.ceil((1 - tokens) / perMs / 1000)), notify: noticed };
}

/** The admission of a fresh request once the asker's bucket and the open requests before it are known (RequestQueue.admit). */
export function admission(rate: RateDecision, open: number, queueLimit: number): Admission {
  if (!rate.ok) return { kind: 'rate', rate };
  if (open >= queueLimit) return { kind: 'busy', depth: open };
  return { kind: 'queued' };
}
