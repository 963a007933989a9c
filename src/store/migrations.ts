/**
 * Versioned schema of the store, one numbered list for both backends: migration i (1-based) takes
 * the schema from version i−1 to i, with its SQLite step (`up`) and its PostgreSQL text (`postgres`),
 * both made from one schema text (`dialectOf`).
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

/**
 * The two dialects of one schema text. The migrations are written once, in the SQL both backends
 * share, with four words for where they differ: `{real}` (a float column), `{bigint}` (ms since
 * the epoch), `{rowid}` (a row id the database assigns) and `{seq}` (the same, never reused).
 * The column `"user"` is quoted for PostgreSQL, where USER is reserved; SQLite reads the quoted
 * name as the same identifier.
 */
const DIALECTS = {
  sqlite: { real: 'REAL', bigint: 'INTEGER', rowid: 'INTEGER PRIMARY KEY', seq: 'INTEGER PRIMARY KEY AUTOINCREMENT' },
  postgres: { real: 'DOUBLE PRECISION', bigint: 'BIGINT', rowid: 'BIGSERIAL PRIMARY KEY', seq: 'BIGSERIAL PRIMARY KEY' },
} as const;

/** The schema text `sql` in one backend's dialect. */
export function dialectOf(sql: string, backend: keyof typeof DIALECTS): string {
  const words: Record<string, string> = DIALECTS[backend];
  return sql.replace(/\{(\w+)\}/g, (all, w: string) => {
    if (!(w in words)) throw new Error(`unknown word ${all} in a migration`);
    return words[w];
  });
}

/** A migration written once for both backends. */
const step = (version: number, description: string, sql: string): Migration => ({
  version,
  description,
  up: (db) => db.exec(dialectOf(sql, 'sqlite')),
  postgres: dialectOf(sql, 'postgres'),
});

export const MIGRATIONS: readonly Migration[] = [
  step(
    1,
    'log of checks with per-channel numbering, marks, rejected-request counters',
    `
    CREATE TABLE channels (
      channel     TEXT PRIMARY KEY NOT NULL,
      next_number INTEGER NOT NULL CHECK (next_number >= 1)
    );
    CREATE TABLE checks (
      id         {rowid},
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
      spot    {real},
      iv      {real},
      yield   {real},
      rate    {real},
      "user"  TEXT NOT NULL,
      at      TEXT NOT NULL,
      PRIMARY KEY (channel, symbol)
    );
    CREATE TABLE rejected (
      channel TEXT PRIMARY KEY NOT NULL,
      count   INTEGER NOT NULL
    );
    `,
  ),
  step(
    2,
    'delivery state and permalink of each check',
    `
    ALTER TABLE checks ADD COLUMN permalink TEXT;
    ALTER TABLE checks ADD COLUMN delivered TEXT NOT NULL DEFAULT 'pending'
      CHECK (delivered IN ('pending', 'delivered', 'undelivered'));
    -- a version-1 entry with a thread was answered in that thread
    UPDATE checks SET delivered = 'delivered' WHERE thread_ts IS NOT NULL;
    `,
  ),
  step(
    3,
    "a mark's view (vol, drift and its uncertainty) and each channel's price histories",
    `
    ALTER TABLE marks ADD COLUMN vol {real};
    ALTER TABLE marks ADD COLUMN drift {real};
    ALTER TABLE marks ADD COLUMN drift_se {real};
    CREATE TABLE closes (
      channel TEXT NOT NULL,
      symbol  TEXT NOT NULL,
      seq     INTEGER NOT NULL CHECK (seq >= 0),
      day     TEXT,
      close   {real} NOT NULL,
      PRIMARY KEY (channel, symbol, seq)
    );
    `,
  ),
  step(
    4,
    "buttons and my desk: which check a variation came from, tombstones of deleted checks, the messages and files each answer posted, a person's checks across channels, personal defaults",
    `
    ALTER TABLE checks ADD COLUMN varied_from INTEGER;
    ALTER TABLE checks ADD COLUMN deleted_at TEXT;
    ALTER TABLE checks ADD COLUMN posted TEXT;
    CREATE INDEX checks_user_at ON checks ("user", at);
    CREATE TABLE user_defaults (
      "user"  TEXT PRIMARY KEY NOT NULL,
      rate    {real},
      yield   {real},
      mult    INTEGER,
      horizon TEXT,
      at      TEXT NOT NULL
    );
    `,
  ),
  step(
    5,
    'shared request queue (inbox, per-channel order, leases) and per-user rate buckets',
    `
    CREATE TABLE requests (
      seq          {seq},
      key          TEXT NOT NULL UNIQUE,
      source       TEXT NOT NULL,
      channel      TEXT NOT NULL,
      "user"       TEXT NOT NULL,
      thread_ts    TEXT,
      response_url TEXT,
      text         TEXT NOT NULL,
      now          TEXT NOT NULL,
      received_ms  {bigint} NOT NULL,
      state        TEXT NOT NULL DEFAULT 'queued' CHECK (state IN ('queued', 'running', 'done')),
      owner        TEXT,
      lease_ms     {bigint},
      attempts     INTEGER NOT NULL DEFAULT 0,
      progress     TEXT NOT NULL DEFAULT '{}',
      files        TEXT,
      finished_ms  {bigint}
    );
    CREATE INDEX requests_open ON requests (channel, seq) WHERE state <> 'done';
    CREATE INDEX requests_finished ON requests (finished_ms) WHERE state = 'done';
    CREATE TABLE user_rates (
      "user"    TEXT PRIMARY KEY NOT NULL,
      tokens    {real} NOT NULL,
      at_ms     {bigint} NOT NULL,
      notice_ms {bigint} NOT NULL,
      granted   INTEGER NOT NULL
    );
    `,
  ),
  step(6, 'interactive requests on the shared queue: how each is answered (its log, flat, notices, variation, preface)', 'ALTER TABLE requests ADD COLUMN interaction TEXT;'),
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
