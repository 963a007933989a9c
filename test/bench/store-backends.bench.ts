/**
 * The two backends of the async store side by side: appendCheck, recent(channel, 50) and
 * get(channel, n) on a log holding 20,000 checks across 200 channels, SQLite (file, its default
 * synchronous=FULL) beside PostgreSQL (a throwaway local cluster on a Unix socket, started here;
 * or KOLMO_TEST_DATABASE_URL's server). Figures are medians and 99th percentiles of single
 * awaited calls, with each backend's ratio against its own bare `SELECT 1` round trip measured in
 * the same process, and PostgreSQL's ratio to SQLite. The cluster runs with fsync off (see
 * test/support/pg-cluster.ts), so its append figure is the cost without the disk flush; a
 * production server with fsync adds one WAL flush per commit.
 */
import Database from 'better-sqlite3';
import pg from 'pg';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDatabase, type AsyncStore, type LogEntryInput } from '../../src/store/store.js';
import { createDatabase, startCluster, type Cluster } from '../support/pg-cluster.js';
import { fmtTime, sink, type Measure } from './harness.js';

const CHANNELS = 200;
const CHECKS = 20_000;

const channelId = (i: number) => `C0DESK${String(i).padStart(4, '0')}`;

function entry(i: number, channel: string): LogEntryInput {
  return {
    channel,
    user: `U0USER${i % 37}`,
    at: new Date(Date.UTC(2027, 0, 4) + i * 60_000).toISOString(),
    verb: 'check',
    text: `check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 drift 9% vol 26% on FERNWK #${i}`,
    normalized: JSON.stringify({ verb: 'check', legs: [{ qty: 2, strike: 105 }, { qty: -2, strike: 115 }], i }),
    summary: { position: '+2/−2 call spread 105/115 Mar 27', probProfit: 0.4123, expectedPnl: 312.5, viewEdge: 88.25 },
  };
}

/** Like harness.measure, for an async call: median and p99 of single awaited calls over `minSeconds`. */
async function measureAsync(name: string, call: () => Promise<unknown>, minSeconds = 1): Promise<Measure> {
  for (let i = 0; i < 5; i++) sink(await call());
  const times: number[] = [];
  const start = process.hrtime.bigint();
  let elapsed = 0;
  while (elapsed < minSeconds || times.length < 20) {
    const t0 = process.hrtime.bigint();
    sink(await call());
    const t1 = process.hrtime.bigint();
    times.push(Number(t1 - t0) / 1e9);
    elapsed = Number(t1 - start) / 1e9;
  }
  times.sort((a, b) => a - b);
  const perOp = times[Math.floor(times.length / 2)];
  return { name, perOp, opsPerSec: 1 / perOp, p99: times[Math.min(times.length - 1, Math.floor(times.length * 0.99))], samples: times.length };
}

async function fill(s: AsyncStore): Promise<void> {
  let i = 0;
  const lane = async () => {
    while (i < CHECKS) {
      const k = i++;
      await s.appendCheck(entry(k, channelId(k % CHANNELS)));
    }
  };
  await Promise.all(Array.from({ length: 4 }, lane));
}

async function figures(s: AsyncStore, base: Measure): Promise<Measure[]> {
  let k = CHECKS;
  let r = 0;
  const out = [
    await measureAsync(`${s.backend} appendCheck`, () => s.appendCheck(entry(k, channelId(k++ % CHANNELS)))),
    await measureAsync(`${s.backend} recent(channel, 50)`, () => s.recent(channelId(r++ % CHANNELS), 50)),
    await measureAsync(`${s.backend} get(channel, n)`, () => s.get(channelId(r++ % CHANNELS), 1 + (r % 100))),
  ];
  for (const m of out) {
    console.log(`${m.name.padEnd(32)} median ${fmtTime(m.perOp).padStart(10)}  p99 ${fmtTime(m.p99).padStart(10)}  (${m.samples} calls)  ${(m.perOp / base.perOp).toFixed(1)}× its SELECT 1`);
  }
  return out;
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-backends-bench-'));
  const given = process.env.KOLMO_TEST_DATABASE_URL?.trim();
  let cluster: Cluster | undefined;
  try {
    const path = join(dir, 'bench.db');
    const lite = await openDatabase({ backend: 'sqlite', path }, { synchronous: 'normal' });
    await fill(lite);
    await lite.close();
    const sqlite = await openDatabase({ backend: 'sqlite', path });
    const raw = new Database(path);
    const sel = raw.prepare('SELECT 1').pluck();
    const liteBase = await measureAsync('sqlite SELECT 1', async () => sel.get(), 0.5);
    console.log(`sqlite SELECT 1 (same file)        median ${fmtTime(liteBase.perOp)}`);
    const a = await figures(sqlite, liteBase);
    await sqlite.close();
    raw.close();

    cluster = given ? undefined : await startCluster();
    const db = await createDatabase(given ?? cluster!.url, 'bench');
    try {
      const pgs = await openDatabase({ backend: 'postgres', url: db.url });
      await fill(pgs);
      const client = new pg.Client({ connectionString: db.url });
      await client.connect();
      const pgBase = await measureAsync('postgres SELECT 1', () => client.query('SELECT 1'), 0.5);
      console.log(`postgres SELECT 1 (one connection)  median ${fmtTime(pgBase.perOp)}`);
      const b = await figures(pgs, pgBase);
      await client.end();
      await pgs.close();
      console.log(`postgres / sqlite: ${b.map((m, i) => `${m.name.replace(/^postgres /, '')} ${(m.perOp / a[i].perOp).toFixed(1)}×`).join(', ')}`);
    } finally {
      await db.drop();
    }
  } finally {
    await cluster?.stop();
    rmSync(dir, { recursive: true, force: true });
  }
}
