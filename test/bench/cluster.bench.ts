/**
 * Answers per second with 1, 2 and 3 instances of the real app (HTTP mode, one worker each) on
 * one PostgreSQL database (a throwaway local cluster, or KOLMO_TEST_DATABASE_URL's server),
 * against the loopback fake Web API: 120 checks with charts over 30 channels, sent round-robin as
 * fast as they are acknowledged; the time runs from the first request to the last chart upload.
 * Ratios are against one instance, measured in the same run; one instance on the SQLite file is
 * shown beside it. The point is that nothing serialises beyond the database: on this machine the
 * instances share its cores, so the gain stops where the cores run out (the core count is printed).
 */
import { availableParallelism } from 'node:os';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FakeWebApi } from '../chat/fake-web-api.js';
import { httpEnv, launch, slashBody } from '../chat/harness.js';
import { signedPost } from '../robust/harness.js';
import { clusterCheck, startCluster } from '../cluster/harness.js';
import { createDatabase, startCluster as startPg, type Cluster } from '../support/pg-cluster.js';

const REQUESTS = 120;
const CHANNELS = 30;

async function burst(fake: FakeWebApi, ports: number[], tag: string): Promise<number> {
  const before = fake.okCallsOf('files.completeUploadExternal').length;
  const t0 = performance.now();
  for (let i = 0; i < REQUESTS; i++) {
    const body = slashBody({ text: clusterCheck(101 + Math.floor(i / CHANNELS)), channel: `C0BENCH${String(i % CHANNELS).padStart(3, '0')}`, user: `U0BENCH${i % 50}`, responseUrl: fake.responseUrl(`${tag}-${i}`) }).replace(
      'trigger_id=1111.2222.3333',
      `trigger_id=${tag}.${i}`,
    );
    const r = await signedPost(ports[i % ports.length], body, 'application/x-www-form-urlencoded');
    if (r.status !== 200) throw new Error(`request ${i} not acknowledged (${r.status})`);
  }
  await fake.waitFor(() => fake.okCallsOf('files.completeUploadExternal').length >= before + REQUESTS, 600_000, 'every answer');
  return REQUESTS / ((performance.now() - t0) / 1000);
}

export async function run(): Promise<void> {
  console.log(`cores: ${availableParallelism()}; ${REQUESTS} checks with charts over ${CHANNELS} channels; one worker per instance`);
  const fake = await FakeWebApi.start();
  const given = process.env.KOLMO_TEST_DATABASE_URL?.trim();
  let pg: Cluster | undefined;
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-bench-sqlite-'));
  try {
    // one instance on the SQLite file
    const lite = await launch(dir, httpEnv(fake.apiUrl, { KOLMO_WORKERS: '1', KOLMO_USER_BURST: '1000', KOLMO_USER_PER_MINUTE: '100000' }));
    const liteRate = await burst(fake, [lite.port], 'lite');
    lite.child.kill('SIGTERM');
    await lite.exited;
    console.log(`1 instance, SQLite:      ${liteRate.toFixed(1)} answers/s`);

    pg = given ? undefined : await startPg();
    let base = 0;
    for (const n of [1, 2, 3]) {
      const db = await createDatabase(given ?? pg!.url, `bench${n}`);
      const c = await startCluster({ fake, databaseUrl: db.url, mode: 'http', count: n, env: { KOLMO_USER_BURST: '1000', KOLMO_USER_PER_MINUTE: '100000' } });
      try {
        const rate = await burst(fake, c.instances.map((x) => x.app.port), `pg${n}`);
        if (n === 1) base = rate;
        console.log(`${n} instance${n > 1 ? 's' : ' '}, PostgreSQL: ${rate.toFixed(1)} answers/s  (${(rate / base).toFixed(2)}× one instance; ${(rate / liteRate).toFixed(2)}× SQLite)`);
      } finally {
        await c.close();
        await db.drop();
      }
    }
  } finally {
    await fake.close();
    await pg?.stop();
    rmSync(dir, { recursive: true, force: true });
  }
}
