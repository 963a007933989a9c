/**
 * PostgreSQL backend of the async store (node-postgres), for several instances sharing one memory.
 *
 * Decisions:
 * - One small pool per process (default 4 connections). Statements are single round trips where
 *   possible, so a connection is held for one statement, not for a request.
 * - Numbers: one INSERT … ON CONFLICT DO UPDATE on the channel's counter row takes that row's
 *   lock and bumps it, and the check is inserted by the same statement (a data-modifying CTE), so
 *   allocation and insert commit or roll back together: writers of one channel queue on the row
 *   lock, in any process on any host, and the numbers are unique and without gaps. The counter is
 *   cross-checked against MAX(number)+1, and the UNIQUE (channel, number) index is the last guard.
 * - Timeouts: a statement running longer than `statementTimeoutMs` is cancelled by the server
 *   ('busy'); the client gives up on a connection that answers nothing for 5 s more (a server that
 *   vanished without closing the socket) and on a new connection after `connectTimeoutMs`
 *   ('unavailable'). A lost connection is dropped from the pool and the next call opens another,
 *   so the store recovers by itself when the database comes back.
 * - Migrations: the shared list (migrations.ts), applied in one transaction under an advisory lock.
 */
import pg from 'pg';
import { StoreError, pgStoreError, type StoreOp } from './errors.js';
import { MIGRATIONS, plan, SCHEMA_VERSION, type Migration } from './migrations.js';
import {
  checkRowOf,
  closeRowsOf,
  deliveryArgsOf,
  id,
  isEntryNumber,
  entryChannelOf,
  markRowOf,
  recentLimitOf,
  threadArgsOf,
  toEntry,
  toClose,
  toMark,
  requestRowOf,
  toClaimed,
  checkRate,
  rateDecision,
  admission,
  type CheckRow,
  type CloseRow,
  type MarkRow,
  type RequestRow,
  postedJsonOf,
  TOMBSTONE_SUMMARY,
  isoTime,
  toDefaults,
  defaultsRowOf,
  emptyDefaults,
  type DefaultsRow,
} from './rows.js';
import type { Admission, ClaimedRequest, Progress, QueuedRequest, RateDecision, RateOptions } from './async.js';
import type { LogEntry, LogEntryInput, Mark, Posted, StoredClose, UserDefaults } from './store.js';
import type { AsyncStore, DatabaseOptions } from './async.js';

/** key of the advisory lock the migrations hold (any fixed number; "KOLMO" in ASCII) */
const MIGRATION_LOCK = 0x4b4f4c4d4f;

/** The URL without its password, for messages. */
export function redactUrl(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = '***';
    return u.toString();
  } catch {
    return '(not a URL)';
  }
}

/** The schema version of the database behind `client` (0 when Kolmo never wrote to it). */
async function schemaVersionPg(client: pg.ClientBase): Promise<number> {
  const t = await client.query<{ t: string | null }>(`SELECT to_regclass('kolmo_schema')::text AS t`);
  if (!t.rows[0]?.t) return 0;
  const r = await client.query<{ v: number | null }>('SELECT MAX(version) AS v FROM kolmo_schema');
  return r.rows[0]?.v ?? 0;
}

/**
 * Brings the database to version `target` (default: the newest) in one transaction under an
 * advisory lock: several instances starting together migrate it once; a failing step leaves it
 * as it was. Returns the versions before and after.
 */
export async function migratePg(
  client: pg.ClientBase,
  target: number = SCHEMA_VERSION,
  migrations: readonly Migration[] = MIGRATIONS,
): Promise<{ from: number; to: number }> {
  plan(0, target, migrations);
  await client.query('BEGIN');
  try {
    await client.query('SELECT pg_advisory_xact_lock($1)', [MIGRATION_LOCK]);
    await client.query(`CREATE TABLE IF NOT EXISTS kolmo_schema (
      version     INTEGER PRIMARY KEY,
      description TEXT NOT NULL,
      applied_at  TIMESTAMPTZ NOT NULL DEFAULT now()
    )`);
    const from = await schemaVersionPg(client);
    for (const m of plan(from, target, migrations)) {
      if (m.postgres === undefined) throw new Error(`migration ${m.version} has no PostgreSQL step`);
      await client.query(m.postgres);
      await client.query('INSERT INTO kolmo_schema (version, description) VALUES ($1, $2)', [m.version, m.description]);
    }
    await client.query('COMMIT');
    return { from, to: Math.max(from, target) };
  } catch (e) {
    await client.query('ROLLBACK').catch(() => undefined);
    throw e;
  }
}

/** Opens the database at `url`, migrating it unless read-only. Throws a StoreError when it cannot. */
export async function openPostgres(url: string, opts: DatabaseOptions = {}): Promise<AsyncStore> {
  const where = redactUrl(url);
  const readonly = opts.readonly === true;
  const statementTimeoutMs = opts.statementTimeoutMs ?? 10000;
  const connection: pg.ClientConfig = {
    connectionString: url,
    connectionTimeoutMillis: opts.connectTimeoutMs ?? 5000,
    statement_timeout: statementTimeoutMs,
    query_timeout: statementTimeoutMs + 5000,
    keepAlive: true,
    application_name: opts.applicationName ?? 'kolmo',
    ...(readonly ? { options: '-c default_transaction_read_only=on' } : {}),
  };
  const pool = new pg.Pool({ ...connection, max: opts.poolSize ?? 4, idleTimeoutMillis: 30000 });
  // an idle connection that breaks (the server restarted) is dropped by the pool; without a
  // listener the 'error' event would end the process
  pool.on('error', () => undefined);
  try {
    const client = await pool.connect();
    try {
      if (readonly) {
        const v = await schemaVersionPg(client);
        if (v === 0) throw new StoreError('unavailable', 'open', `the database holds no Kolmo log (${where})`);
        plan(v, SCHEMA_VERSION, MIGRATIONS); // refuses a newer schema
        if (v < SCHEMA_VERSION) {
          throw new StoreError('readonly', 'open', `the database is opened read-only and has schema version ${v}, older than this version of Kolmo reads (${SCHEMA_VERSION}); start one instance with write access to upgrade it`);
        }
      } else {
        await migratePg(client);
      }
    } finally {
      client.release();
    }
  } catch (e) {
    await pool.end().catch(() => undefined);
    throw pgStoreError(e, 'open', where);
  }
  return new PgStore(pool, where, connection);
}

/** the channel on which instances are told that a request was recorded or handed back (LISTEN/NOTIFY) */
const WAKE_CHANNEL = 'kolmo_requests';
const WAKE = `SELECT pg_notify('${WAKE_CHANNEL}', '')`;

/** the database's clock in ms since the epoch (one value per statement): leases and buckets use one clock for every host */
const NOW_MS = '(extract(epoch from now()) * 1000)::bigint';
const REQUEST_COLUMNS = 'seq, key, source, channel, "user", thread_ts, response_url, text, now, received_ms, attempts, progress, files, interaction';

const CHECK_COLUMNS = 'channel, number, "user", at, verb, text, normalized, summary, thread_ts, permalink, delivered, varied_from, deleted_at, posted';
const MARK_COLUMNS = 'channel, symbol, spot, iv, yield, rate, vol, drift, drift_se, "user", at';

class PgStore implements AsyncStore {
  readonly backend = 'postgres' as const;
  private closed = false;

  constructor(
    private readonly pool: pg.Pool,
    readonly where: string,
    private readonly connection: pg.ClientConfig,
  ) {}

  /**
   * Calls `onWake` whenever a request is recorded or handed back on any instance (LISTEN on one
   * connection of its own, outside the pool). A lost connection is told to `onError` and opened
   * again (1 s, doubling to 30 s); on each (re)connection `onWake` is called once, for what may
   * have been missed meanwhile. Polling stays the fallback.
   */
  async listen(onWake: () => void, onError: (err: StoreError) => void): Promise<{ close(): Promise<void> }> {
    let client: pg.Client | undefined;
    let closed = false;
    let pause = 1000;
    let timer: NodeJS.Timeout | undefined;
    const again = (err: unknown) => {
      if (closed) return;
      // told as a StoreError whatever the client said (this runs in its event handlers: nothing may be thrown here)
      onError(new StoreError('unavailable', 'read', `the database cannot be reached (${this.where}): ${err instanceof Error ? err.message : String(err)}`, { cause: err }));
      const c = client;
      client = undefined;
      c?.removeAllListeners();
      c?.on('error', () => undefined);
      void c?.end().catch(() => undefined);
      clearTimeout(timer);
      timer = setTimeout(() => void connect(), pause);
      timer.unref?.();
      pause = Math.min(30_000, pause * 2);
    };
    const connect = async () => {
      if (closed) return;
      const c = new pg.Client(this.connection);
      client = c;
      c.on('error', again);
      c.on('end', () => again(new Error('the listening connection was closed')));
      c.on('notification', () => onWake());
      try {
        await c.connect();
        await c.query(`LISTEN ${WAKE_CHANNEL}`);
        pause = 1000;
        onWake();
      } catch (err) {
        if (client === c) again(err);
      }
    };
    await connect();
    return {
      close: async () => {
        closed = true;
        clearTimeout(timer);
        const c = client;
        client = undefined;
        c?.removeAllListeners();
        c?.on('error', () => undefined);
        await c?.end().catch(() => undefined);
      },
    };
  }

  /** One statement on the pool, or on `on` (a transaction's connection). */
  private async q<R extends pg.QueryResultRow>(op: StoreOp, text: string, values: unknown[], on: pg.Pool | pg.PoolClient = this.pool): Promise<pg.QueryResult<R>> {
    if (this.closed) throw new StoreError('unavailable', op, 'the log has been closed');
    try {
      return await on.query<R>(text, values);
    } catch (e) {
      throw pgStoreError(e, op, this.where);
    }
  }

  /** A write statement; true when it changed a row. */
  private async changed(text: string, values: unknown[]): Promise<boolean> {
    return ((await this.q('write', text, values)).rowCount ?? 0) > 0;
  }

  /** `fn` in one transaction on one connection: committed when it resolves, rolled back when it throws. */
  private async tx<T>(op: StoreOp, fn: (c: pg.PoolClient) => Promise<T>): Promise<T> {
    if (this.closed) throw new StoreError('unavailable', op, 'the log has been closed');
    let client: pg.PoolClient | undefined;
    let broken: unknown;
    // a connection that breaks while checked out emits 'error' on its client, which the pool only
    // listens to while the client is idle: without a listener here it would end the process
    const onError = (e: unknown) => {
      broken ??= e;
    };
    try {
      client = await this.pool.connect();
      client.on('error', onError);
      await client.query('BEGIN');
      const out = await fn(client);
      await client.query('COMMIT');
      return out;
    } catch (e) {
      broken ??= e;
      await client?.query('ROLLBACK').catch(() => undefined);
      throw pgStoreError(e, op, this.where);
    } finally {
      client?.removeListener('error', onError);
      // a client that failed is dropped, not handed back to the pool
      client?.release(broken === undefined ? undefined : broken instanceof Error ? broken : new Error(String(broken)));
    }
  }

  async appendCheck(e: LogEntryInput): Promise<LogEntry> {
    const { summaryRecord, ...row } = checkRowOf(e);
    const r = await this.q<{ number: number }>(
      'write',
      `WITH n AS (
         INSERT INTO channels AS c (channel, next_number) VALUES ($1, 2)
         ON CONFLICT (channel) DO UPDATE SET next_number =
           GREATEST(c.next_number, (SELECT COALESCE(MAX(number), 0) + 1 FROM checks WHERE channel = $1)) + 1
         RETURNING next_number - 1 AS number
       )
       INSERT INTO checks (channel, number, "user", at, verb, text, normalized, summary, thread_ts, permalink, delivered)
       SELECT $1, n.number, $2, $3, $4, $5, $6, $7, NULL, NULL, 'pending' FROM n
       RETURNING number`,
      [row.channel, row.user, row.at, row.verb, row.text, row.normalized, row.summary],
    );
    const number = r.rows[0].number;
    return { ...row, summary: summaryRecord, number, threadTs: null, permalink: null, delivered: 'pending', variedFrom: null, deletedAt: null, posted: null };
  }

  async setThread(channel: string, number: number, threadTs: string, permalink?: string | null): Promise<boolean> {
    const a = threadArgsOf(channel, number, threadTs, permalink);
    if (!a) return false;
    return a.permalink === undefined
      ? this.changed('UPDATE checks SET thread_ts = $1 WHERE channel = $2 AND number = $3', [a.ts, a.channel, number])
      : this.changed('UPDATE checks SET thread_ts = $1, permalink = $2 WHERE channel = $3 AND number = $4', [a.ts, a.permalink, a.channel, number]);
  }

  async setDelivery(channel: string, number: number, state: 'delivered' | 'undelivered'): Promise<boolean> {
    const a = deliveryArgsOf(channel, number, state);
    if (!a) return false;
    return this.changed('UPDATE checks SET delivered = $1 WHERE channel = $2 AND number = $3', [a.state, a.channel, number]);
  }

  async get(channel: string, number: number): Promise<LogEntry | undefined> {
    if (typeof channel !== 'string' || !isEntryNumber(number)) return undefined;
    const r = await this.q<CheckRow>('read', `SELECT ${CHECK_COLUMNS} FROM checks WHERE channel = $1 AND number = $2`, [channel, number]);
    return r.rows[0] && toEntry(r.rows[0]);
  }

  async recent(channel: string, n: number): Promise<LogEntry[]> {
    const limit = recentLimitOf(channel, n);
    if (limit === 0) return [];
    const r = await this.q<CheckRow>('read', `SELECT ${CHECK_COLUMNS} FROM checks WHERE channel = $1 ORDER BY number DESC LIMIT $2`, [channel, limit]);
    return r.rows.map(toEntry);
  }

  async putMark(m: Mark): Promise<void> {
    const row = markRowOf(m);
    await this.q(
      'write',
      `INSERT INTO marks (${MARK_COLUMNS}) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)
       ON CONFLICT (channel, symbol) DO UPDATE SET
         spot = excluded.spot, iv = excluded.iv, yield = excluded.yield, rate = excluded.rate,
         vol = excluded.vol, drift = excluded.drift, drift_se = excluded.drift_se,
         "user" = excluded."user", at = excluded.at`,
      [row.channel, row.symbol, row.spot, row.iv, row.yield, row.rate, row.vol, row.drift, row.drift_se, row.user, row.at],
    );
  }

  async getCloses(channel: string, sym: string): Promise<StoredClose[]> {
    if (typeof channel !== 'string' || typeof sym !== 'string') return [];
    const r = await this.q<CloseRow>('read', 'SELECT seq, day, close FROM closes WHERE channel = $1 AND symbol = $2 ORDER BY seq', [channel, sym.trim().toUpperCase()]);
    return r.rows.map(toClose);
  }

  async putCloses(channel: string, sym: string, closes: StoredClose[]): Promise<void> {
    const r = closeRowsOf(channel, sym, closes);
    // the old history goes and the new one comes in one transaction
    await this.tx('write', async (c) => {
      await c.query('DELETE FROM closes WHERE channel = $1 AND symbol = $2', [r.channel, r.symbol]);
      await c.query(
        `INSERT INTO closes (channel, symbol, seq, day, close)
         SELECT $1, $2, t.seq, t.day, t.close FROM unnest($3::int[], $4::text[], $5::float8[]) AS t(seq, day, close)`,
        [r.channel, r.symbol, r.rows.map((x) => x.seq), r.rows.map((x) => x.day), r.rows.map((x) => x.close)],
      );
    });
  }

  async getMark(channel: string, sym: string): Promise<Mark | undefined> {
    if (typeof channel !== 'string' || typeof sym !== 'string') return undefined;
    const r = await this.q<MarkRow>('read', `SELECT ${MARK_COLUMNS} FROM marks WHERE channel = $1 AND symbol = $2`, [channel, sym.trim().toUpperCase()]);
    return r.rows[0] && toMark(r.rows[0]);
  }

  async listMarks(channel: string): Promise<Mark[]> {
    if (typeof channel !== 'string') return [];
    const r = await this.q<MarkRow>('read', `SELECT ${MARK_COLUMNS} FROM marks WHERE channel = $1 ORDER BY symbol COLLATE "C"`, [channel]);
    return r.rows.map(toMark);
  }

  async countRejected(channel: string): Promise<void> {
    const ch = id(channel, 'channel');
    await this.q('write', 'INSERT INTO rejected AS r (channel, count) VALUES ($1, 1) ON CONFLICT (channel) DO UPDATE SET count = r.count + 1', [ch]);
  }

  async rejectedCount(channel: string): Promise<number> {
    if (typeof channel !== 'string') return 0;
    const r = await this.q<{ count: number }>('read', 'SELECT count FROM rejected WHERE channel = $1', [channel]);
    return r.rows[0]?.count ?? 0;
  }

  // ---- the request queue (see RequestQueue in async.ts) ----

  async accept(r: QueuedRequest, done = false, on: pg.Pool | pg.PoolClient = this.pool): Promise<boolean> {
    const row = requestRowOf(r);
    const res = await this.q(
      'write',
      `INSERT INTO requests (key, source, channel, "user", thread_ts, response_url, text, now, files, interaction, received_ms, state, finished_ms)
       VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $10, $11, ${NOW_MS}, $9, CASE WHEN $9 = 'done' THEN ${NOW_MS} END)
       ON CONFLICT (key) DO NOTHING`,
      [row.key, row.source, row.channel, row.user, row.thread_ts, row.response_url, row.text, row.now, done ? 'done' : 'queued', row.files, row.interaction],
      on,
    );
    return res.rowCount === 1;
  }

  /**
   * RequestQueue.admit in one transaction. A second delivery of the same key, arriving at another
   * instance meanwhile, waits on the unique index for this transaction and then finds the key.
   */
  async admit(r: QueuedRequest, o: RateOptions, queueLimit: number): Promise<Admission> {
    requestRowOf(r); // a malformed request is refused before a connection is taken
    return this.tx('write', async (c) => {
      if (!(await this.accept(r, false, c))) return { kind: 'duplicate' };
      const rate = await this.take(r.user, o, c);
      const got = admission(rate, rate.ok ? (await this.depth(c)) - 1 : 0, queueLimit);
      if (got.kind !== 'queued') await this.finish(r.key, undefined, c);
      // idle dispatchers of every instance are woken when this commits
      else await c.query(WAKE);
      return got;
    });
  }

  /**
   * One statement: the oldest channel head that is queued or whose lease ran out, locked with
   * SKIP LOCKED (so instances claiming at the same moment take different requests instead of
   * waiting on each other), is marked running under `owner`.
   */
  async claim(owner: string, leaseMs: number, opts: { takeover?: boolean } = {}): Promise<ClaimedRequest | undefined> {
    const r = await this.q<RequestRow>(
      'write',
      `UPDATE requests SET state = 'running', owner = $1, lease_ms = ${NOW_MS} + $2, attempts = attempts + 1
       WHERE seq = (
         SELECT h.seq FROM requests h
         WHERE h.state <> 'done' AND (h.state = 'queued' OR ($3 AND h.lease_ms < ${NOW_MS}))
           AND NOT EXISTS (SELECT 1 FROM requests e WHERE e.channel = h.channel AND e.state <> 'done' AND e.seq < h.seq)
         ORDER BY h.seq LIMIT 1
         FOR UPDATE SKIP LOCKED
       )
       RETURNING ${REQUEST_COLUMNS}`,
      [owner, Math.round(leaseMs), opts.takeover !== false],
    );
    return r.rows[0] && toClaimed(r.rows[0]);
  }

  async renew(owner: string, keys: readonly string[], leaseMs: number): Promise<number> {
    if (keys.length === 0) return 0;
    const r = await this.q('write', `UPDATE requests SET lease_ms = ${NOW_MS} + $1 WHERE key = ANY($2) AND owner = $3 AND state = 'running'`, [
      Math.round(leaseMs),
      [...keys],
      owner,
    ]);
    return r.rowCount ?? 0;
  }

  async setProgress(key: string, owner: string, p: Progress): Promise<boolean> {
    const r = await this.q('write', `UPDATE requests SET progress = $1 WHERE key = $2 AND owner = $3 AND state = 'running'`, [JSON.stringify(p), key, owner]);
    return r.rowCount === 1;
  }

  async finish(key: string, owner?: string, on: pg.Pool | pg.PoolClient = this.pool): Promise<void> {
    if (owner === undefined) {
      await this.q('write', `UPDATE requests SET state = 'done', finished_ms = ${NOW_MS}, lease_ms = NULL WHERE key = $1 AND state <> 'done'`, [key], on);
    } else {
      await this.q('write', `UPDATE requests SET state = 'done', finished_ms = ${NOW_MS}, lease_ms = NULL WHERE key = $1 AND owner = $2 AND state = 'running'`, [key, owner], on);
    }
  }

  async release(key: string, owner: string): Promise<void> {
    await this.q(
      'write',
      `WITH back AS (
         UPDATE requests SET state = 'queued', owner = NULL, lease_ms = NULL, attempts = GREATEST(0, attempts - 1) WHERE key = $1 AND owner = $2 AND state = 'running'
         RETURNING 1
       )
       SELECT pg_notify('${WAKE_CHANNEL}', '') FROM back`,
      [key, owner],
    );
  }

  async depth(on: pg.Pool | pg.PoolClient = this.pool): Promise<number> {
    const r = await this.q<{ n: number }>('read', `SELECT COUNT(*)::int AS n FROM requests WHERE state <> 'done'`, [], on);
    return r.rows[0]?.n ?? 0;
  }

  async prune(keepMs: number): Promise<number> {
    const r = await this.q('write', `DELETE FROM requests WHERE state = 'done' AND finished_ms < ${NOW_MS} - $1`, [Math.round(keepMs)]);
    return r.rowCount ?? 0;
  }

  /** One statement on the user's bucket row (its lock serialises instances taking for one user). */
  async take(user: string, o: RateOptions, on: pg.Pool | pg.PoolClient = this.pool): Promise<RateDecision> {
    const u = id(user, 'user');
    checkRate(o);
    const refill = `LEAST($2::float8, r.tokens + (${NOW_MS} - r.at_ms) * $3::float8)`;
    const r = await this.q<{ tokens: number; granted: number; noticed: boolean }>(
      'write',
      `INSERT INTO user_rates AS r ("user", tokens, at_ms, notice_ms, granted) VALUES ($1, $2::float8 - 1, ${NOW_MS}, 0, 1)
       ON CONFLICT ("user") DO UPDATE SET
         tokens = ${refill} - (CASE WHEN ${refill} >= 1 THEN 1 ELSE 0 END),
         granted = (CASE WHEN ${refill} >= 1 THEN 1 WHEN ${NOW_MS} - r.notice_ms >= $4 THEN 2 ELSE 0 END),
         notice_ms = (CASE WHEN ${refill} < 1 AND ${NOW_MS} - r.notice_ms >= $4 THEN ${NOW_MS} ELSE r.notice_ms END),
         at_ms = ${NOW_MS}
       RETURNING tokens, granted, granted = 2 AS noticed`,
      [u, o.burst, o.perMinute / 60000, Math.round(o.noticeEverySeconds * 1000)],
      on,
    );
    const row = r.rows[0];
    return rateDecision(row.granted, row.tokens, row.noticed, o);
  }

  async setVariedFrom(channel: string, number: number, from: number): Promise<boolean> {
    const ch = entryChannelOf(channel, number, from);
    if (ch === null) return false;
    return this.changed('UPDATE checks SET varied_from = $1 WHERE channel = $2 AND number = $3', [from, ch, number]);
  }

  async setPosted(channel: string, number: number, posted: Posted): Promise<boolean> {
    const ch = entryChannelOf(channel, number);
    if (ch === null) return false;
    return this.changed('UPDATE checks SET posted = $1 WHERE channel = $2 AND number = $3 AND deleted_at IS NULL', [postedJsonOf(posted), ch, number]);
  }

  async tombstone(channel: string, number: number, at: string): Promise<boolean> {
    const ch = entryChannelOf(channel, number);
    if (ch === null) return false;
    return this.changed(
      `UPDATE checks SET text = '', normalized = 'null', summary = $1, posted = NULL, permalink = NULL, deleted_at = $2
       WHERE channel = $3 AND number = $4 AND deleted_at IS NULL`,
      [TOMBSTONE_SUMMARY, isoTime(at), ch, number],
    );
  }

  async recentOfUser(user: string, n: number): Promise<LogEntry[]> {
    const limit = recentLimitOf(user, n);
    if (limit === 0) return [];
    const r = await this.q<CheckRow>('read', `SELECT ${CHECK_COLUMNS} FROM checks WHERE "user" = $1 AND deleted_at IS NULL ORDER BY at DESC, id DESC LIMIT $2`, [user, limit]);
    return r.rows.map(toEntry);
  }

  async getDefaults(user: string): Promise<UserDefaults> {
    if (typeof user !== 'string') return {};
    const r = await this.q<DefaultsRow>('read', 'SELECT "user", rate, yield, mult, horizon, at FROM user_defaults WHERE "user" = $1', [user]);
    return toDefaults(r.rows[0]);
  }

  async putDefaults(user: string, d: UserDefaults, at: string): Promise<void> {
    const row = defaultsRowOf(user, d, at);
    if (emptyDefaults(d)) {
      await this.q('write', 'DELETE FROM user_defaults WHERE "user" = $1', [row.user]);
      return;
    }
    await this.q(
      'write',
      `INSERT INTO user_defaults ("user", rate, yield, mult, horizon, at) VALUES ($1, $2, $3, $4, $5, $6)
       ON CONFLICT ("user") DO UPDATE SET rate = excluded.rate, yield = excluded.yield, mult = excluded.mult, horizon = excluded.horizon, at = excluded.at`,
      [row.user, row.rate, row.yield, row.mult, row.horizon, row.at],
    );
  }

  async ping(): Promise<void> {
    await this.q('read', 'SELECT 1', []);
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.pool.end().catch(() => undefined);
  }
}
