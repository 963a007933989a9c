/**
 * Three instances of the real app on one real PostgreSQL database, against the loopback fake Web
 * API: 300 signed requests (slash commands and mentions) from 100 users over 30 channels, sent
 * round-robin; re-sent events delivered to a different instance than the original; one instance
 * killed with SIGKILL in the middle of an answer and started again. Then: every acknowledged
 * request answered exactly once, each channel's answers in request order, log numbers 1..n per
 * channel, and `log` on any instance listing every channel's checks. The same in Socket Mode,
 * each instance on its own connection.
 *
 * Outside references: the platform's request signing (test/chat/harness.ts), its retry headers
 * (X-Slack-Retry-Num / -Reason) and Socket Mode's retry_attempt for deliveries it thinks were not
 * acknowledged, and that a load balancer sends a request whose connection failed to another
 * instance (common practice). Every wait is bounded.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { type FakeWebApi, FAKE_BOT } from '../chat/fake-web-api.js';
import { mentionBody, slashBody } from '../chat/harness.js';
import { signedPost, until } from '../robust/harness.js';
import pg from 'pg';
import { openDatabase } from '../../src/verbs/ask.js';
import { clusterFixture, type ClusterFixture } from './fixture.js';
import { chartTitles, clusterCheck, roots, sendEnvelope, threadSpots, type Instance } from './harness.js';

const CHANNELS = 30;
const USERS = 100;
const REQUESTS = 300;
const PER_CHANNEL = REQUESTS / CHANNELS;
const WAIT = 120_000;

const channelId = (c: number) => `C0CLUS${String(c).padStart(4, '0')}`;
const userId = (u: number) => `U0DESK${String(u).padStart(4, '0')}`;

/** How a request reaches one instance: true when that instance acknowledged it. */
type Transport = (to: Instance, i: number, retry: number) => Promise<boolean>;

interface Sent {
  i: number;
  channel: string;
  spot: number;
  acked: boolean;
}

/** What every acknowledged request must have produced, checked on the fake and in the database. */
async function expectExactlyOnce(fake: FakeWebApi, url: string, sent: Sent[]): Promise<void> {
  const store = await openDatabase({ backend: 'postgres', url });
  try {
    for (let c = 0; c < CHANNELS; c++) {
      const ch = channelId(c);
      const mine = sent.filter((s) => s.channel === ch && s.acked);
      const spots = mine.map((s) => s.spot);
      // exactly once each, in request order
      expect(threadSpots(fake, ch), `answers in ${ch}`).toEqual(spots);
      expect(roots(fake, ch), `root lines in ${ch}`).toHaveLength(spots.length);
      expect(chartTitles(fake, ch).sort(), `charts in ${ch}`).toEqual(spots.map((_, k) => `Check #${k + 1}`).sort());
      const entries = await store.recent(ch, 100);
      expect(entries.map((e) => e.number), `log numbers of ${ch}`).toEqual(spots.map((_, k) => spots.length - k));
      // the log keeps them in the order they were asked
      expect(entries.map((e) => Number(/spot (\d+)/.exec(e.text)?.[1])).reverse()).toEqual(spots);
    }
  } finally {
    await store.close();
  }
}

interface Burst {
  sent: Sent[];
  retried: number;
  killed: boolean;
}

/**
 * The burst: 300 requests round-robin (even: slash commands, odd: mentions), each tenth mention
 * delivered again to a different instance after its first acknowledgement, the victim killed
 * with SIGKILL as its 5th chart upload reaches the platform (root line and answer already posted),
 * then started again. A request whose instance did not acknowledge it goes to the next one.
 */
async function burst(fake: FakeWebApi, inst: Instance[], send: Transport): Promise<Burst> {
  const victim = inst[2];
  let victimUploads = 0;
  let killed = false;
  fake.onCall = (c) => {
    if (!killed && c.tag === victim.tag && c.method === 'files.getUploadURLExternal' && ++victimUploads === 5) {
      killed = true;
      victim.kill('SIGKILL');
    }
  };
  const alive = (x: Instance) => x.app.child.exitCode === null && x.app.child.signalCode === null;
  const sent: Sent[] = [];
  const again: Array<{ i: number; to: Instance }> = [];
  let retried = 0;
  // a re-send the chosen instance does not acknowledge (it was just killed) goes to the next one
  const resend = async (r: { i: number; to: Instance }) => {
    retried++;
    let acked = false;
    for (let k = 0; k < 3 && !acked; k++) {
      const to = inst[(inst.indexOf(r.to) + k) % 3];
      if (alive(to)) acked = await send(to, r.i, retried);
    }
    expect(acked, `re-sent request ${r.i} acknowledged`).toBe(true);
  };
  for (let i = 0; i < REQUESTS; i++) {
    const s: Sent = { i, channel: channelId(i % CHANNELS), spot: 100 + Math.floor(i / CHANNELS) + 1, acked: false };
    sent.push(s);
    for (let k = 0; k < 3 && !s.acked; k++) {
      const to = inst[(i + k) % 3];
      if (!alive(to)) continue;
      s.acked = await send(to, i, k);
      if (s.acked && i % 2 === 1 && i % 10 === 1) again.push({ i, to: inst[(i + k + 1) % 3] });
    }
    if (again.length && i % 7 === 0) await resend(again.shift()!);
  }
  // On a quiet machine the 300 acknowledgements can all arrive before the victim has uploaded its
  // 5th chart: the kill is then still to come, mid-answer, while the queued work drains.
  for (let k = 0; k < 1200 && !killed; k++) await new Promise((r) => setTimeout(r, 50));
  for (const r of again.splice(0)) await resend(r);
  await victim.restart();
  return { sent, retried, killed };
}

function requestBody(fake: FakeWebApi, i: number): { slash: boolean; body: string } {
  const c = i % CHANNELS;
  const text = clusterCheck(100 + Math.floor(i / CHANNELS) + 1);
  const channel = channelId(c);
  const user = userId(i % USERS);
  if (i % 2 === 0) {
    return { slash: true, body: slashBody({ text, channel, user, responseUrl: fake.responseUrl(`r${i}`) }).replace('trigger_id=1111.2222.3333', `trigger_id=${i}.2222.3333`) };
  }
  const body = JSON.parse(mentionBody({ text, channel, user, ts: `1798900000.${String(i).padStart(6, '0')}`, botUserId: FAKE_BOT.user_id })) as Record<string, unknown>;
  body.event_id = `Ev0CLUSTER${String(i).padStart(6, '0')}`; // the same id on every delivery of request i
  return { slash: false, body: JSON.stringify(body) };
}

async function afterBurst(fake: FakeWebApi, inst: Instance[], url: string, b: Burst, askLog: (to: Instance, c: number, id: string) => Promise<void>): Promise<void> {
  expect(b.killed).toBe(true);
  const acked = b.sent.filter((s) => s.acked);
  expect(acked.length).toBe(REQUESTS); // every request reached an instance that acknowledged it
  await until(() => fake.okCallsOf('files.completeUploadExternal').length >= acked.length, WAIT, 'every acknowledged request answered');
  await expectExactlyOnce(fake, url, b.sent);
  // the take-over: another instance claimed the victim's half-posted request and posted only the rest
  const takeovers = inst.flatMap((x) => x.lines().filter((l) => l.msg === 'request' && l.attempt === 2));
  expect(takeovers.length).toBeGreaterThanOrEqual(1);
  expect(inst.flatMap((x) => x.lines().filter((l) => l.outcome === 'duplicate')).length).toBeGreaterThanOrEqual(b.retried);
  // `log` on any instance lists every channel's checks
  for (let c = 0; c < CHANNELS; c++) {
    const id = `log-${c}-${Date.now()}`;
    await askLog(inst[c % 3], c, id);
    await until(() => fake.okCallsOf('response').some((x) => x.body.response_id === id), WAIT, `the log of ${channelId(c)}`);
    const listing = JSON.stringify(fake.okCallsOf('response').find((x) => x.body.response_id === id)!.body);
    for (let k = 1; k <= PER_CHANNEL; k++) expect(listing, `#${k} in the log of ${channelId(c)}`).toContain(`#${k} `);
  }
}

const logBody = (fake: FakeWebApi, c: number, id: string) =>
  slashBody({ text: `log ${PER_CHANNEL + 5}`, channel: channelId(c), user: userId(c), responseUrl: fake.responseUrl(id) }).replace('trigger_id=1111.2222.3333', `trigger_id=${id}`);

describe('three instances on one PostgreSQL database, HTTP mode', () => {
  const f = clusterFixture('cluster_http', { mode: 'http', count: 3 });
  let fake: FakeWebApi;
  let db: ClusterFixture['db'];
  let cluster: ClusterFixture['cluster'];
  beforeAll(() => {
    ({ fake, db, cluster } = f);
  });

  it('answers every acknowledged request exactly once, in order per channel, across re-sends, a SIGKILL and a restart', { timeout: 300_000 }, async () => {
    const send: Transport = async (to, i, retry) => {
      const { slash, body } = requestBody(fake, i);
      const headers: Record<string, string> = retry > 0 && !slash ? { 'x-slack-retry-num': '1', 'x-slack-retry-reason': 'http_timeout' } : {};
      try {
        return (await signedPost(to.app.port, body, slash ? 'application/x-www-form-urlencoded' : 'application/json', headers)).status === 200;
      } catch {
        return false; // connection refused or reset: a load balancer tries the next instance
      }
    };
    const b = await burst(fake, cluster.instances, send);
    await afterBurst(fake, cluster.instances, db.url, b, async (to, c, id) => {
      expect((await signedPost(to.app.port, logBody(fake, c, id), 'application/x-www-form-urlencoded')).status).toBe(200);
    });
  });

  it('serves /healthz (ready: database and workers answer) and /metrics on every instance', async () => {
    for (const x of cluster.instances) {
      const h = await fetch(`http://127.0.0.1:${x.app.port}/healthz`);
      expect(h.status).toBe(200);
      expect(await h.json()).toMatchObject({ ready: true, database: 'ok', workers: 'ok', queue: 'ok' });
      const m = await (await fetch(`http://127.0.0.1:${x.app.port}/metrics`)).text();
      expect(m).toMatch(/^kolmo_requests_total\{verb="check",outcome="answered"\} \d+/m);
      expect(m).toMatch(/^kolmo_ack_seconds_count \d+/m);
      expect(m).toMatch(/^kolmo_answer_seconds_count\{verb="check"\} \d+/m);
      expect(m).toMatch(/^kolmo_queue_depth 0/m);
      expect(m).toMatch(/^# TYPE kolmo_store_errors_total counter/m);
      expect(m).toMatch(/^kolmo_takeovers_total \d+/m);
    }
  });
  it('holds one small pool of connections per instance, none per worker (the workers reach the store through their instance)', async () => {
    const c = new pg.Client({ connectionString: db.url });
    await c.connect();
    try {
      const r = await c.query<{ app: string; n: number }>(
        "SELECT application_name AS app, COUNT(*)::int AS n FROM pg_stat_activity WHERE datname = current_database() AND pid <> pg_backend_pid() GROUP BY application_name",
      );
      // every connection is an instance's (named after its owner id), at most 6 each
      expect(r.rows.every((x) => x.app.startsWith('kolmo '))).toBe(true);
      expect(r.rows.length).toBeLessThanOrEqual(cluster.instances.length);
      for (const x of r.rows) expect(x.n).toBeLessThanOrEqual(6);
    } finally {
      await c.end();
    }
  });
});

describe('three instances on one PostgreSQL database, Socket Mode (one connection each)', () => {
  const f = clusterFixture('cluster_socket', { mode: 'socket', count: 3, env: { KOLMO_OPS_PORT: '0' } });
  let fake: FakeWebApi;
  let db: ClusterFixture['db'];
  let cluster: ClusterFixture['cluster'];
  beforeAll(async () => {
    ({ fake, db, cluster } = f);
    await until(() => ['i0', 'i1', 'i2'].every((t) => fake.socketTagList.includes(t)), WAIT, 'three Socket Mode connections');
  });

  /** Sends an envelope over that instance's connection; true once it is acknowledged. */
  const envelope = (to: Instance, e: Record<string, unknown>): Promise<boolean> => sendEnvelope(fake, to, e);

  it('answers every acknowledged request exactly once, in order per channel, across re-sends, a SIGKILL and a restart', { timeout: 300_000 }, async () => {
    const send: Transport = async (to, i, retry) => {
      const { slash, body } = requestBody(fake, i);
      const retryFields = retry > 0 ? { retry_attempt: retry, retry_reason: 'timeout' } : {};
      return slash
        ? envelope(to, { type: 'slash_commands', accepts_response_payload: true, payload: Object.fromEntries(new URLSearchParams(body)), ...retryFields })
        : envelope(to, { type: 'events_api', accepts_response_payload: false, payload: JSON.parse(body), ...retryFields });
    };
    const b = await burst(fake, cluster.instances, send);
    await until(() => fake.socketTagList.includes('i2'), WAIT, 'the restarted instance connected');
    await afterBurst(fake, cluster.instances, db.url, b, async (to, c, id) => {
      expect(await envelope(to, { type: 'slash_commands', accepts_response_payload: true, payload: Object.fromEntries(new URLSearchParams(logBody(fake, c, id))) })).toBe(true);
    });
  });

  it('serves /healthz and /metrics on KOLMO_OPS_PORT in Socket Mode', async () => {
    for (const x of cluster.instances) {
      const port = x.app.lines.find((l) => l.msg === 'connected')?.opsPort;
      expect(typeof port).toBe('number');
      const h = await fetch(`http://127.0.0.1:${port}/healthz`);
      expect(h.status).toBe(200);
      expect(await h.json()).toMatchObject({ ready: true, database: 'ok', workers: 'ok', queue: 'ok' });
      expect(await (await fetch(`http://127.0.0.1:${port}/metrics`)).text()).toMatch(/^# TYPE kolmo_requests_total counter/m);
      expect((await fetch(`http://127.0.0.1:${port}/elsewhere`)).status).toBe(404);
    }
  });
});
