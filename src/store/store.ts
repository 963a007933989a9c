/**
 * The channel's memory: the per-channel log of checks and the channel's marks.
 *
 * One interface, `AsyncStore` (async.ts), with two backends: SQLite, the embedded default
 * (sqlite.ts; better-sqlite3 is synchronous underneath), and PostgreSQL for several instances
 * (postgres.ts); `openDatabase` opens either. This file holds the records both read and write.
 * Every query is scoped to one channel: an entry of another channel is invisible,
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
export { defaultDbPath, LIMITS } from './sqlite.js';
export { MIGRATIONS, SCHEMA_VERSION, migrate, type Migration } from './migrations.js';
export {
  openDatabase,
  databaseFromEnv,
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
