/**
 * Versioned schema of the store, one numbered list for both backends: migration i (1-based) takes
 * the schema from version i−1 to i, with its SQLite step (`up`) and its PostgreSQL text (`postgres`).
 * The runner is our own and small (see DEVELOPERS.md, "The log and marks"): `plan` checks the list
 * and picks the steps; each backend applies them in one transaction.
 *
 * - SQLite: the version lives in the file header (PRAGMA user_version); the steps run inside one
 *   BEGIN IMMEDIATE transaction, so two processes opening an old file at once migrate it exactly
 *   once, and a migration that fails leaves the file as it was.
 * - PostgreSQL (postgres.ts): the version lives in the table kolmo_schema; the steps run in one
 *   transaction under a transaction-level advisory lock, so several instances starting at once
 *   migrate the database exactly once (PostgreSQL's DDL is transactional: a failing step leaves
 *   nothing half-done).
 *
 * Never edit a migration that has shipped: append a new one.
 */
import type BetterSqlite3 from 'better-sqlite3';
import { StoreError } from './errors.js';

export interface Migration {
  /** the version the schema has after this migration */
  version: number;
  description: string;
  /** the SQLite step */
  up(db: BetterSqlite3.Database): void;
  /** the PostgreSQL step (one script, run inside the migration's transaction) */
  postgres?: string;
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
    postgres: `
      CREATE TABLE channels (
        channel     TEXT PRIMARY KEY,
        next_number INTEGER NOT NULL CHECK (next_number >= 1)
      );
      CREATE TABLE checks (
        id         BIGSERIAL PRIMARY KEY,
        channel    TEXT NOT NULL,
        number     INTEGER NOT NULL CHECK (number >= 1),
        "user"     TEXT NOT NULL,
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
        spot    DOUBLE PRECISION,
        iv      DOUBLE PRECISION,
        yield   DOUBLE PRECISION,
        rate    DOUBLE PRECISION,
        "user"  TEXT NOT NULL,
        at      TEXT NOT NULL,
        PRIMARY KEY (channel, symbol)
      );
      CREATE TABLE rejected (
        channel TEXT PRIMARY KEY,
        count   INTEGER NOT NULL
      );
    `,
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
    postgres: `
      ALTER TABLE checks ADD COLUMN permalink TEXT;
      ALTER TABLE checks ADD COLUMN delivered TEXT NOT NULL DEFAULT 'pending'
        CHECK (delivered IN ('pending', 'delivered', 'undelivered'));
      UPDATE checks SET delivered = 'delivered' WHERE thread_ts IS NOT NULL;
    `,
  },
  {
    version: 3,
    description: "a mark's view (vol, drift and its uncertainty) and each channel's price histories",
    up(db) {
      db.exec(`
        ALTER TABLE marks ADD COLUMN vol REAL;
        ALTER TABLE marks ADD COLUMN drift REAL;
        ALTER TABLE marks ADD COLUMN drift_se REAL;
        CREATE TABLE closes (
          channel TEXT NOT NULL,
          symbol  TEXT NOT NULL,
          seq     INTEGER NOT NULL CHECK (seq >= 0),
          day     TEXT,
          close   REAL NOT NULL,
          PRIMARY KEY (channel, symbol, seq)
        );
      `);
    },
    postgres: `
      ALTER TABLE marks ADD COLUMN vol DOUBLE PRECISION;
      ALTER TABLE marks ADD COLUMN drift DOUBLE PRECISION;
      ALTER TABLE marks ADD COLUMN drift_se DOUBLE PRECISION;
      CREATE TABLE closes (
        channel TEXT NOT NULL,
        symbol  TEXT NOT NULL,
        seq     INTEGER NOT NULL CHECK (seq >= 0),
        day     TEXT,
        close   DOUBLE PRECISION NOT NULL,
        PRIMARY KEY (channel, symbol, seq)
      );
    `,
  },
  {
    version: 4,
    description: 'buttons and my desk: which check a variation came from, tombstones of deleted checks, the messages and files each answer posted, a person\'s checks across channels, personal defaults',
    up(db) {
      db.exec(`
        ALTER TABLE checks ADD COLUMN varied_from INTEGER;
        ALTER TABLE checks ADD COLUMN deleted_at TEXT;
        ALTER TABLE checks ADD COLUMN posted TEXT;
        CREATE INDEX checks_user_at ON checks (user, at);
        CREATE TABLE user_defaults (
          user    TEXT PRIMARY KEY NOT NULL,
          rate    REAL,
          yield   REAL,
          mult    INTEGER,
          horizon TEXT,
          at      TEXT NOT NULL
        );
      `);
    },
    postgres: `
      ALTER TABLE checks ADD COLUMN varied_from INTEGER;
      ALTER TABLE checks ADD COLUMN deleted_at TEXT;
      ALTER TABLE checks ADD COLUMN posted TEXT;
      CREATE INDEX checks_user_at ON checks ("user", at);
      CREATE TABLE user_defaults (
        "user"  TEXT PRIMARY KEY,
        rate    DOUBLE PRECISION,
        yield   DOUBLE PRECISION,
        mult    INTEGER,
        horizon TEXT,
        at      TEXT NOT NULL
      );
    `,
  },
  {
    version: 5,
    description: 'shared request queue (inbox, per-channel order, leases) and per-user rate buckets',
    up(db) {
      db.exec(`
        CREATE TABLE requests (
          seq          INTEGER PRIMARY KEY AUTOINCREMENT,
          key          TEXT NOT NULL UNIQUE,
          source       TEXT NOT NULL,
          channel      TEXT NOT NULL,
          user         TEXT NOT NULL,
          thread_ts    TEXT,
          response_url TEXT,
          text         TEXT NOT NULL,
          now          TEXT NOT NULL,
          received_ms  INTEGER NOT NULL,
          state        TEXT NOT NULL DEFAULT 'queued' CHECK (state IN ('queued', 'running', 'done')),
          owner        TEXT,
          lease_ms     INTEGER,
          attempts     INTEGER NOT NULL DEFAULT 0,
          progress     TEXT NOT NULL DEFAULT '{}',
          files        TEXT,
          finished_ms  INTEGER
        );
        CREATE INDEX requests_open ON requests (channel, seq) WHERE state <> 'done';
        CREATE INDEX requests_finished ON requests (finished_ms) WHERE state = 'done';
        CREATE TABLE user_rates (
          user      TEXT PRIMARY KEY NOT NULL,
          tokens    REAL NOT NULL,
          at_ms     INTEGER NOT NULL,
          notice_ms INTEGER NOT NULL,
          granted   INTEGER NOT NULL
        );
      `);
    },
    postgres: `
      CREATE TABLE requests (
        seq          BIGSERIAL PRIMARY KEY,
        key          TEXT NOT NULL UNIQUE,
        source       TEXT NOT NULL,
        channel      TEXT NOT NULL,
        "user"       TEXT NOT NULL,
        thread_ts    TEXT,
        response_url TEXT,
        text         TEXT NOT NULL,
        now          TEXT NOT NULL,
        received_ms  BIGINT NOT NULL,
        state        TEXT NOT NULL DEFAULT 'queued' CHECK (state IN ('queued', 'running', 'done')),
        owner        TEXT,
        lease_ms     BIGINT,
        attempts     INTEGER NOT NULL DEFAULT 0,
        progress     TEXT NOT NULL DEFAULT '{}',
        files        TEXT,
        finished_ms  BIGINT
      );
      CREATE INDEX requests_open ON requests (channel, seq) WHERE state <> 'done';
      CREATE INDEX requests_finished ON requests (finished_ms) WHERE state = 'done';
      CREATE TABLE user_rates (
        "user"    TEXT PRIMARY KEY,
        tokens    DOUBLE PRECISION NOT NULL,
        at_ms     BIGINT NOT NULL,
        notice_ms BIGINT NOT NULL,
        granted   INTEGER NOT NULL
      );
    `,
  },
  {
    version: 6,
    description: 'interactive requests on the shared queue: how each is answered (its log, flat, notices, variation, preface)',
    up(db) {
      db.exec('ALTER TABLE requests ADD COLUMN interaction TEXT');
    },
    postgres: 'ALTER TABLE requests ADD COLUMN interaction TEXT;',
  },
];

/** The schema version this code reads and writes. */
export const SCHEMA_VERSION = MIGRATIONS.length;

export function schemaVersion(db: BetterSqlite3.Database): number {
  return db.pragma('user_version', { simple: true }) as number;
}

/**
 * The shared part of the runner: checks the list (versions 1..n in order) and the target, refuses
 * a schema newer than the list, and returns the migrations that take `from` to `target`.
 */
export function plan(from: number, target: number, migrations: readonly Migration[]): Migration[] {
  if (!Number.isInteger(target) || target < 0 || target > migrations.length) {
    throw new RangeError(`migration target ${target} outside 0..${migrations.length}`);
  }
  migrations.forEach((m, i) => {
    if (m.version !== i + 1) throw new Error(`migration list out of order at position ${i + 1} (version ${m.version})`);
  });
  if (from > migrations.length) {
    throw new StoreError(
      'unavailable',
      'open',
      `the log was written by a newer version of Kolmo (schema ${from}, this version reads up to ${migrations.length})`,
    );
  }
  return migrations.slice(from, Math.max(from, target));
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
  plan(0, target, migrations); // the list and the target are checked before anything is opened
  const run = db.transaction(() => {
    const from = schemaVersion(db);
    for (const m of plan(from, target, migrations)) {
      m.up(db);
      db.pragma(`user_version = ${m.version}`);
    }
    return { from, to: Math.max(from, target) };
  });
  return run.immediate();
}
