/**
 * Versioned schema of the SQLite log. The version lives in the file header (PRAGMA user_version);
 * migrations form an ordered list, migration i (1-based) takes the file from version i−1 to i.
 * They run at start-up inside one BEGIN IMMEDIATE transaction, so two processes opening an old
 * file at once migrate it exactly once, and a migration that fails leaves the file as it was.
 *
 * Never edit a migration that has shipped: append a new one.
 */
import type BetterSqlite3 from 'better-sqlite3';
import { StoreError } from './errors.js';

export interface Migration {
  /** the version the file has after this migration */
  version: number;
  description: string;
  up(db: BetterSqlite3.Database): void;
}

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    description: 'log of checks with per-channel numbering, marks, rejected-request counters',
    up(db) {
      db.exec(`
        CREATE TABLE channels (
          channel     TEXT PRIMARY KEY NOT NULL,
          next_number INTEGER NOT NULL CHECK (next_number >= 1)
        );
        CREATE TABLE checks (
          id         INTEGER PRIMARY KEY,
          channel    TEXT NOT NULL,
          number     INTEGER NOT NULL CHECK (number >= 1),
          user       TEXT NOT NULL,
          at         TEXT NOT NULL,
          verb       TEXT NOT NULL,
          text       TEXT NOT NULL,
          normalized TEXT NOT NULL,
          summary    TEXT NOT NULL,
          thread_ts  TEXT
        );
        CREATE UNIQUE INDEX checks_channel_number ON checks (channel, number);
        CREATE TABLE marks (
          channel TEXT NOT NULL,
          symbol  TEXT NOT NULL,
          spot    REAL,
          iv      REAL,
          yield   REAL,
          rate    REAL,
          user    TEXT NOT NULL,
          at      TEXT NOT NULL,
          PRIMARY KEY (channel, symbol)
        );
        CREATE TABLE rejected (
          channel TEXT PRIMARY KEY NOT NULL,
          count   INTEGER NOT NULL
        );
      `);
    },
  },
  {
    version: 2,
    description: 'delivery state and permalink of each check',
    up(db) {
      db.exec(`
        ALTER TABLE checks ADD COLUMN permalink TEXT;
        ALTER TABLE checks ADD COLUMN delivered TEXT NOT NULL DEFAULT 'pending'
          CHECK (delivered IN ('pending', 'delivered', 'undelivered'));
        -- a version-1 entry with a thread was answered in that thread
        UPDATE checks SET delivered = 'delivered' WHERE thread_ts IS NOT NULL;
      `);
    },
  },
];

/** The schema version this code reads and writes. */
export const SCHEMA_VERSION = MIGRATIONS.length;

export function schemaVersion(db: BetterSqlite3.Database): number {
  return db.pragma('user_version', { simple: true }) as number;
}

/**
 * Brings the file to version `target` (default: the newest) by applying the missing migrations
 * in order, all in one immediate transaction. Returns the versions before and after.
 * A file newer than the list is refused with a StoreError ('unavailable') and left untouched.
 */
export function migrate(
  db: BetterSqlite3.Database,
  target: number = SCHEMA_VERSION,
  migrations: readonly Migration[] = MIGRATIONS,
): { from: number; to: number } {
  if (!Number.isInteger(target) || target < 0 || target > migrations.length) {
    throw new RangeError(`migration target ${target} outside 0..${migrations.length}`);
  }
  migrations.forEach((m, i) => {
    if (m.version !== i + 1) throw new Error(`migration list out of order at position ${i + 1} (version ${m.version})`);
  });
  const run = db.transaction(() => {
    const from = schemaVersion(db);
    if (from > migrations.length) {
      throw new StoreError(
        'unavailable',
        'open',
        `the log was written by a newer version of Kolmo (schema ${from}, this version reads up to ${migrations.length})`,
      );
    }
    for (let v = from + 1; v <= target; v++) {
      migrations[v - 1].up(db);
      db.pragma(`user_version = ${v}`);
    }
    return { from, to: Math.max(from, target) };
  });
  return run.immediate();
}
