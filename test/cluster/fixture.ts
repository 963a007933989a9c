/**
 * For one describe block: the loopback fake Web API, a fresh database on the run's PostgreSQL
 * server and a cluster of the real app on it (harness.ts), started before the block's tests and
 * stopped after them. Kept apart from harness.ts, which the cluster benchmark also runs outside
 * the test runner.
 */
import { afterAll, beforeAll } from 'vitest';
import { FakeWebApi } from '../chat/fake-web-api.js';
import { freshDatabase } from '../support/pg.js';
import { startCluster, type ClusterOptions } from './harness.js';

export interface ClusterFixture {
  fake: FakeWebApi;
  db: { url: string; drop: () => Promise<void> };
  cluster: Awaited<ReturnType<typeof startCluster>>;
}

/** The fixture's parts are there once the block's first beforeAll has run. */
export function clusterFixture(tag: string, o: Omit<ClusterOptions, 'fake' | 'databaseUrl'>): ClusterFixture {
  const f = {} as ClusterFixture;
  beforeAll(async () => {
    f.fake = await FakeWebApi.start();
    f.db = await freshDatabase(tag);
    f.cluster = await startCluster({ fake: f.fake, databaseUrl: f.db.url, ...o });
  }, 120_000);
  afterAll(async () => {
    await f.cluster?.close();
    await f.fake?.close();
    await f.db?.drop();
  });
  return f;
}
