/**
 * The log and the marks on a real SQLite file in a temporary folder.
 *
 * What the checks rest on (outside this project):
 * - SQLite documentation, "Result and Error Codes": SQLITE_READONLY (8), SQLITE_BUSY (5),
 *   SQLITE_FULL (13), SQLITE_CANTOPEN (14), SQLITE_NOTADB (26); better-sqlite3 reports them as
 *   SqliteError with `code` set to the name.
 * - SQLite documentation, "PRAGMA max_page_count": inserts beyond the cap fail with SQLITE_FULL,
 *   which is how a full disk is produced here for real (no mock).
 * - SQLite documentation, "PRAGMA user_version" and "ALTER TABLE ADD COLUMN" (existing rows take
 *   the column's default).
 * - The behaviour a user expects of a numbered per-channel log (common practice): numbers start at
 *   1 in each channel, increase by one without gaps, and a channel never sees another's entries.
 * Process-level checks (concurrent writers, kill -9) are in processes.test.ts.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import Database from 'better-sqlite3';
import { chmodSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  LIMITS,
  MIGRATIONS,
  SCHEMA_VERSION,
  StoreError,
  defaultDbPath,
  migrate,
  type LogEntryInput,
} from '../../src/store/store.js';
import { openSqlite, type SqliteStore } from '../../src/store/sqlite.js';

let dir: string;
const opened: SqliteStore[] = [];
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'kolmo-store-test-'));
});
afterEach(() => {
  for (const s of opened.splice(0)) s.close();
  chmodSync(dir, 0o755);
  rmSync(dir, { recursive: true, force: true });
});

function open(name = 'log.db', opts?: Parameters<typeof openSqlite>[1]): SqliteStore {
  const s = openSqlite(join(dir, name), opts);
  opened.push(s);
  return s;
}

let seq = 0;
function input(channel: string, over: Partial<LogEntryInput> = {}): LogEntryInput {
  seq++;
  return {
    channel,
    user: 'U0MAYA',
    at: '2027-01-04T15:30:00.000Z',
    verb: 'check',
    text: `check +1 call 105 2027-03-19 @3.10 spot 100 on FERNWK #${seq}`,
    normalized: JSON.stringify({ verb: 'check', seq }),
    summary: { position: 'long 1 call 105', probProfit: 0.42, expectedPnl: 31.5, viewEdge: 12.25 },
    ...over,
  };
}

/** Runs fn and returns the StoreError it throws (fails the test if it throws nothing or something else). */
function storeError(fn: () => unknown): StoreError {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(StoreError);
    return e as StoreError;
  }
  throw new Error('expected a StoreError, nothing was thrown');
}

describe('log entries', () => {
  it('numbers each channel from 1 without gaps and returns what was stored', () => {
    const s = open();
    const a1 = s.appendCheck(input('C0DESKA'));
    const a2 = s.appendCheck(input('C0DESKA'));
    const b1 = s.appendCheck(input('C0DESKB'));
    const a3 = s.appendCheck(input('C0DESKA'));
    expect([a1.number, a2.number, a3.number, b1.number]).toEqual([1, 2, 3, 1]);
    expect(a1.delivered).toBe('pending');
    expect(a1.threadTs).toBeNull();
    const back = s.get('C0DESKA', 2);
    expect(back).toEqual(a2);
    expect(back?.summary.probProfit).toBe(0.42);
    expect(JSON.parse(back!.normalized)).toEqual(JSON.parse(a2.normalized));
  });

  it('keeps entries across close and reopen, and numbering continues', () => {
    let s = open();
    s.appendCheck(input('C0DESKA'));
    s.appendCheck(input('C0DESKA'));
    s.close();
    s = open();
    expect(s.get('C0DESKA', 2)?.number).toBe(2);
    expect(s.appendCheck(input('C0DESKA')).number).toBe(3);
  });

  it('records the thread, permalink and delivery state of an entry', () => {
    const s = open();
    s.appendCheck(input('C0DESKA'));
    expect(s.setThread('C0DESKA', 1, '1799999999.000100', 'https://example.invalid/archives/C0DESKA/p1799999999000100')).toBe(true);
    expect(s.setDelivery('C0DESKA', 1, 'delivered')).toBe(true);
    let e = s.get('C0DESKA', 1)!;
    expect(e.threadTs).toBe('1799999999.000100');
    expect(e.permalink).toContain('p1799999999000100');
    expect(e.delivered).toBe('delivered');
    // permalink left out keeps the stored one; null clears it
    s.setThread('C0DESKA', 1, '1799999999.000200');
    e = s.get('C0DESKA', 1)!;
    expect(e.threadTs).toBe('1799999999.000200');
    expect(e.permalink).toContain('p1799999999000100');
    s.setThread('C0DESKA', 1, '1799999999.000300', null);
    expect(s.get('C0DESKA', 1)!.permalink).toBeNull();
    expect(s.setDelivery('C0DESKA', 1, 'undelivered')).toBe(true);
    expect(s.get('C0DESKA', 1)!.delivered).toBe('undelivered');
    // no such entry
    expect(s.setThread('C0DESKA', 9, '1.2')).toBe(false);
    expect(s.setDelivery('C0DESKA', 9, 'delivered')).toBe(false);
  });

  it('recent returns the newest first and clamps n', () => {
    const s = open();
    for (let i = 0; i < 7; i++) s.appendCheck(input('C0DESKA'));
    expect(s.recent('C0DESKA', 3).map((e) => e.number)).toEqual([7, 6, 5]);
    expect(s.recent('C0DESKA', 50).map((e) => e.number)).toEqual([7, 6, 5, 4, 3, 2, 1]);
    expect(s.recent('C0DESKA', 2.9).map((e) => e.number)).toEqual([7, 6]);
    expect(s.recent('C0DESKA', 0)).toEqual([]);
    expect(s.recent('C0DESKA', -4)).toEqual([]);
    expect(s.recent('C0DESKA', Number.NaN)).toEqual([]);
    expect(s.recent('C0DESKA', Number.POSITIVE_INFINITY)).toHaveLength(7);
    expect(s.recent('C0NOBODY', 10)).toEqual([]);
  });

  it('get of a number that is not a positive integer is simply absent', () => {
    const s = open();
    s.appendCheck(input('C0DESKA'));
    for (const n of [0, -1, 1.5, Number.NaN, Number.POSITIVE_INFINITY, 2]) expect(s.get('C0DESKA', n)).toBeUndefined();
  });
});

describe('isolation between channels', () => {
  it("another channel's number looks exactly like a number that does not exist", () => {
    const s = open();
    for (let i = 0; i < 5; i++) s.appendCheck(input('C0DESKA'));
    s.appendCheck(input('C0DESKB'));
    // C0DESKB has #1 only: its #3 and #5 exist in C0DESKA but must stay invisible
    expect(s.get('C0DESKB', 3)).toBeUndefined();
    expect(s.get('C0DESKB', 5)).toBeUndefined();
    expect(s.get('C0DESKB', 3)).toEqual(s.get('C0DESKB', 99));
    expect(s.recent('C0DESKB', 50).map((e) => [e.channel, e.number])).toEqual([['C0DESKB', 1]]);
    expect(s.recent('C0DESKA', 50).every((e) => e.channel === 'C0DESKA')).toBe(true);
    // writes through another channel's number change nothing
    expect(s.setThread('C0DESKB', 4, '1.1')).toBe(false);
    expect(s.setDelivery('C0DESKB', 4, 'delivered')).toBe(false);
    expect(s.get('C0DESKA', 4)!.threadTs).toBeNull();
    expect(s.get('C0DESKA', 4)!.delivered).toBe('pending');
  });

  it('channel ids are compared exactly (no case folding, no wildcard)', () => {
    const s = open();
    s.appendCheck(input('C0DESKA'));
    expect(s.get('c0deska', 1)).toBeUndefined();
    expect(s.get('C0DESK%', 1)).toBeUndefined();
    expect(s.recent('C0DESK_', 5)).toEqual([]);
    // ids are bound as parameters, never spliced into SQL
    const odd = "C0'; DROP TABLE checks; --";
    expect(s.appendCheck(input(odd)).number).toBe(1);
    expect(s.get(odd, 1)?.channel).toBe(odd);
    expect(s.get('C0DESKA', 1)?.number).toBe(1);
  });

  it("':memory:' gives a private log: two in-memory stores share nothing", () => {
    const a = openSqlite(':memory:');
    const b = openSqlite(':memory:');
    opened.push(a, b);
    a.appendCheck(input('C0DESKA'));
    a.appendCheck(input('C0DESKA'));
    expect(b.get('C0DESKA', 1)).toBeUndefined();
    expect(b.appendCheck(input('C0DESKA')).number).toBe(1);
  });

  it('marks and rejected counters belong to one channel', () => {
    const s = open();
    s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, user: 'U0MAYA', at: '2027-01-04T15:00:00Z' });
    expect(s.getMark('C0DESKB', 'FERNWK')).toBeUndefined();
    expect(s.listMarks('C0DESKB')).toEqual([]);
    s.countRejected('C0DESKA');
    s.countRejected('C0DESKA');
    s.countRejected('C0DESKB');
    expect(s.rejectedCount('C0DESKA')).toBe(2);
    expect(s.rejectedCount('C0DESKB')).toBe(1);
    expect(s.rejectedCount('C0DESKC')).toBe(0);
  });

  it('matches a simple model over random sequences of appends and reads (fast-check)', () => {
    const s = open();
    const channels = ['C0DESKA', 'C0DESKB', 'C0DESKC'];
    const op = fc.oneof(
      fc.record({ kind: fc.constant('append' as const), ch: fc.constantFrom(...channels) }),
      fc.record({ kind: fc.constant('get' as const), ch: fc.constantFrom(...channels), n: fc.integer({ min: -2, max: 40 }) }),
      fc.record({ kind: fc.constant('recent' as const), ch: fc.constantFrom(...channels), n: fc.integer({ min: 0, max: 12 }) }),
    );
    // model: per channel, the list of tags of appended entries in order
    const model = new Map<string, string[]>(channels.map((c) => [c, []]));
    let tag = 0;
    fc.assert(
      fc.property(fc.array(op, { maxLength: 30 }), (ops) => {
        for (const o of ops) {
          const list = model.get(o.ch)!;
          if (o.kind === 'append') {
            const t = `t${tag++}`;
            const e = s.appendCheck(input(o.ch, { normalized: JSON.stringify({ t }) }));
            list.push(t);
            expect(e.number).toBe(list.length);
          } else if (o.kind === 'get') {
            const e = s.get(o.ch, o.n);
            if (o.n >= 1 && o.n <= list.length) expect(JSON.parse(e!.normalized).t).toBe(list[o.n - 1]);
            else expect(e).toBeUndefined();
          } else {
            const got = s.recent(o.ch, o.n).map((e) => JSON.parse(e.normalized).t as string);
            expect(got).toEqual(list.slice(Math.max(0, list.length - o.n)).reverse());
          }
        }
      }),
      { numRuns: 60 },
    );
  });
});

describe('marks', () => {
  it('stores, replaces as a whole and lists a channel’s marks by symbol', () => {
    const s = open();
    s.putMark({ channel: 'C0DESKA', symbol: 'fernwk', spot: 84.2, iv: 0.31, yield: 0.012, user: 'U0MAYA', at: '2027-01-04T15:00:00Z' });
    s.putMark({ channel: 'C0DESKA', symbol: 'BRIXLO', spot: 12.5, rate: 0.045, user: 'U0MAYA', at: '2027-01-04T15:01:00Z' });
    // symbols are case-insensitive words (docs/design.md §2) and kept in upper case
    expect(s.getMark('C0DESKA', 'FERNWK')).toEqual({
      channel: 'C0DESKA', symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, user: 'U0MAYA', at: '2027-01-04T15:00:00Z',
    });
    expect(s.getMark('C0DESKA', 'Fernwk')?.spot).toBe(84.2);
    // a new mark replaces the snapshot: the iv not given again is gone
    s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 85, user: 'U0OREN', at: '2027-01-05T15:00:00Z' });
    const m = s.getMark('C0DESKA', 'FERNWK')!;
    expect(m.spot).toBe(85);
    expect(m.iv).toBeUndefined();
    expect(m.user).toBe('U0OREN');
    expect(s.listMarks('C0DESKA').map((x) => x.symbol)).toEqual(['BRIXLO', 'FERNWK']);
  });

  it('refuses non-finite numbers and missing identifiers with a clear StoreError', () => {
    const s = open();
    const base = { channel: 'C0DESKA', symbol: 'FERNWK', user: 'U0MAYA', at: '2027-01-04T15:00:00Z' };
    for (const bad of [{ spot: Number.NaN }, { iv: Number.POSITIVE_INFINITY }, { rate: '4.5%' as unknown as number }]) {
      const e = storeError(() => s.putMark({ ...base, ...bad }));
      expect(e.code).toBe('invalid');
      expect(e.message).toMatch(/must be a finite number/);
    }
    expect(storeError(() => s.putMark({ ...base, symbol: '  ' })).message).toMatch(/symbol is missing/);
    expect(storeError(() => s.putMark({ ...base, channel: '' })).message).toMatch(/channel is missing/);
    expect(storeError(() => s.putMark({ ...base, at: 'yesterday' })).message).toMatch(/ISO date-time/);
    expect(s.listMarks('C0DESKA')).toEqual([]);
  });
});

describe('input limits', () => {
  it('cuts the request text to 4 KB on a character boundary and marks the cut', () => {
    const s = open();
    // "€" is 3 bytes in UTF-8: 2000 of them are 6000 bytes
    const long = 'check ' + '€'.repeat(2000);
    const e = s.appendCheck(input('C0DESKA', { text: long }));
    const stored = s.get('C0DESKA', e.number)!.text;
    expect(Buffer.byteLength(stored, 'utf8')).toBeLessThanOrEqual(LIMITS.textBytes);
    expect(stored.endsWith('…')).toBe(true);
    expect(long.startsWith(stored.slice(0, -1))).toBe(true);
    expect(stored).not.toContain('\uFFFD');
    // a text at the limit is kept whole
    const exact = 'x'.repeat(LIMITS.textBytes);
    expect(s.appendCheck(input('C0DESKA', { text: exact })).text).toBe(exact);
  });

  it('refuses a parsed request that is too large or not JSON, without using up a number', () => {
    const s = open();
    s.appendCheck(input('C0DESKA'));
    const big = JSON.stringify({ pad: 'x'.repeat(LIMITS.normalizedBytes) });
    const e1 = storeError(() => s.appendCheck(input('C0DESKA', { normalized: big })));
    expect(e1.code).toBe('invalid');
    expect(e1.message).toMatch(/^the log could not be written: the request is too large to store/);
    expect(storeError(() => s.appendCheck(input('C0DESKA', { normalized: '{not json' }))).code).toBe('invalid');
    expect(s.appendCheck(input('C0DESKA')).number).toBe(2);
  });

  it('drops non-finite numbers from the summary instead of storing null or failing', () => {
    const s = open();
    const e = s.appendCheck(input('C0DESKA', { summary: { position: 'short put', probProfit: Number.NaN, expectedPnl: -Infinity, viewEdge: 3 } }));
    const back = s.get('C0DESKA', e.number)!;
    expect(back.summary).toEqual({ position: 'short put', viewEdge: 3 });
    expect('probProfit' in back.summary).toBe(false);
  });

  it('refuses missing or over-long identifiers (cutting a channel id could merge channels)', () => {
    const s = open();
    expect(storeError(() => s.appendCheck(input('')))).toMatchObject({ code: 'invalid' });
    expect(storeError(() => s.appendCheck(input('C'.repeat(LIMITS.idChars + 1)))).message).toMatch(/longer than/);
    expect(storeError(() => s.appendCheck(input('C0DESKA', { user: '' }))).message).toMatch(/user is missing/);
    expect(storeError(() => s.appendCheck(input('C0DESKA', { at: 'now' }))).message).toMatch(/ISO date-time/);
    expect(s.recent('C0DESKA', 5)).toEqual([]);
  });
});

describe('faults become StoreError with a code and a user-facing message', () => {
  it('read-only: a log opened with readonly:true reads but refuses every write', () => {
    // Running as root, chmod 0444 does not stop writes (root bypasses file permissions), so the
    // read-only case is produced with SQLite's own read-only open (SQLITE_OPEN_READONLY).
    const path = join(dir, 'log.db');
    const w = openSqlite(path);
    w.appendCheck(input('C0DESKA'));
    w.close();
    const r = open('log.db', { readonly: true });
    expect(r.get('C0DESKA', 1)?.number).toBe(1);
    const e = storeError(() => r.appendCheck(input('C0DESKA')));
    expect(e.code).toBe('readonly');
    expect(e.sqliteCode).toMatch(/^SQLITE_READONLY/);
    expect(e.message).toMatch(/^the log could not be written: the log file is read-only/);
    expect(storeError(() => r.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 1, user: 'U', at: '2027-01-04' })).code).toBe('readonly');
    expect(storeError(() => r.countRejected('C0DESKA')).code).toBe('readonly');
    expect(storeError(() => r.setDelivery('C0DESKA', 1, 'delivered')).code).toBe('readonly');
    expect(r.get('C0DESKA', 1)?.delivered).toBe('pending');
  });

  // chmod 0444 on the file, with a writer process that is not root: processes.test.ts

  it('full: a real SQLITE_FULL (size cap via PRAGMA max_page_count) gives code "full" and loses nothing stored', () => {
    const s = open('log.db', { maxBytes: 160 * 1024 });
    const text = 'check ' + 'x'.repeat(3000);
    let last = 0;
    let err: StoreError | undefined;
    for (let i = 0; i < 500 && !err; i++) {
      try {
        last = s.appendCheck(input('C0DESKA', { text })).number;
      } catch (e) {
        expect(e).toBeInstanceOf(StoreError);
        err = e as StoreError;
      }
    }
    expect(err, 'the cap was never reached').toBeDefined();
    expect(err!.code).toBe('full');
    expect(err!.sqliteCode).toBe('SQLITE_FULL');
    expect(err!.message).toBe('the log could not be written: disk full');
    expect(last).toBeGreaterThan(5);
    // everything acknowledged is still there, the failed append used no number
    for (let n = 1; n <= last; n++) expect(s.get('C0DESKA', n)?.number).toBe(n);
    expect(s.recent('C0DESKA', 1)[0].number).toBe(last);
    s.close();
    const t = open('log.db');
    expect(t.appendCheck(input('C0DESKA')).number).toBe(last + 1);
    const db = new Database(join(dir, 'log.db'), { readonly: true });
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
    db.close();
  });

  it('busy: another connection holding the write lock past the timeout gives code "busy"; the number is not used up', () => {
    const path = join(dir, 'log.db');
    const s = open('log.db', { busyTimeoutMs: 150 });
    s.appendCheck(input('C0DESKA'));
    const other = new Database(path);
    other.exec('BEGIN IMMEDIATE');
    try {
      const e = storeError(() => s.appendCheck(input('C0DESKA')));
      expect(e.code).toBe('busy');
      expect(e.sqliteCode).toMatch(/^SQLITE_BUSY/);
      expect(e.message).toMatch(/^the log could not be written: the log is busy/);
      // readers are not blocked by a writer in WAL mode
      expect(s.get('C0DESKA', 1)?.number).toBe(1);
    } finally {
      other.exec('ROLLBACK');
      other.close();
    }
    expect(s.appendCheck(input('C0DESKA')).number).toBe(2);
  });

  it('unavailable: a missing folder, a file that is not a database, a log from a newer version', () => {
    const e1 = storeError(() => openSqlite(join(dir, 'no-such-folder', 'log.db')));
    expect(e1.code).toBe('unavailable');
    expect(e1.message).toMatch(/^the log could not be opened: the log folder does not exist/);

    const junk = join(dir, 'junk.db');
    writeFileSync(junk, 'this is a text file, not a database '.repeat(200));
    const e2 = storeError(() => openSqlite(junk));
    expect(e2.code).toBe('unavailable');
    expect(e2.message).toMatch(/not a Kolmo log/);
    expect(readFileSync(junk, 'utf8')).toMatch(/^this is a text file/);

    const newer = join(dir, 'newer.db');
    const db = new Database(newer);
    db.pragma(`user_version = ${SCHEMA_VERSION + 5}`);
    db.close();
    const e3 = storeError(() => openSqlite(newer));
    expect(e3.code).toBe('unavailable');
    expect(e3.message).toMatch(/newer version of Kolmo/);
    const check = new Database(newer, { readonly: true });
    expect(check.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION + 5);
    check.close();

    const e4 = storeError(() => openSqlite(join(dir, 'absent.db'), { readonly: true }));
    expect(e4.code).toBe('unavailable');
    expect(e4.sqliteCode).toMatch(/^SQLITE_CANTOPEN/);
    expect(e4.message).toMatch(/^the log could not be opened: the log file cannot be opened/);
  });

  it('a closed store answers with a StoreError, not a raw exception', () => {
    const s = openSqlite(join(dir, 'log.db'));
    s.close();
    s.close(); // twice is harmless
    const e = storeError(() => s.recent('C0DESKA', 5));
    expect(e.code).toBe('unavailable');
    expect(e.message).toMatch(/closed/);
  });
});

describe('durability settings', () => {
  it('opens the file in WAL mode, which stays set in the file', () => {
    const path = join(dir, 'log.db');
    open('log.db');
    // journal_mode is persistent in the file (SQLite docs, "Write-Ahead Logging" §persistence)
    const db = new Database(path, { readonly: true });
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    db.close();
    expect(existsSync(path + '-wal')).toBe(true);
  });
});

describe('migrations', () => {
  function tableColumns(path: string): string[] {
    const db = new Database(path, { readonly: true });
    const cols = (db.pragma('table_info(checks)') as { name: string }[]).map((c) => c.name);
    db.close();
    return cols;
  }

  it('the migration list is ordered 1..n and the current version is its length', () => {
    expect(MIGRATIONS.map((m) => m.version)).toEqual(MIGRATIONS.map((_, i) => i + 1));
    expect(SCHEMA_VERSION).toBe(MIGRATIONS.length);
    expect(SCHEMA_VERSION).toBeGreaterThanOrEqual(2);
  });

  it('an empty file is brought to the current version', () => {
    const path = join(dir, 'empty.db');
    writeFileSync(path, '');
    const s = open('empty.db');
    expect(s.appendCheck(input('C0DESKA')).number).toBe(1);
    const db = new Database(path, { readonly: true });
    expect(db.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION);
    db.close();
    expect(tableColumns(path)).toEqual(expect.arrayContaining(['channel', 'number', 'delivered', 'permalink']));
  });

  it('a version-1 file keeps its rows; new columns take their defaults; numbering continues', () => {
    const path = join(dir, 'v1.db');
    const db = new Database(path);
    expect(migrate(db, 1)).toEqual({ from: 0, to: 1 });
    expect(db.pragma('user_version', { simple: true })).toBe(1);
    expect(tableColumns(path)).not.toContain('delivered');
    const ins = db.prepare(
      `INSERT INTO checks (channel, number, user, at, verb, text, normalized, summary, thread_ts)
       VALUES (?, ?, 'U0MAYA', '2026-11-02T09:00:00Z', 'check', ?, '{"verb":"check"}', '{"position":"long call","probProfit":0.4}', ?)`,
    );
    ins.run('C0DESKA', 1, 'check +1 call 105', '1790000000.000100');
    ins.run('C0DESKA', 2, 'check +1 put 95', null);
    ins.run('C0DESKB', 1, 'check -1 put 90', null);
    db.prepare('INSERT INTO channels (channel, next_number) VALUES (?, ?)').run('C0DESKA', 3);
    db.prepare('INSERT INTO channels (channel, next_number) VALUES (?, ?)').run('C0DESKB', 2);
    db.prepare(`INSERT INTO marks (channel, symbol, spot, iv, user, at) VALUES ('C0DESKA', 'FERNWK', 84.2, 0.31, 'U0MAYA', '2026-11-02T09:00:00Z')`).run();
    db.close();

    const s = open('v1.db');
    const a1 = s.get('C0DESKA', 1)!;
    expect(a1.text).toBe('check +1 call 105');
    expect(a1.summary).toEqual({ position: 'long call', probProfit: 0.4 });
    expect(a1.threadTs).toBe('1790000000.000100');
    expect(a1.permalink).toBeNull();
    expect(a1.delivered).toBe('delivered'); // it had a thread, so it was answered
    expect(s.get('C0DESKA', 2)!.delivered).toBe('pending');
    expect(s.get('C0DESKB', 1)!.text).toBe('check -1 put 90');
    expect(s.getMark('C0DESKA', 'FERNWK')).toMatchObject({ spot: 84.2, iv: 0.31 });
    // version 3: an old mark carries no view, and the channel has no stored price history yet
    const m = s.getMark('C0DESKA', 'FERNWK')!;
    expect([m.vol, m.drift, m.driftSe]).toEqual([undefined, undefined, undefined]);
    expect(s.getCloses('C0DESKA', 'FERNWK')).toEqual([]);
    expect(s.appendCheck(input('C0DESKA')).number).toBe(3);
    expect(s.appendCheck(input('C0DESKB')).number).toBe(2);
    const check = new Database(path, { readonly: true });
    expect(check.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION);
    check.close();
  });

  it('a version-5 file with requests in its queue keeps them: after v6 they are claimed as typed requests (no interaction)', () => {
    const path = join(dir, 'v5.db');
    const db = new Database(path);
    expect(migrate(db, 5)).toEqual({ from: 0, to: 5 });
    db.prepare(
      `INSERT INTO requests (key, source, channel, user, text, now, received_ms, progress)
       VALUES (?, 'command', 'C0DESKA', 'U0MAYA', ?, '2026-11-02T09:00:00.000Z', ?, ?)`,
    ).run('cmd:old-1', 'check +1 call 105 exp 19Mar27 spot 100 iv 25%', Date.now(), '{"rootTs":"1790000000.000100"}');
    db.close();
    const s = open('v5.db');
    const c = s.claim('inst-a', 10000)!;
    expect(c).toMatchObject({ key: 'cmd:old-1', source: 'command', channel: 'C0DESKA', user: 'U0MAYA', text: 'check +1 call 105 exp 19Mar27 spot 100 iv 25%', attempts: 1 });
    expect(c.progress).toEqual({ rootTs: '1790000000.000100' });
    expect(c.interaction).toBeUndefined();
    expect(s.claim('inst-a', 10000)).toBeUndefined();
    const check = new Database(path, { readonly: true });
    expect(check.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION);
    check.close();
  });

  it('a read-only old file is refused with a message saying how to upgrade it', () => {
    const path = join(dir, 'v1.db');
    const db = new Database(path);
    migrate(db, 1);
    db.close();
    const e = storeError(() => openSqlite(path, { readonly: true }));
    expect(e.code).toBe('readonly');
    expect(e.message).toMatch(/open it once with write access/);
  });

  it('a failing migration leaves the file at its previous version with nothing half-done', () => {
    const path = join(dir, 'fail.db');
    const db = new Database(path);
    migrate(db, 1);
    const broken = [
      MIGRATIONS[0],
      {
        version: 2,
        description: 'creates a table, then fails',
        up(d: Database.Database) {
          d.exec('CREATE TABLE half_done (x INTEGER)');
          d.exec('ALTER TABLE no_such_table ADD COLUMN y TEXT');
        },
      },
    ];
    expect(() => migrate(db, 2, broken)).toThrow();
    expect(db.pragma('user_version', { simple: true })).toBe(1);
    expect(db.prepare("SELECT COUNT(*) FROM sqlite_master WHERE name = 'half_done'").pluck().get()).toBe(0);
    db.close();
  });
});

describe('defaultDbPath', () => {
  it('uses KOLMO_DB when set, else ./data/kolmo.db, and creates the folder', () => {
    const saved = process.env.KOLMO_DB;
    const cwd = process.cwd();
    try {
      process.env.KOLMO_DB = join(dir, 'nested', 'deeper', 'desk.db');
      expect(defaultDbPath()).toBe(join(dir, 'nested', 'deeper', 'desk.db'));
      expect(existsSync(join(dir, 'nested', 'deeper'))).toBe(true);
      delete process.env.KOLMO_DB;
      mkdirSync(join(dir, 'work'));
      process.chdir(join(dir, 'work'));
      expect(defaultDbPath()).toBe(join(dir, 'work', 'data', 'kolmo.db'));
      expect(existsSync(join(dir, 'work', 'data'))).toBe(true);
    } finally {
      process.chdir(cwd);
      if (saved === undefined) delete process.env.KOLMO_DB;
      else process.env.KOLMO_DB = saved;
    }
  });
});
