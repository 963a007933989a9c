/**
 * For a test file that starts the real app in folders it keeps: the loopback fake Web API, fresh
 * temporary folders and the apps started in them, all stopped and removed after the file's tests.
 */
import { afterAll, beforeAll } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FakeWebApi } from '../chat/fake-web-api.js';
import { startIn, type App } from './harness.js';

export interface AppsFixture {
  /** the fake Web API (there once the file's first beforeAll has run) */
  readonly fake: FakeWebApi;
  /** a new empty folder, removed after the tests */
  freshDir(): string;
  /** starts the app in `dir` with `env` (startIn), stopped with SIGKILL after the tests */
  start(dir: string, env: Record<string, string>): Promise<App>;
}

export function appsFixture(prefix: string): AppsFixture {
  let fake: FakeWebApi | undefined;
  const dirs: string[] = [];
  const apps: App[] = [];
  beforeAll(async () => {
    fake = await FakeWebApi.start();
  });
  afterAll(async () => {
    for (const a of apps) await a.stop('SIGKILL');
    await fake?.close();
    for (const d of dirs) rmSync(d, { recursive: true, force: true });
  });
  return {
    get fake() {
      if (!fake) throw new Error('the fake Web API starts in beforeAll');
      return fake;
    },
    freshDir() {
      const d = mkdtempSync(join(tmpdir(), `${prefix}-`));
      dirs.push(d);
      return d;
    },
    async start(dir, env) {
      const a = await startIn(dir, env);
      apps.push(a);
      return a;
    },
  };
}
