/**
 * SQLite backend latency on a log holding 100,000 checks across 200 channels (built at the start in a
 * temporary file, in one transaction). Figures are medians and 99th percentiles of single calls,
 * with ratios against baselines measured in the same process: a bare `SELECT 1` through
 * better-sqlite3 on the same file, and a bare in-memory INSERT.
 */
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { LogEntryInput } from '../../src/store/store.js';
import { openSqlite } from '../../src/store/sqlite.js';
import { fmtTime, measure, sink, type Measure } from './harness.js';

const CHANNELS = 200;
const CHECKS = 100_000;

function channelId(i: number): string {
  return `C0DESK${String(i).padStart(4, '0')}`;
}

function entry(i: number, channel: string): LogEntryInput {
  const legs = [
    { qty: 2, type: 'call', strike: 105, expiry: '2027-03-19', entry: 3.1, iv: 0.28 },
    { qty: -2, type: 'call', strike: 115, expiry: '2027-03-19', entry: 1.05, iv: 0.25 },
  ];
  return {
    channel,
    user: `U0USER${i % 37}`,
    at: new Date(Date.UTC(2027, 0, 4) + i * 60_000).toISOString(),
    verb: 'check',
    text: `check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 drift 9% vol 26% on FERNWK #${i}`,
    normalized: JSON.stringify({
      verb: 'check',
      legs,
      terms: { spot: 100, rate: 0.045, yield: 0.01, drift: 0.09, vol: 0.26, horizon: '2027-02-15', asof: '2027-01-04', on: 'FERNWK' },
    }),
    summary: { position: '+2/−2 call spread 105/115 Mar 27', probProfit: 0.4123, expectedPnl: 312.5, viewEdge: 88.25 },
  };
}

function line(m: Measure, baselines: Measure[]): void {
  const ratios = baselines.map((b) => `${(m.perOp / b.perOp).toFixed(1)}× ${b.name}`).join(', ');
  console.log(`${m.name.padEnd(40)} median ${fmtTime(m.perOp).padStart(10)}  p99 ${fmtTime(m.p99).padStart(10)}  (${m.samples} calls)  ${ratios}`);
}

export function run(): void {
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-store-bench-'));
  const path = join(dir, 'bench.db');
  try {
    // build: 100k checks, 500 per channel, interleaved as they would arrive
    const t0 = process.hrtime.bigint();
    const builder = openSqlite(path, { synchronous: 'normal' });
    builder.batch(() => {
      for (let i = 0; i < CHECKS; i++) builder.appendCheck(entry(i, channelId(i % CHANNELS)));
    });
    builder.close();
    const buildSeconds = Number(process.hrtime.bigint() - t0) / 1e9;
    console.log(
      `built ${CHECKS} checks in ${CHANNELS} channels in ${buildSeconds.toFixed(2)} s (one transaction); file ${(statSync(path).size / 1e6).toFixed(1)} MB`,
    );

    // baselines, same process
    const raw = new Database(path);
    const select1 = raw.prepare('SELECT 1').pluck();
    const baseSelect = measure('SELECT 1 (same file)', () => select1.get(), 1, 0.5);
    const mem = new Database(':memory:');
    mem.exec('CREATE TABLE t (id INTEGER PRIMARY KEY, channel TEXT, text TEXT)');
    const memInsert = mem.prepare('INSERT INTO t (channel, text) VALUES (?, ?)');
    const baseInsert = measure('in-memory INSERT', () => memInsert.run('C0DESK0001', 'check +1 call 105'), 1, 0.5);
    const baselines = [baseSelect, baseInsert];
    line(baseSelect, baselines);
    line(baseInsert, baselines);

    let k = 0;
    const full = openSqlite(path); // default: synchronous=FULL
    line(measure('appendCheck, synchronous=FULL', () => full.appendCheck(entry(CHECKS + k, channelId(k++ % CHANNELS))), 1, 1), baselines);
    full.close();
    const normal = openSqlite(path, { synchronous: 'normal' });
    line(measure('appendCheck, synchronous=NORMAL', () => normal.appendCheck(entry(CHECKS + k, channelId(k++ % CHANNELS))), 1, 1), baselines);

    let r = 0;
    line(measure('recent(channel, 50)', () => normal.recent(channelId(r++ % CHANNELS), 50), 1, 1), baselines);
    line(measure('get(channel, n)', () => normal.get(channelId(r++ % CHANNELS), 1 + (r % 500)), 1, 1), baselines);
    normal.putMark({ channel: channelId(0), symbol: 'FERNWK', spot: 84.2, iv: 0.31, user: 'U0USER1', at: '2027-01-04T15:00:00Z' });
    line(measure('getMark(channel, symbol)', () => normal.getMark(channelId(0), 'FERNWK'), 1, 0.5), baselines);
    sink(normal.recent(channelId(0), 1).length);
    normal.close();
    raw.close();
    mem.close();
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
