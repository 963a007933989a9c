/**
 * The channel's memory: the per-channel log of checks and the channel's marks.
 *
 * Two faces: `AsyncStore` (async.ts), the one interface with two backends (SQLite, the embedded
 * default, and PostgreSQL for several instances), and `Store` below, the synchronous face of the
 * SQLite backend that the engine still calls directly (better-sqlite3 is synchronous) until the
 * verbs take the async interface. Every query is scoped to one channel: an entry of another channel is invisible,
 * exactly as if it did not exist. Every foreseeable fault surfaces as a StoreError (see errors.ts)
 * whose message can be shown to the user, e.g. "the log could not be written: disk full".
 */
import type { MarkFigures } from '../core/types.js';

export interface CheckSummary {
  /** the position in a few words, e.g. "+2/−2 call spread 105/115 Mar 27" */
  position: string;
  probProfit?: number;
  expectedPnl?: number;
  viewEdge?: number;
  [k: string]: unknown;
}

export interface LogEntryInput {
  channel: string;
  user: string;
  /** ISO time of the check */
  at: string;
  verb: string;
  /** the request as typed (stored up to LIMITS.textBytes, longer text is cut and ends with "…") */
  text: string;
  /** JSON of the parsed request, kept whole (refused above LIMITS.normalizedBytes) so `again N` can re-run it */
  normalized: string;
  /** headline figures; non-finite numbers are dropped before storing */
  summary: CheckSummary;
}

export type DeliveryState = 'pending' | 'delivered' | 'undelivered';

export interface LogEntry extends LogEntryInput {
  /** per-channel numbering #1, #2, ... without gaps */
  number: number;
  threadTs: string | null;
  permalink: string | null;
  delivered: DeliveryState;
  /** the check (same log) this one is a variation of, pressed from its buttons */
  variedFrom?: number | null;
  /** when the asker deleted it: the entry is a tombstone (number kept, figures gone) */
  deletedAt?: string | null;
  /** the messages and files the answer posted, for deleting it */
  posted?: Posted | null;
}

/** The messages (their ts, in `channel`) and chart files an answer posted. */
export interface Posted {
  channel: string;
  ts: string[];
  files: string[];
}

/** A person's own defaults (my desk). */
export interface UserDefaults {
  rate?: number;
  yield?: number;
  mult?: number;
  /** a span: 30d, 6w, 3m, 1y */
  horizon?: string;
}


/** A stored market snapshot for a symbol in a channel. The symbol is kept in upper case. */
export interface Mark extends MarkFigures {
  channel: string;
  user: string;
}

/** One close of a stored price history (`history SYMBOL`): an ISO day, or none for undated closes. */
export interface StoredClose {
  date?: string;
  close: number;
}

export interface Store {
  /** Appends a check under the channel's next number (allocated atomically, also across processes). */
  appendCheck(e: LogEntryInput): LogEntry;
  /**
   * Records the thread the answer was posted in. `permalink` undefined keeps the stored one.
   * Returns false when the channel has no entry with that number.
   */
  setThread(channel: string, number: number, threadTs: string, permalink?: string | null): boolean;
  /** Records whether the answer reached the channel. Returns false when there is no such entry. */
  setDelivery(channel: string, number: number, state: 'delivered' | 'undelivered'): boolean;
  /** The channel's entry with that number; undefined for a number of another channel or none. */
  get(channel: string, number: number): LogEntry | undefined;
  /** The channel's last `n` entries, newest first (n is clamped to 0..LIMITS.recentMax). */
  recent(channel: string, n: number): LogEntry[];
  /** Stores the mark, replacing the channel's previous mark for that symbol as a whole. */
  putMark(m: Mark): void;
  /** The channel's stored price history for a symbol, oldest first ([] when none). */
  getCloses(channel: string, symbol: string): StoredClose[];
  /** Replaces the channel's stored price history for a symbol as a whole. */
  putCloses(channel: string, symbol: string, closes: StoredClose[]): void;
  getMark(channel: string, symbol: string): Mark | undefined;
  /** The channel's marks in symbol order. */
  listMarks(channel: string): Mark[];
  /** Counts one rejected request (nothing else of it is stored). */
  countRejected(channel: string): void;
  rejectedCount(channel: string): number;
  /** Runs `fn` in one write transaction: every change inside it is kept, or none is. */
  batch<T>(fn: () => T): T;
  /** Records the check (same log) this one is a variation of; false when there is no such entry. */
  setVariedFrom(channel: string, number: number, from: number): boolean;
  /** Records the messages and files the answer posted (replacing what was recorded). */
  setPosted(channel: string, number: number, posted: Posted): boolean;
  /**
   * Deletes a check's content and keeps its number (a tombstone: text, request and figures gone,
   * `deletedAt` set). False when there is no such entry or it is already a tombstone.
   */
  tombstone(channel: string, number: number, at: string): boolean;
  /** A person's last `n` checks across every log, newest first, tombstones left out. */
  recentOfUser(user: string, n: number): LogEntry[];
  /** A person's defaults (empty when none). */
  getDefaults(user: string): UserDefaults;
  /** Stores a person's defaults whole (an empty record removes them). */
  putDefaults(user: string, d: UserDefaults, at: string): void;
  /** Returns when the log answers a read; a StoreError otherwise. */
  ping(): void;
  close(): void;
}

export interface OpenOptions {
  /** open an existing log for reading only; writes fail with StoreError 'readonly' */
  readonly?: boolean;
  /**
   * 'full' (default): each acknowledged check is fsynced to the write-ahead log before
   * appendCheck returns, so it survives a crash of the process and of the machine.
   * 'normal': survives a crash of the process (kill -9) but the last checks may roll back on power
   * loss. See DEVELOPERS notes in sqlite.ts.
   */
  synchronous?: 'normal' | 'full';
  /** how long a writer waits for another process's write lock before 'busy' (default 5000 ms) */
  busyTimeoutMs?: number;
  /** cap on the size of the database file in bytes; beyond it writes fail with StoreError 'full' */
  maxBytes?: number;
}

export { StoreError, type StoreErrorCode, type StoreOp } from './errors.js';
export { openStore, defaultDbPath, LIMITS } from './sqlite.js';
export { MIGRATIONS, SCHEMA_VERSION, migrate, type Migration } from './migrations.js';
export {
  openDatabase,
  databaseFromEnv,
  asyncOf,
  type AsyncStore,
  type LogStore,
  type DatabaseChoice,
  type DatabaseOptions,
  type QueuedRequest,
  type Interaction,
  type ClaimedRequest,
  type Progress,
  type RequestQueue,
  type RateBuckets,
  type RateOptions,
  type RateDecision,
  type Admission,
} from './async.js';
