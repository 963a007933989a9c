/**
 * SQLite implementation of the Store (better-sqlite3, synchronous).
 *
 * Decisions:
 * - WAL journal: readers never block the writer and a commit is one append to the -wal file.
 * - synchronous=FULL by default. With WAL, NORMAL already survives kill -9 of the process: a commit
 *   has been written (write(2)) into the -wal file before appendCheck returns, and the operating
 *   system keeps it even if the process dies; only a power loss or kernel crash can lose the last
 *   commits. FULL adds an fsync of the -wal file per commit, so an acknowledged check also survives
 *   power loss. That matters here: the number of a check is posted in the channel ("#17"); if the
 *   commit rolled back, the next check would be given #17 again and `again 17` would re-run the
 *   wrong request. Checks arrive at human pace, so one fsync each costs nothing a user notices
 *   (see test/bench/store.bench.ts for the figure). NORMAL stays available as an option.
 * - Numbers are allocated inside a BEGIN IMMEDIATE transaction (the write lock is taken before
 *   reading the counter), from a channels(channel, next_number) table cross-checked against
 *   MAX(number)+1, with a UNIQUE (channel, number) index as the last guard. Two processes writing
 *   the same file therefore never hand out the same number and never leave a gap.
 * - busy_timeout 5 s: a writer waits that long for another process's lock, then gets 'busy'.
 * - Every statement filters by channel; there is no query that can reach another channel's rows.
 */
import Database from 'better-sqlite3';
import { existsSync, mkdirSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { setting as readSetting } from '../config.js';
import { StoreError, toStoreError, type StoreOp } from './errors.js';
import { migrate, schemaVersion, SCHEMA_VERSION } from './migrations.js';
import type { CheckSummary, DeliveryState, LogEntry, LogEntryInput, Mark, OpenOptions, Store } from './store.js';

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
} as const;

const DEFAULT_BUSY_TIMEOUT_MS = 5000;

/** `setting` (KOLMO_DB) if set, else ./data/kolmo.db under the working folder; the folder is created. */
export function defaultDbPath(setting: string | undefined = readSetting('KOLMO_DB')): string {
  const path = setting ? resolve(setting) : resolve('data', 'kolmo.db');
  try {
    mkdirSync(dirname(path), { recursive: true });
  } catch (e) {
    throw toStoreError(e, 'open', { path: dirname(path) });
  }
  return path;
}

/** Opens (creating and migrating if needed) the log at `path`; ':memory:' gives a private in-memory log. */
export function openStore(path: string, opts: OpenOptions = {}): Store {
  const readonly = opts.readonly === true;
  const busyTimeoutMs = opts.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS;
  if (!Number.isFinite(busyTimeoutMs) || busyTimeoutMs < 0) {
    throw new StoreError('invalid', 'open', `busy timeout must be a non-negative number of milliseconds, not ${busyTimeoutMs}`);
  }
  const ctx = { path, busyTimeoutMs };
  let db: Database.Database;
  if (path !== '' && path !== ':memory:' && !path.startsWith('file:') && !existsSync(dirname(resolve(path)))) {
    // better-sqlite3 checks this itself and throws a bare TypeError; say it plainly instead
    throw new StoreError('unavailable', 'open', `the log folder does not exist (${dirname(resolve(path))})`);
  }
  try {
    db = new Database(path, { readonly, fileMustExist: readonly, timeout: busyTimeoutMs });
  } catch (e) {
    throw toStoreError(e, 'open', ctx);
  }
  try {
    if (readonly) {
      const v = schemaVersion(db);
      if (v === 0) throw new StoreError('unavailable', 'open', `the file is not a Kolmo log (${path})`);
      if (v < SCHEMA_VERSION) {
        throw new StoreError(
          'readonly',
          'open',
          `the log file is read-only and has schema version ${v}, older than this version of Kolmo reads (${SCHEMA_VERSION}); open it once with write access to upgrade it`,
        );
      }
      if (v > SCHEMA_VERSION) {
        throw new StoreError('unavailable', 'open', `the log was written by a newer version of Kolmo (schema ${v}, this version reads up to ${SCHEMA_VERSION})`);
      }
    } else {
      db.pragma('journal_mode = WAL');
      db.pragma(`synchronous = ${opts.synchronous === 'normal' ? 'NORMAL' : 'FULL'}`);
      db.pragma('journal_size_limit = 67108864');
      if (opts.maxBytes !== undefined) {
        if (!Number.isFinite(opts.maxBytes) || opts.maxBytes <= 0) {
          throw new StoreError('invalid', 'open', `maxBytes must be a positive number of bytes, not ${opts.maxBytes}`);
        }
        const pageSize = db.pragma('page_size', { simple: true }) as number;
        db.pragma(`max_page_count = ${Math.max(1, Math.floor(opts.maxBytes / pageSize))}`);
      }
      migrate(db);
    }
    return new SqliteStore(db, path, busyTimeoutMs);
  } catch (e) {
    try {
      db.close();
    } catch {
      /* already failing; the first error is the one to report */
    }
    throw toStoreError(e, 'open', ctx);
  }
}

interface CheckRow {
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
}

interface MarkRow {
  channel: string;
  symbol: string;
  spot: number | null;
  iv: number | null;
  yield: number | null;
  rate: number | null;
  user: string;
  at: string;
}

const CHECK_COLUMNS = 'channel, number, user, at, verb, text, normalized, summary, thread_ts, permalink, delivered';

class SqliteStore implements Store {
  private readonly s;
  private readonly allocTx;

  constructor(
    private readonly db: Database.Database,
    private readonly path: string,
    private readonly busyTimeoutMs: number,
  ) {
    this.s = {
      nextNumber: db.prepare('SELECT next_number AS n FROM channels WHERE channel = ?').pluck(),
      maxNumber: db.prepare('SELECT MAX(number) AS n FROM checks WHERE channel = ?').pluck(),
      setNext: db.prepare(
        'INSERT INTO channels (channel, next_number) VALUES (?, ?) ON CONFLICT (channel) DO UPDATE SET next_number = excluded.next_number',
      ),
      insert: db.prepare(
        `INSERT INTO checks (channel, number, user, at, verb, text, normalized, summary, thread_ts, permalink, delivered)
         VALUES (@channel, @number, @user, @at, @verb, @text, @normalized, @summary, NULL, NULL, 'pending')`,
      ),
      setThread: db.prepare('UPDATE checks SET thread_ts = ? WHERE channel = ? AND number = ?'),
      setThreadLink: db.prepare('UPDATE checks SET thread_ts = ?, permalink = ? WHERE channel = ? AND number = ?'),
      setDelivery: db.prepare('UPDATE checks SET delivered = ? WHERE channel = ? AND number = ?'),
      get: db.prepare(`SELECT ${CHECK_COLUMNS} FROM checks WHERE channel = ? AND number = ?`),
      recent: db.prepare(`SELECT ${CHECK_COLUMNS} FROM checks WHERE channel = ? ORDER BY number DESC LIMIT ?`),
      putMark: db.prepare(
        `INSERT INTO marks (channel, symbol, spot, iv, yield, rate, user, at)
         VALUES (@channel, @symbol, @spot, @iv, @yield, @rate, @user, @at)
         ON CONFLICT (channel, symbol) DO UPDATE SET
           spot = excluded.spot, iv = excluded.iv, yield = excluded.yield, rate = excluded.rate,
           user = excluded.user, at = excluded.at`,
      ),
      getMark: db.prepare('SELECT channel, symbol, spot, iv, yield, rate, user, at FROM marks WHERE channel = ? AND symbol = ?'),
      listMarks: db.prepare('SELECT channel, symbol, spot, iv, yield, rate, user, at FROM marks WHERE channel = ? ORDER BY symbol'),
      countRejected: db.prepare(
        'INSERT INTO rejected (channel, count) VALUES (?, 1) ON CONFLICT (channel) DO UPDATE SET count = count + 1',
      ),
      rejectedCount: db.prepare('SELECT count FROM rejected WHERE channel = ?').pluck(),
    };
    const s = this.s;
    this.allocTx = db.transaction((row: Omit<CheckRow, 'number' | 'thread_ts' | 'permalink' | 'delivered'>): number => {
      const next = (s.nextNumber.get(row.channel) as number | undefined) ?? 1;
      const max = (s.maxNumber.get(row.channel) as number | null) ?? 0;
      const n = Math.max(next, max + 1);
      s.setNext.run(row.channel, n + 1);
      s.insert.run({ ...row, number: n });
      return n;
    });
  }

  private guard<T>(op: StoreOp, fn: () => T): T {
    if (!this.db.open) throw new StoreError('unavailable', op, 'the log has been closed');
    try {
      return fn();
    } catch (e) {
      throw toStoreError(e, op, { path: this.path, busyTimeoutMs: this.busyTimeoutMs });
    }
  }

  appendCheck(e: LogEntryInput): LogEntry {
    const channel = id(e?.channel, 'channel');
    const user = id(e.user, 'user');
    const at = isoTime(e.at);
    const verb = shortText(e.verb, 'verb', LIMITS.verbChars);
    if (typeof e.text !== 'string') throw invalid('the request text is missing');
    const text = cutBytes(e.text, LIMITS.textBytes);
    const normalized = json(e.normalized);
    const summary = cleanSummary(e.summary);
    const summaryJson = JSON.stringify(summary);
    if (bytes(summaryJson) > LIMITS.summaryBytes) {
      throw invalid(`the summary is too large to store (${kb(bytes(summaryJson))} > ${kb(LIMITS.summaryBytes)})`);
    }
    const row = { channel, user, at, verb, text, normalized, summary: summaryJson };
    const number = this.guard('write', () => this.allocTx.immediate(row));
    return { channel, user, at, verb, text, normalized, summary, number, threadTs: null, permalink: null, delivered: 'pending' };
  }

  setThread(channel: string, number: number, threadTs: string, permalink?: string | null): boolean {
    const ch = id(channel, 'channel');
    if (!isEntryNumber(number)) return false;
    const ts = shortText(threadTs, 'thread timestamp', LIMITS.threadTsChars);
    if (permalink === undefined) return this.guard('write', () => this.s.setThread.run(ts, ch, number).changes > 0);
    if (permalink !== null) shortText(permalink, 'permalink', LIMITS.permalinkChars);
    return this.guard('write', () => this.s.setThreadLink.run(ts, permalink, ch, number).changes > 0);
  }

  setDelivery(channel: string, number: number, state: 'delivered' | 'undelivered'): boolean {
    const ch = id(channel, 'channel');
    if (state !== 'delivered' && state !== 'undelivered') throw invalid(`delivery state must be delivered or undelivered, not ${String(state)}`);
    if (!isEntryNumber(number)) return false;
    return this.guard('write', () => this.s.setDelivery.run(state, ch, number).changes > 0);
  }

  get(channel: string, number: number): LogEntry | undefined {
    if (typeof channel !== 'string' || !isEntryNumber(number)) return undefined;
    const row = this.guard('read', () => this.s.get.get(channel, number) as CheckRow | undefined);
    return row && toEntry(row);
  }

  recent(channel: string, n: number): LogEntry[] {
    if (typeof channel !== 'string' || typeof n !== 'number' || !(n >= 1)) return [];
    const limit = Math.min(Math.floor(n), LIMITS.recentMax);
    const rows = this.guard('read', () => this.s.recent.all(channel, limit) as CheckRow[]);
    return rows.map(toEntry);
  }

  putMark(m: Mark): void {
    const row = {
      channel: id(m?.channel, 'channel'),
      symbol: symbol(m.symbol),
      spot: finiteOrNull(m.spot, 'spot'),
      iv: finiteOrNull(m.iv, 'iv'),
      yield: finiteOrNull(m.yield, 'yield'),
      rate: finiteOrNull(m.rate, 'rate'),
      user: id(m.user, 'user'),
      at: isoTime(m.at),
    };
    this.guard('write', () => this.s.putMark.run(row));
  }

  getMark(channel: string, sym: string): Mark | undefined {
    if (typeof channel !== 'string' || typeof sym !== 'string') return undefined;
    const row = this.guard('read', () => this.s.getMark.get(channel, sym.trim().toUpperCase()) as MarkRow | undefined);
    return row && toMark(row);
  }

  listMarks(channel: string): Mark[] {
    if (typeof channel !== 'string') return [];
    return this.guard('read', () => this.s.listMarks.all(channel) as MarkRow[]).map(toMark);
  }

  countRejected(channel: string): void {
    const ch = id(channel, 'channel');
    this.guard('write', () => this.s.countRejected.run(ch));
  }

  rejectedCount(channel: string): number {
    if (typeof channel !== 'string') return 0;
    return this.guard('read', () => (this.s.rejectedCount.get(channel) as number | undefined) ?? 0);
  }

  batch<T>(fn: () => T): T {
    return this.guard('write', () => this.db.transaction(fn).immediate());
  }

  close(): void {
    if (this.db.open) this.db.close();
  }
}

// ---- validation and conversion -------------------------------------------------------------

function invalid(reason: string): StoreError {
  return new StoreError('invalid', 'write', reason);
}

function id(v: unknown, what: string): string {
  if (typeof v !== 'string' || v.trim() === '') throw invalid(`the ${what} is missing`);
  if (v.length > LIMITS.idChars) throw invalid(`the ${what} is longer than ${LIMITS.idChars} characters`);
  return v;
}

function shortText(v: unknown, what: string, max: number): string {
  if (typeof v !== 'string' || v === '') throw invalid(`the ${what} is missing`);
  if (v.length > max) throw invalid(`the ${what} is longer than ${max} characters`);
  return v;
}

function symbol(v: unknown): string {
  if (typeof v !== 'string' || v.trim() === '') throw invalid('the symbol is missing');
  const s = v.trim().toUpperCase();
  if (s.length > LIMITS.symbolChars) throw invalid(`the symbol is longer than ${LIMITS.symbolChars} characters`);
  return s;
}

function isoTime(v: unknown): string {
  if (typeof v !== 'string' || v.length > LIMITS.atChars || !Number.isFinite(Date.parse(v))) {
    throw invalid(`the time must be an ISO date-time, not ${JSON.stringify(v)?.slice(0, 80)}`);
  }
  return v;
}

function finiteOrNull(v: unknown, what: string): number | null {
  if (v === undefined || v === null) return null;
  if (typeof v !== 'number' || !Number.isFinite(v)) throw invalid(`the ${what} must be a finite number, not ${String(v)}`);
  return v;
}

function isEntryNumber(n: unknown): n is number {
  return typeof n === 'number' && Number.isSafeInteger(n) && n >= 1;
}

function json(v: unknown): string {
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
function cleanSummary(s: unknown): CheckSummary {
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

function bytes(s: string): number {
  return Buffer.byteLength(s, 'utf8');
}

function kb(n: number): string {
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

function toEntry(r: CheckRow): LogEntry {
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
  };
}

function toMark(r: MarkRow): Mark {
  const m: Mark = { channel: r.channel, symbol: r.symbol, user: r.user, at: r.at };
  if (r.spot !== null) m.spot = r.spot;
  if (r.iv !== null) m.iv = r.iv;
  if (r.yield !== null) m.yield = r.yield;
  if (r.rate !== null) m.rate = r.rate;
  return m;
}
