/**
 * The SQLite backend of the store (better-sqlite3, synchronous underneath; used through AsyncStore).
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

type BetterStatement<T> = Database.Statement<unknown[], T>;
import { existsSync, mkdirSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { setting as readSetting } from '../config.js';
import { StoreError, toStoreError, type StoreOp } from './errors.js';
import { migrate, schemaVersion, SCHEMA_VERSION } from './migrations.js';
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
import type { LogEntry, LogEntryInput, Mark, OpenOptions, Posted, StoredClose, UserDefaults } from './store.js';

export { LIMITS, cutBytes } from './rows.js';

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
export function openSqlite(path: string, opts: OpenOptions = {}): SqliteStore {
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

const CHECK_COLUMNS = 'channel, number, user, at, verb, text, normalized, summary, thread_ts, permalink, delivered, varied_from, deleted_at, posted';
const MARK_COLUMNS = 'channel, symbol, spot, iv, yield, rate, vol, drift, drift_se, user, at';

/** The SQLite backend: synchronous underneath (better-sqlite3), used through the async interface (async.ts, asyncOf). */
export class SqliteStore {
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
        `INSERT INTO marks (channel, symbol, spot, iv, yield, rate, vol, drift, drift_se, user, at)
         VALUES (@channel, @symbol, @spot, @iv, @yield, @rate, @vol, @drift, @drift_se, @user, @at)
         ON CONFLICT (channel, symbol) DO UPDATE SET
           spot = excluded.spot, iv = excluded.iv, yield = excluded.yield, rate = excluded.rate,
           vol = excluded.vol, drift = excluded.drift, drift_se = excluded.drift_se,
           user = excluded.user, at = excluded.at`,
      ),
      getMark: db.prepare(`SELECT ${MARK_COLUMNS} FROM marks WHERE channel = ? AND symbol = ?`),
      listMarks: db.prepare(`SELECT ${MARK_COLUMNS} FROM marks WHERE channel = ? ORDER BY symbol`),
      getCloses: db.prepare('SELECT seq, day, close FROM closes WHERE channel = ? AND symbol = ? ORDER BY seq'),
      dropCloses: db.prepare('DELETE FROM closes WHERE channel = ? AND symbol = ?'),
      putClose: db.prepare('INSERT INTO closes (channel, symbol, seq, day, close) VALUES (?, ?, ?, ?, ?)'),
      countRejected: db.prepare(
        'INSERT INTO rejected (channel, count) VALUES (?, 1) ON CONFLICT (channel) DO UPDATE SET count = count + 1',
      ),
      rejectedCount: db.prepare('SELECT count FROM rejected WHERE channel = ?').pluck(),
      setVariedFrom: db.prepare('UPDATE checks SET varied_from = ? WHERE channel = ? AND number = ?'),
      setPosted: db.prepare('UPDATE checks SET posted = ? WHERE channel = ? AND number = ? AND deleted_at IS NULL'),
      tombstone: db.prepare(
        `UPDATE checks SET text = '', normalized = 'null', summary = ?, posted = NULL, permalink = NULL, deleted_at = ?
         WHERE channel = ? AND number = ? AND deleted_at IS NULL`,
      ),
      recentOfUser: db.prepare(`SELECT ${CHECK_COLUMNS} FROM checks WHERE user = ? AND deleted_at IS NULL ORDER BY at DESC, id DESC LIMIT ?`),
      getDefaults: db.prepare('SELECT user, rate, yield, mult, horizon, at FROM user_defaults WHERE user = ?'),
      putDefaults: db.prepare(
        `INSERT INTO user_defaults (user, rate, yield, mult, horizon, at) VALUES (@user, @rate, @yield, @mult, @horizon, @at)
         ON CONFLICT (user) DO UPDATE SET rate = excluded.rate, yield = excluded.yield, mult = excluded.mult, horizon = excluded.horizon, at = excluded.at`,
      ),
      dropDefaults: db.prepare('DELETE FROM user_defaults WHERE user = ?'),
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
    const { summaryRecord, ...row } = checkRowOf(e);
    const number = this.guard('write', () => this.allocTx.immediate(row));
    return { ...row, summary: summaryRecord, number, threadTs: null, permalink: null, delivered: 'pending', variedFrom: null, deletedAt: null, posted: null };
  }

  setThread(channel: string, number: number, threadTs: string, permalink?: string | null): boolean {
    const a = threadArgsOf(channel, number, threadTs, permalink);
    if (!a) return false;
    if (a.permalink === undefined) return this.guard('write', () => this.s.setThread.run(a.ts, a.channel, number).changes > 0);
    return this.guard('write', () => this.s.setThreadLink.run(a.ts, a.permalink, a.channel, number).changes > 0);
  }

  setDelivery(channel: string, number: number, state: 'delivered' | 'undelivered'): boolean {
    const a = deliveryArgsOf(channel, number, state);
    if (!a) return false;
    return this.guard('write', () => this.s.setDelivery.run(a.state, a.channel, number).changes > 0);
  }

  get(channel: string, number: number): LogEntry | undefined {
    if (typeof channel !== 'string' || !isEntryNumber(number)) return undefined;
    const row = this.guard('read', () => this.s.get.get(channel, number) as CheckRow | undefined);
    return row && toEntry(row);
  }

  recent(channel: string, n: number): LogEntry[] {
    const limit = recentLimitOf(channel, n);
    if (limit === 0) return [];
    const rows = this.guard('read', () => this.s.recent.all(channel, limit) as CheckRow[]);
    return rows.map(toEntry);
  }

  putMark(m: Mark): void {
    const row = markRowOf(m);
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

  getCloses(channel: string, sym: string): StoredClose[] {
    if (typeof channel !== 'string' || typeof sym !== 'string') return [];
    return this.guard('read', () => this.s.getCloses.all(channel, sym.trim().toUpperCase()) as CloseRow[]).map(toClose);
  }

  putCloses(channel: string, sym: string, closes: StoredClose[]): void {
    const r = closeRowsOf(channel, sym, closes);
    const tx = this.db.transaction(() => {
      this.s.dropCloses.run(r.channel, r.symbol);
      for (const row of r.rows) this.s.putClose.run(r.channel, r.symbol, row.seq, row.day, row.close);
    });
    this.guard('write', () => tx.immediate());
  }

  countRejected(channel: string): void {
    const ch = id(channel, 'channel');
    this.guard('write', () => this.s.countRejected.run(ch));
  }

  rejectedCount(channel: string): number {
    if (typeof channel !== 'string') return 0;
    return this.guard('read', () => (this.s.rejectedCount.get(channel) as number | undefined) ?? 0);
  }

  // ---- the request queue (see RequestQueue in async.ts); times are this host's clock in ms ----

  private q<T>(op: StoreOp, sql: string): BetterStatement<T> {
    let st = this.queueStatements.get(sql);
    if (!st) {
      st = this.guard(op, () => this.db.prepare(sql));
      this.queueStatements.set(sql, st);
    }
    return st as BetterStatement<T>;
  }
  private readonly queueStatements = new Map<string, Database.Statement>();

  accept(r: QueuedRequest, done = false): boolean {
    const row = requestRowOf(r);
    const t = Date.now();
    const st = this.q('write', `INSERT INTO requests (key, source, channel, user, thread_ts, response_url, text, now, files, interaction, received_ms, state, finished_ms)
      VALUES (@key, @source, @channel, @user, @thread_ts, @response_url, @text, @now, @files, @interaction, @t, @state, @finished) ON CONFLICT (key) DO NOTHING`);
    return this.guard('write', () => st.run({ ...row, t, state: done ? 'done' : 'queued', finished: done ? t : null }).changes === 1);
  }

  /** RequestQueue.admit: the steps below in one immediate transaction. */
  admit(r: QueuedRequest, o: RateOptions, queueLimit: number): Admission {
    const tx = this.db.transaction((): Admission => {
      if (!this.accept(r)) return { kind: 'duplicate' };
      const rate = this.take(r.user, o);
      const got = admission(rate, rate.ok ? this.depth() - 1 : 0, queueLimit);
      if (got.kind !== 'queued') this.finish(r.key);
      return got;
    });
    return this.guard('write', () => tx.immediate());
  }

  claim(owner: string, leaseMs: number, opts: { takeover?: boolean } = {}): ClaimedRequest | undefined {
    const pick = this.q('write', `SELECT h.key FROM requests h
      WHERE h.state <> 'done' AND (h.state = 'queued' OR (@takeover = 1 AND h.lease_ms < @t))
        AND NOT EXISTS (SELECT 1 FROM requests e WHERE e.channel = h.channel AND e.state <> 'done' AND e.seq < h.seq)
      ORDER BY h.seq LIMIT 1`);
    const take = this.q('write', `UPDATE requests SET state = 'running', owner = @owner, lease_ms = @until, attempts = attempts + 1
      WHERE key = @key RETURNING seq, key, source, channel, user, thread_ts, response_url, text, now, received_ms, attempts, progress, files, interaction`);
    const tx = this.db.transaction(() => {
      const t = Date.now();
      const key = pick.pluck().get({ t, takeover: opts.takeover === false ? 0 : 1 }) as string | undefined;
      if (key === undefined) return undefined;
      return take.get({ owner, until: t + leaseMs, key }) as RequestRow;
    });
    const row = this.guard('write', () => tx.immediate());
    return row && toClaimed(row);
  }

  renew(owner: string, keys: readonly string[], leaseMs: number): number {
    if (keys.length === 0) return 0;
    const st = this.q('write', `UPDATE requests SET lease_ms = @until WHERE key = @key AND owner = @owner AND state = 'running'`);
    const tx = this.db.transaction(() => {
      const until = Date.now() + leaseMs;
      let n = 0;
      for (const key of keys) n += st.run({ until, key, owner }).changes;
      return n;
    });
    return this.guard('write', () => tx.immediate());
  }

  setProgress(key: string, owner: string, p: Progress): boolean {
    const st = this.q('write', `UPDATE requests SET progress = @p WHERE key = @key AND owner = @owner AND state = 'running'`);
    return this.guard('write', () => st.run({ p: JSON.stringify(p), key, owner }).changes === 1);
  }

  finish(key: string, owner?: string): void {
    const t = Date.now();
    if (owner === undefined) {
      const st = this.q('write', `UPDATE requests SET state = 'done', finished_ms = @t, lease_ms = NULL WHERE key = @key AND state <> 'done'`);
      this.guard('write', () => st.run({ t, key }));
    } else {
      const st = this.q('write', `UPDATE requests SET state = 'done', finished_ms = @t, lease_ms = NULL WHERE key = @key AND owner = @owner AND state = 'running'`);
      this.guard('write', () => st.run({ t, key, owner }));
    }
  }

  release(key: string, owner: string): void {
    const st = this.q('write', `UPDATE requests SET state = 'queued', owner = NULL, lease_ms = NULL, attempts = MAX(0, attempts - 1)
      WHERE key = @key AND owner = @owner AND state = 'running'`);
    this.guard('write', () => st.run({ key, owner }));
  }

  depth(): number {
    const st = this.q<number>('read', `SELECT COUNT(*) FROM requests WHERE state <> 'done'`);
    return this.guard('read', () => st.pluck().get() as number);
  }

  prune(keepMs: number): number {
    const st = this.q('write', `DELETE FROM requests WHERE state = 'done' AND finished_ms < @cut`);
    return this.guard('write', () => st.run({ cut: Date.now() - keepMs }).changes);
  }

  /** Takes one request from the user's bucket (refilled at perMinute up to burst). */
  take(user: string, o: RateOptions): RateDecision {
    const u = id(user, 'user');
    checkRate(o);
    const st = this.q('write', `INSERT INTO user_rates AS r (user, tokens, at_ms, notice_ms, granted) VALUES (@u, @burst - 1, @t, 0, 1)
      ON CONFLICT (user) DO UPDATE SET
        tokens = MIN(@burst, r.tokens + (@t - r.at_ms) * @perMs) - (CASE WHEN MIN(@burst, r.tokens + (@t - r.at_ms) * @perMs) >= 1 THEN 1 ELSE 0 END),
        granted = (CASE WHEN MIN(@burst, r.tokens + (@t - r.at_ms) * @perMs) >= 1 THEN 1 WHEN @t - r.notice_ms >= @noticeMs THEN 2 ELSE 0 END),
        notice_ms = (CASE WHEN MIN(@burst, r.tokens + (@t - r.at_ms) * @perMs) < 1 AND @t - r.notice_ms >= @noticeMs THEN @t ELSE r.notice_ms END),
        at_ms = @t
      RETURNING tokens, granted, notice_ms`);
    const t = Date.now();
    const row = this.guard('write', () =>
      st.get({ u, burst: o.burst, t, perMs: o.perMinute / 60000, noticeMs: o.noticeEverySeconds * 1000 }) as { tokens: number; granted: number; notice_ms: number },
    );
    return rateDecision(row.granted, row.tokens, row.granted === 2, o);
  }

  setVariedFrom(channel: string, number: number, from: number): boolean {
    const ch = entryChannelOf(channel, number, from);
    if (ch === null) return false;
    return this.guard('write', () => this.s.setVariedFrom.run(from, ch, number).changes > 0);
  }

  setPosted(channel: string, number: number, posted: Posted): boolean {
    const ch = entryChannelOf(channel, number);
    if (ch === null) return false;
    const j = postedJsonOf(posted);
    return this.guard('write', () => this.s.setPosted.run(j, ch, number).changes > 0);
  }

  tombstone(channel: string, number: number, at: string): boolean {
    const ch = entryChannelOf(channel, number);
    if (ch === null) return false;
    const when = isoTime(at);
    return this.guard('write', () => this.s.tombstone.run(TOMBSTONE_SUMMARY, when, ch, number).changes > 0);
  }

  recentOfUser(user: string, n: number): LogEntry[] {
    const limit = recentLimitOf(user, n);
    if (limit === 0) return [];
    return this.guard('read', () => this.s.recentOfUser.all(user, limit) as CheckRow[]).map(toEntry);
  }

  getDefaults(user: string): UserDefaults {
    if (typeof user !== 'string') return {};
    return toDefaults(this.guard('read', () => this.s.getDefaults.get(user) as DefaultsRow | undefined));
  }

  putDefaults(user: string, d: UserDefaults, at: string): void {
    const row = defaultsRowOf(user, d, at);
    if (emptyDefaults(d)) this.guard('write', () => this.s.dropDefaults.run(row.user));
    else this.guard('write', () => this.s.putDefaults.run(row));
  }

  /** answers when the file can be read */
  ping(): void {
    this.guard('read', () => this.db.prepare('SELECT 1').get());
  }

  batch<T>(fn: () => T): T {
    return this.guard('write', () => this.db.transaction(fn).immediate());
  }

  close(): void {
    if (this.db.open) this.db.close();
  }
}

