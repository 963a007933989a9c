/**
 * Several processes on one log file, and a process killed with SIGKILL in the middle of writing.
 *
 * The child processes run the real store code: fixtures/compile.ts compiles src/store/*.ts with
 * the project's TypeScript compiler into a temporary folder that every user can read, with the
 * packages it loads copied in, before the tests (Node 20 cannot run .ts itself, and dist/ is only
 * fresh after `npm test`'s build step; the checkout may sit in a folder only its owner can enter). The child is
 * fixtures/writer.mjs; it prints "ACK <channel> <number> <seq>" after each appendCheck returned.
 *
 * What the checks rest on:
 * - SQLite documentation, "File Locking And Concurrency" and "Write-Ahead Logging": one writer at a
 *   time across processes; BEGIN IMMEDIATE takes the write lock before the read, so a counter read
 *   and bumped inside it cannot be read by a second writer in between.
 * - SQLite documentation, "PRAGMA synchronous": in WAL mode, NORMAL loses no committed transaction
 *   when the application crashes (only on power loss or OS crash); FULL also survives those.
 *   A kill -9 of the process is an application crash, so both levels must keep every ACK.
 * - SQLite documentation, "PRAGMA integrity_check": "ok" when the file has no corruption.
 * - Node.js documentation, "A note on process I/O": writes to pipes are synchronous on Linux, so
 *   an ACK line in the parent means appendCheck had returned in the child.
 */
import { afterAll, afterEach, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createInterface } from 'node:readline';
import { openSqlite, type SqliteStore } from '../../src/store/sqlite.js';
import { compileStore, type CompiledStore } from './fixtures/compile.js';

let compiled: CompiledStore;
beforeAll(() => {
  compiled = compileStore();
});
afterAll(() => compiled?.cleanup());

let dir: string;
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'kolmo-store-proc-'));
});
afterEach(() => {
  chmodSync(dir, 0o700);
  rmSync(dir, { recursive: true, force: true });
});

interface Ack {
  channel: string;
  number: number;
  seq: number;
}

interface Writer {
  child: ChildProcessWithoutNullStreams;
  acks: Ack[];
  ready: Promise<void>;
  /** resolves with the exit code (or the signal name) once the child's output is fully read */
  done: Promise<number | string>;
  stderr: () => string;
  /** "ERR <code> <op> <message>" lines */
  errors: string[];
  onAck?: (a: Ack) => void;
}

interface WriterConfig {
  db: string;
  mode: 'append';
  user: string;
  channels: string[];
  count: number;
  synchronous?: 'normal' | 'full';
  waitForGo?: boolean;
}

function startWriter(cfg: WriterConfig, as?: { uid: number; gid: number }): Writer {
  // the child runs from the staged folder, which every user can read (not from the checkout)
  const child = spawn(process.execPath, [compiled.writerScript, compiled.storeUrl, JSON.stringify(cfg)], { stdio: 'pipe', cwd: compiled.dir, ...as });
  let err = '';
  child.stderr.on('data', (d: Buffer) => (err += d.toString()));
  const w: Writer = { child, acks: [], errors: [], ready: Promise.resolve(), done: Promise.resolve(0), stderr: () => err };
  let readyResolve!: () => void;
  w.ready = new Promise((res) => (readyResolve = res));
  const rl = createInterface({ input: child.stdout });
  rl.on('line', (line) => {
    if (line === 'READY') readyResolve();
    if (line.startsWith('ERR ')) w.errors.push(line.slice(4));
    const m = /^ACK (\S+) (\d+) (\d+)$/.exec(line);
    if (m) {
      const a = { channel: m[1], number: Number(m[2]), seq: Number(m[3]) };
      w.acks.push(a);
      w.onAck?.(a);
    }
  });
  const closed = new Promise<void>((res) => rl.on('close', res));
  const exited = new Promise<number | string>((res) => child.on('exit', (code, signal) => res(code ?? signal ?? -1)));
  w.done = Promise.all([closed, exited]).then(([, c]) => c);
  return w;
}

function integrity(path: string): string {
  const db = new Database(path);
  try {
    return db.pragma('integrity_check', { simple: true }) as string;
  } finally {
    db.close();
  }
}

/** Checks that, per channel, the acknowledged numbers are distinct and the stored ones are exactly 1..max. */
function expectContiguous(store: SqliteStore, channels: string[], acks: Ack[]): Map<string, number> {
  const max = new Map<string, number>();
  for (const ch of channels) {
    const mine = acks.filter((a) => a.channel === ch).map((a) => a.number);
    expect(new Set(mine).size, `duplicate numbers acknowledged in ${ch}`).toBe(mine.length);
    const stored = store.recent(ch, 1000).map((e) => e.number);
    const top = stored[0] ?? 0;
    expect(stored, `numbers of ${ch} are not 1..${top}`).toEqual(Array.from({ length: top }, (_, i) => top - i));
    max.set(ch, top);
  }
  return max;
}

describe('several processes writing one log file at once', () => {
  it('hands out unique, contiguous numbers per channel and keeps every acknowledged entry', async () => {
    const path = join(dir, 'shared.db');
    const channels = ['C0DESKA', 'C0DESKB', 'C0DESKC'];
    const writers = [0, 1, 2, 3].map((k) =>
      startWriter({
        db: path,
        mode: 'append',
        user: `U0WRITER${k}`,
        // each writer starts on a different channel so they collide on every channel
        channels: [...channels.slice(k % 3), ...channels.slice(0, k % 3)],
        count: 120,
        synchronous: 'normal',
        waitForGo: true,
      }),
    );
    await Promise.all(writers.map((w) => w.ready));
    for (const w of writers) w.child.stdin.write('go\n');
    const codes = await Promise.all(writers.map((w) => w.done));
    expect(codes, writers.map((w) => w.stderr()).join('\n')).toEqual([0, 0, 0, 0]);

    const all = writers.flatMap((w) => w.acks);
    expect(all).toHaveLength(4 * 120);
    const store = openSqlite(path, { readonly: true });
    try {
      const max = expectContiguous(store, channels, all);
      // the writers really ran at the same time: in each channel, consecutive numbers often
      // belong to different writers (run one after another, there would be at most 3 changes per channel)
      for (const ch of channels) {
        const users = store.recent(ch, 1000).map((e) => e.user);
        const changes = users.filter((u, i) => i > 0 && u !== users[i - 1]).length;
        expect(changes, `writers did not interleave in ${ch}`).toBeGreaterThan(3);
      }
      expect([...max.values()].reduce((a, b) => a + b, 0)).toBe(480);
      // each number's entry is the one its writer was told it got
      writers.forEach((w, k) => {
        for (const a of w.acks) {
          const e = store.get(a.channel, a.number)!;
          expect(e.user).toBe(`U0WRITER${k}`);
          expect(JSON.parse(e.normalized).seq).toBe(a.seq);
        }
        // one writer's numbers in a channel increase with its own order of writing
        for (const ch of channels) {
          const nums = w.acks.filter((a) => a.channel === ch).map((a) => a.number);
          expect(nums).toEqual([...nums].sort((x, y) => x - y));
        }
      });
    } finally {
      store.close();
    }
    expect(integrity(path)).toBe('ok');
  });

  it('a writer process and this process writing and reading the same file do not corrupt it', async () => {
    const path = join(dir, 'two.db');
    const here = openSqlite(path, { busyTimeoutMs: 20000 });
    const w = startWriter({ db: path, mode: 'append', user: 'U0CHILD', channels: ['C0DESKA', 'C0DESKB'], count: 300 });
    let mine = 0;
    let reads = 0;
    let finished = false;
    void w.done.then(() => (finished = true));
    // interleave our own writes (to C0DESKB, shared with the child, and C0DESKZ) and reads with the child's
    while (!finished) {
      for (let i = 0; i < 3; i++) {
        here.appendCheck({
          channel: i === 0 ? 'C0DESKZ' : 'C0DESKB',
          user: 'U0PARENT',
          at: new Date().toISOString(),
          verb: 'check',
          text: 'check +1 put 95 2027-03-19 on FERNWK',
          normalized: JSON.stringify({ parent: mine }),
          summary: { position: 'long put' },
        });
        mine++;
      }
      const latest = here.recent('C0DESKA', 50);
      expect(latest.every((e, i) => i === 0 || e.number === latest[i - 1].number - 1)).toBe(true);
      reads++;
      await new Promise((res) => setTimeout(res, 2));
    }
    expect(await w.done, w.stderr()).toBe(0);
    expect(reads).toBeGreaterThan(0);
    const max = expectContiguous(here, ['C0DESKA', 'C0DESKB', 'C0DESKZ'], w.acks);
    expect(max.get('C0DESKA')).toBe(150);
    expect((max.get('C0DESKB') ?? 0) + (max.get('C0DESKZ') ?? 0)).toBe(150 + mine);
    here.close();
    expect(integrity(path)).toBe('ok');
  });
});

describe('a writer killed with SIGKILL mid-burst', () => {
  for (const synchronous of ['full', 'normal'] as const) {
    it(`keeps every acknowledged check (synchronous=${synchronous}) and the file stays intact, over three kills`, async () => {
      const path = join(dir, `crash-${synchronous}.db`);
      const channels = ['C0DESKA', 'C0DESKB'];
      const everAcked: Ack[] = [];
      for (let round = 0; round < 3; round++) {
        const w = startWriter({ db: path, mode: 'append', user: `U0ROUND${round}`, channels, count: 1_000_000, synchronous });
        const killAfter = 80 + round * 70;
        w.onAck = () => {
          if (w.acks.length === killAfter) w.child.kill('SIGKILL');
        };
        expect(await w.done).toBe('SIGKILL');
        expect(w.acks.length).toBeGreaterThanOrEqual(killAfter);
        everAcked.push(...w.acks);

        expect(integrity(path)).toBe('ok');
        const store = openSqlite(path);
        try {
          for (const a of everAcked) {
            const e = store.get(a.channel, a.number);
            expect(e, `acknowledged ${a.channel} #${a.number} is missing after the kill`).toBeDefined();
          }
          for (const a of w.acks) expect(JSON.parse(store.get(a.channel, a.number)!.normalized).seq).toBe(a.seq);
          const max = expectContiguous(store, channels, everAcked);
          // numbering carries on after the crash without reusing a number
          const next = store.appendCheck({
            channel: 'C0DESKA',
            user: 'U0AFTER',
            at: new Date().toISOString(),
            verb: 'check',
            text: 'check after the kill',
            normalized: '{}',
            summary: { position: 'none' },
          });
          expect(next.number).toBe(max.get('C0DESKA')! + 1);
          everAcked.push({ channel: 'C0DESKA', number: next.number, seq: -1 });
        } finally {
          store.close();
        }
      }
    });
  }
});

describe('a log file made read-only with chmod 0444', () => {
  // Root ignores file permissions, so when the tests run as root the writer is started as the
  // unprivileged user nobody (uid 65534) through child_process's uid/gid options; otherwise it runs
  // as the current user. The compiled store is staged where it can read it (fixtures/compile.ts),
  // and the test folder is made readable for it.
  const isRoot = process.getuid?.() === 0;
  const as = isRoot ? { uid: 65534, gid: 65534 } : undefined;

  for (const folder of ['writable', 'read-only'] as const) {
    it(`gives a StoreError 'readonly' to a writer (folder ${folder}), and the file keeps its entries`, async () => {
      const path = join(dir, 'locked.db');
      const s = openSqlite(path);
      s.appendCheck({
        channel: 'C0DESKA', user: 'U0MAYA', at: '2027-01-04T15:30:00Z', verb: 'check',
        text: 'check +1 call 105 2027-03-19', normalized: '{}', summary: { position: 'long call' },
      });
      s.close();
      chmodSync(path, 0o444);
      // root owns the folder, so 0755 keeps nobody from writing in it; a non-root owner needs 0555
      chmodSync(dir, folder === 'writable' ? 0o777 : isRoot ? 0o755 : 0o555);
      const w = startWriter({ db: path, mode: 'append', user: 'U0LOCKED', channels: ['C0DESKA'], count: 3 }, as);
      const code = await w.done;
      expect(w.stderr()).toBe('');
      expect(code).toBe(3);
      expect(w.acks).toEqual([]);
      expect(w.errors).toHaveLength(1);
      if (folder === 'writable') {
        // the open succeeds (SQLite falls back to read-only) and the first write is refused
        expect(w.errors[0]).toMatch(/^readonly write the log could not be written: the log file is read-only \(/);
      } else {
        // SQLite cannot set up the write-ahead log files next to the file: SQLITE_READONLY_DIRECTORY
        expect(w.errors[0]).toMatch(/^readonly open the log could not be opened: the log folder is read-only \(/);
      }
      chmodSync(dir, 0o700);
      chmodSync(path, 0o644);
      const r = openSqlite(path, { readonly: true });
      try {
        expect(r.recent('C0DESKA', 10).map((e) => e.user)).toEqual(['U0MAYA']);
      } finally {
        r.close();
      }
      expect(integrity(path)).toBe('ok');
    });
  }
});
