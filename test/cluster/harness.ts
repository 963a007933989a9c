/**
 * Several instances of the real app (`node dist/src/main.js`) on one PostgreSQL database, against
 * one loopback fake Web API. Each instance calls the fake under its own tag (`fake.apiUrlFor`),
 * so the tests can tell which instance posted what, reach one instance's Socket Mode connection,
 * and stop one at a chosen moment. Used by cluster.test.ts and the cluster benchmark.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Call, FakeWebApi } from '../chat/fake-web-api.js';
import { APP_TOKEN, BOT_TOKEN, SECRET, launch, type Launched } from '../chat/harness.js';
import { until } from '../robust/harness.js';

export interface Instance {
  tag: string;
  dir: string;
  app: Launched;
  /** the log lines of every run of this instance (the current one and those before a restart) */
  lines(): Array<Record<string, unknown>>;
  /** starts it again after a stop or a kill (same tag, same folder, a new process) */
  restart(): Promise<void>;
  kill(signal?: NodeJS.Signals): void;
  stop(): Promise<number | null>;
}

export interface ClusterOptions {
  fake: FakeWebApi;
  databaseUrl: string;
  mode: 'http' | 'socket';
  count: number;
  env?: Record<string, string>;
}

export async function startCluster(o: ClusterOptions): Promise<{ instances: Instance[]; close(): Promise<void> }> {
  const instances: Instance[] = [];
  const envOf = (tag: string): Record<string, string> => ({
    SLACK_BOT_TOKEN: BOT_TOKEN,
    ...(o.mode === 'http' ? { SLACK_SIGNING_SECRET: SECRET, PORT: '0', HOST: '127.0.0.1' } : { SLACK_APP_TOKEN: APP_TOKEN }),
    KOLMO_API_URL: o.fake.apiUrlFor(tag),
    KOLMO_DATABASE_URL: o.databaseUrl,
    KOLMO_WORKERS: '1',
    LOG_LEVEL: 'info',
    ...o.env,
  });
  const starting = Array.from({ length: o.count }, async (_, k) => {
    const tag = `i${k}`;
    const dir = mkdtempSync(join(tmpdir(), `kolmo-cluster-${tag}-`));
    const earlier: Launched[] = [];
    const inst: Instance = {
      tag,
      dir,
      app: await launch(dir, envOf(tag)),
      lines: () => [...earlier, inst.app].flatMap((a) => a.lines),
      async restart() {
        earlier.push(inst.app);
        inst.app = await launch(dir, envOf(tag));
      },
      kill(signal = 'SIGKILL') {
        if (inst.app.child.exitCode === null && inst.app.child.signalCode === null) inst.app.child.kill(signal);
      },
      async stop() {
        const c = inst.app.child;
        if (c.exitCode !== null || c.signalCode !== null) return c.exitCode;
        c.kill('SIGTERM');
        const t = setTimeout(() => c.kill('SIGKILL'), 20000);
        const code = await inst.app.exited;
        clearTimeout(t);
        return code;
      },
    };
    instances[k] = inst;
  });
  await Promise.all(starting);
  return {
    instances,
    async close() {
      await Promise.all(instances.map((i) => i.stop()));
      for (const i of instances) rmSync(i.dir, { recursive: true, force: true });
    },
  };
}

let envelopes = 0;
/**
 * Sends a Socket Mode envelope over that instance's connection; true once it is acknowledged,
 * false when the connection went down first (the platform then re-sends to another connection).
 */
export async function sendEnvelope(fake: FakeWebApi, to: Instance, e: Record<string, unknown>): Promise<boolean> {
  const id = `env-${++envelopes}`;
  if (!fake.sendEnvelopeTo(to.tag, { envelope_id: id, ...e })) return false;
  try {
    await until(() => fake.socketMessages.some((m) => m.data.envelope_id === id), 15000, `the ack of ${id}`);
    return true;
  } catch {
    return false;
  }
}

/** A check with an invented position whose spot identifies it within its channel. */
export const clusterCheck = (spot: number) =>
  `check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot ${spot} rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04`;

const channelOf = (c: Call) => String(c.body.channel ?? c.body.channel_id ?? '');

/** The spots of the answers posted in the channel's threads, in posting order. */
export function threadSpots(fake: FakeWebApi, channel: string): number[] {
  return fake
    .okCallsOf('chat.postMessage')
    .filter((c) => channelOf(c) === channel && c.body.thread_ts !== undefined)
    .map((c) => /Assumptions: asof \S+ · spot (\d+)/.exec(String(c.body.text))?.[1])
    .filter((x): x is string => x !== undefined)
    .map(Number);
}

export function roots(fake: FakeWebApi, channel: string): Call[] {
  return fake.okCallsOf('chat.postMessage').filter((c) => channelOf(c) === channel && c.body.thread_ts === undefined);
}

/** Titles of the charts uploaded into the channel ("Check #n"). */
export function chartTitles(fake: FakeWebApi, channel: string): string[] {
  return fake
    .okCallsOf('files.completeUploadExternal')
    .filter((c) => channelOf(c) === channel)
    .map((c) => String((c.body.files as Array<{ title?: string }>)?.[0]?.title ?? ''));
}
