/**
 * The real app (`node dist/src/main.js`, HTTP mode) against the fake Web API on 127.0.0.1, on the
 * platform's bad days: re-sent deliveries, dropped connections, 5xx and 429 answers, restarts.
 *
 * Outside references: the platform's retry headers for events it thinks were not acknowledged
 * (X-Slack-Retry-Num, X-Slack-Retry-Reason, e.g. http_timeout), its request-signing scheme (see
 * test/chat/harness.ts), Retry-After on 429 (RFC 9110 §10.2.3: seconds to wait), and that a slash
 * command's trigger_id and response_url are unique per invocation. The log is read back through
 * the store's own read-only interface. Every wait is bounded; the apps are stopped in afterAll.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FakeWebApi, FAKE_BOT, type Call } from '../chat/fake-web-api.js';
import { APP_TOKEN, BOT_TOKEN, httpEnv, mentionBody, sendSlash, slashBody } from '../chat/harness.js';
import { openDatabase } from '../../src/store/store.js';
import { FaultProxy, signedPost, startIn, until, untilAsync, type App } from './harness.js';

const WAIT = 45000;
const check = (spot = 100) =>
  `check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot ${spot} rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04`;

let fake: FakeWebApi;
let proxy: FaultProxy;
const dirs: string[] = [];
const apps: App[] = [];

beforeAll(async () => {
  fake = await FakeWebApi.start();
  proxy = await FaultProxy.start(fake.port);
});

afterAll(async () => {
  for (const a of apps) await a.stop('SIGKILL');
  await proxy?.close();
  await fake?.close();
  for (const d of dirs) rmSync(d, { recursive: true, force: true });
});

function freshDir(): string {
  const d = mkdtempSync(join(tmpdir(), 'kolmo-robust-'));
  dirs.push(d);
  return d;
}

async function start(dir: string, extra: Record<string, string> = {}, apiUrl = fake.apiUrl): Promise<App> {
  const a = await startIn(dir, httpEnv(apiUrl, { KOLMO_WORKERS: '1', ...extra }));
  apps.push(a);
  return a;
}

const inChannel = (method: string, channel: string): Call[] =>
  fake.okCallsOf(method).filter((c) => (c.body.channel ?? c.body.channel_id) === channel);
const completes = (channel: string) => inChannel('files.completeUploadExternal', channel);
const roots = (channel: string) => inChannel('chat.postMessage', channel).filter((c) => c.body.thread_ts === undefined);
const responses = (id: string) => fake.okCallsOf('response').filter((c) => c.body.response_id === id);
async function entries(dir: string, channel: string) {
  const s = await openDatabase({ backend: 'sqlite', path: join(dir, 'kolmo.db') }, { readonly: true });
  try {
    return await s.recent(channel, 1000);
  } finally {
    await s.close();
  }
}
/** the spots of the answers posted in the channel's threads, in posting order */
const threadSpots = (channel: string) =>
  inChannel('chat.postMessage', channel)
    .filter((c) => c.body.thread_ts !== undefined)
    .map((c) => /Assumptions: asof \S+ · spot (\d+)/.exec(String(c.body.text))?.[1])
    .filter((x): x is string => x !== undefined)
    .map(Number);

describe('re-sent deliveries are answered and logged once', () => {
  let dir: string;
  let app: App;
  beforeAll(async () => {
    dir = freshDir();
    app = await start(dir);
  });

  it('an event re-sent with X-Slack-Retry-Num / -Reason', async () => {
    const channel = 'CDUPEVNT01';
    const body = mentionBody({ text: check(), channel, ts: '1798800000.000100', botUserId: FAKE_BOT.user_id });
    expect((await signedPost(app.port, body, 'application/json')).status).toBe(200);
    const again = await signedPost(app.port, body, 'application/json', { 'x-slack-retry-num': '1', 'x-slack-retry-reason': 'http_timeout' });
    expect(again.status).toBe(200); // acknowledged, so the platform stops re-sending
    // a later request in the same channel: answered after anything the re-sent one could start
    await signedPost(app.port, mentionBody({ text: 'help', channel, ts: '1798800001.000100', botUserId: FAKE_BOT.user_id }), 'application/json');
    await until(() => inChannel('chat.postEphemeral', channel).length > 0, WAIT, 'the help after the re-sent event');
    expect(completes(channel)).toHaveLength(1);
    expect(roots(channel)).toHaveLength(1);
    expect(await entries(dir, channel)).toHaveLength(1);
    expect(app.lines.find((l) => l.outcome === 'duplicate' && l.channel === channel)).toMatchObject({ retryNum: 1, retryReason: 'http_timeout' });
  });

  it('a slash command re-sent with the same trigger and response URL (also a replayed signed request)', async () => {
    const channel = 'CDUPCMND01';
    const body = slashBody({ text: check(), channel, responseUrl: fake.responseUrl('dup-cmd') });
    expect((await signedPost(app.port, body, 'application/x-www-form-urlencoded')).status).toBe(200);
    expect((await signedPost(app.port, body, 'application/x-www-form-urlencoded', { 'x-slack-retry-num': '1', 'x-slack-retry-reason': 'http_error' })).status).toBe(200);
    expect((await signedPost(app.port, body, 'application/x-www-form-urlencoded')).status).toBe(200);
    await sendSlash(app.port, { text: 'help', channel, responseUrl: fake.responseUrl('dup-cmd-help') });
    await until(() => responses('dup-cmd-help').length > 0, WAIT, 'the help after the re-sent command');
    expect(completes(channel)).toHaveLength(1);
    expect(roots(channel)).toHaveLength(1);
    expect(await entries(dir, channel)).toHaveLength(1);
  });

  it('an event re-sent after a restart is still recognised', async () => {
    const channel = 'CDUPRSTR01';
    const body = mentionBody({ text: check(), channel, ts: '1798800100.000100', botUserId: FAKE_BOT.user_id });
    await signedPost(app.port, body, 'application/json');
    await until(() => completes(channel).length > 0, WAIT, 'the first answer');
    expect(await app.stop()).toBe(0);
    app = await start(dir);
    await signedPost(app.port, body, 'application/json', { 'x-slack-retry-num': '2', 'x-slack-retry-reason': 'http_timeout' });
    await signedPost(app.port, mentionBody({ text: 'help', channel, ts: '1798800101.000100', botUserId: FAKE_BOT.user_id }), 'application/json');
    await until(() => inChannel('chat.postEphemeral', channel).length > 0, WAIT, 'the help after the restart');
    expect(completes(channel)).toHaveLength(1);
    expect(await entries(dir, channel)).toHaveLength(1);
  });
});

describe('re-sent Socket Mode envelopes are answered once', () => {
  it('the same slash command in a second envelope (retry_attempt 1) is acknowledged but not answered again', async () => {
    const dir = freshDir();
    const sock = await startIn(dir, { SLACK_APP_TOKEN: APP_TOKEN, SLACK_BOT_TOKEN: BOT_TOKEN, KOLMO_API_URL: fake.apiUrl, KOLMO_WORKERS: '1' });
    apps.push(sock);
    const channel = 'CDUPSOCK01';
    await until(() => fake.socketCount > 0, WAIT, 'the socket connection');
    const payload = Object.fromEntries(new URLSearchParams(slashBody({ text: check(), channel, responseUrl: fake.responseUrl('dup-sock') })));
    fake.sendEnvelope({ envelope_id: 'env-dup-1', type: 'slash_commands', accepts_response_payload: true, payload });
    fake.sendEnvelope({ envelope_id: 'env-dup-2', type: 'slash_commands', accepts_response_payload: true, retry_attempt: 1, retry_reason: 'timeout', payload });
    await until(() => ['env-dup-1', 'env-dup-2'].every((id) => fake.socketMessages.some((m) => m.data.envelope_id === id)), WAIT, 'both envelopes acknowledged');
    const help = Object.fromEntries(new URLSearchParams(slashBody({ text: 'help', channel, responseUrl: fake.responseUrl('dup-sock-help') })));
    fake.sendEnvelope({ envelope_id: 'env-dup-3', type: 'slash_commands', accepts_response_payload: true, payload: help });
    await until(() => responses('dup-sock-help').length > 0, WAIT, 'the help after the re-sent envelope');
    expect(completes(channel)).toHaveLength(1);
    expect(await entries(dir, channel)).toHaveLength(1);
    expect(await sock.stop()).toBe(0);
  });
});

describe('platform faults are retried within limits', () => {
  it('a response URL answering 5xx once is retried; the rejection reaches the asker once', async () => {
    const channel = 'CRESP50001';
    fake.fail('response', { status: 502 });
    await sendSlash(app.port, { text: 'check +2 call 105 2027-03-19 vol 0.25 spot 100', channel, responseUrl: fake.responseUrl('resp502') });
    await until(() => responses('resp502').length > 0, WAIT, 'the rejection after a 502');
    expect(fake.callsOf('response').filter((c) => c.body.response_id === 'resp502').map((c) => c.status)).toEqual([502, 200]);
    expect(String(responses('resp502')[0].body.text)).toContain('^');
    expect(inChannel('chat.postEphemeral', channel)).toHaveLength(0);
  });

  let dir: string;
  let app: App;
  beforeAll(async () => {
    dir = freshDir();
    app = await start(dir, {}, proxy.apiUrl);
  });

  it('dropped connections are retried and the answer arrives once', async () => {
    const channel = 'CDROPCON01';
    proxy.drop('chat.postMessage', 2);
    await sendSlash(app.port, { text: check(), channel, responseUrl: fake.responseUrl('drop') });
    await until(() => completes(channel).length > 0, WAIT, 'the answer after two dropped connections');
    expect(proxy.seen.filter((s) => s.method === 'chat.postMessage' && s.fault === 'drop')).toHaveLength(2);
    expect(roots(channel)).toHaveLength(1);
    expect(responses('drop')).toHaveLength(0);
  });

  it('5xx beyond the retries: the check stays in the log marked undelivered and the asker is told once', async () => {
    const channel = 'CDOWN50001';
    // the first attempt and all three retries of the root line fail
    fake.fail('chat.postMessage', ...Array.from({ length: 4 }, () => ({ status: 503, channel })));
    await sendSlash(app.port, { text: check(), channel, responseUrl: fake.responseUrl('down') });
    await until(() => app.lines.some((l) => l.msg === 'request' && l.channel === channel), WAIT, 'the request line');
    expect(fake.callsOf('chat.postMessage').filter((c) => c.body.channel === channel).map((c) => c.status)).toEqual([503, 503, 503, 503]);
    const told = responses('down');
    expect(told).toHaveLength(1);
    expect(String(told[0].body.text)).toMatch(/HTTP 503/);
    expect(String(told[0].body.text)).toMatch(/in the log as #1/);
    expect(JSON.stringify(told[0].body.blocks)).toMatch(/call 105/); // the answer itself comes with it
    const e = await entries(dir, channel);
    expect(e).toHaveLength(1);
    expect(e[0].delivered).toBe('undelivered');
    expect(app.lines.find((l) => l.msg === 'request' && l.channel === channel)).toMatchObject({ outcome: 'undelivered' });
  });

  it('a Retry-After of an hour holds up neither the other channels nor the asker', async () => {
    const slow = 'CHOURLIM01';
    const other = 'CHOUROK001';
    fake.fail('chat.postMessage', { status: 429, retryAfter: 3600, channel: slow });
    await sendSlash(app.port, { text: check(), channel: slow, responseUrl: fake.responseUrl('hour') });
    await until(() => fake.callsOf('chat.postMessage').some((c) => c.body.channel === slow), WAIT, 'the rate-limited call');
    await sendSlash(app.port, { text: check(), channel: other, responseUrl: fake.responseUrl('hour-other') });
    await until(() => completes(other).length > 0 && responses('hour').length > 0, WAIT, 'the other channel answered and the asker told');
    expect(String(responses('hour')[0].body.text)).toMatch(/rate-limit/);
    expect((await entries(dir, slow))[0].delivered).toBe('undelivered');
  });
});

describe('shutdown and restart', () => {
  it('SIGTERM hands back what is in line; the next start answers it, in order, each check logged once', async () => {
    const dir = freshDir();
    let app = await start(dir, { KOLMO_SHUTDOWN_GRACE: '0' });
    const channel = 'CSHUTDWN01';
    for (let i = 1; i <= 6; i++) {
      expect((await sendSlash(app.port, { text: check(100 + i), channel, responseUrl: fake.responseUrl(`shut${i}`) })).status).toBe(200);
    }
    expect(await app.stop('SIGTERM')).toBe(0);
    const stopped = app.lines.find((l) => l.msg === 'stopped') as { handedBack?: number } | undefined;
    expect(stopped).toBeDefined(); // the log was flushed to the end
    const before = completes(channel).length;
    expect(stopped!.handedBack).toBeGreaterThan(0); // six checks take seconds; the stop came at once
    expect(before + (stopped!.handedBack ?? 0)).toBe(6);
    app = await start(dir, { KOLMO_SHUTDOWN_GRACE: '0' });
    await until(() => completes(channel).length >= 6, WAIT * 2, 'all six answered across the restart');
    expect(threadSpots(channel)).toEqual([101, 102, 103, 104, 105, 106]);
    // the delivery state is written just after the last upload completes at the fake
    await untilAsync(async () => (await entries(dir, channel)).every((x) => x.delivered === 'delivered'), WAIT, 'every entry marked delivered');
    const e = await entries(dir, channel);
    expect(e.map((x) => x.number).sort((a, b) => a - b)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(e.every((x) => x.delivered === 'delivered')).toBe(true);
    expect(app.lines.some((l) => l.msg === 'picked up requests left by the previous run')).toBe(true);
    expect(await app.stop()).toBe(0);
  });

  it('a crash (SIGKILL) mid-answer: the restart answers the rest and logs none twice', async () => {
    const dir = freshDir();
    let app = await start(dir);
    const channel = 'CCRASH0001';
    for (let i = 1; i <= 4; i++) await sendSlash(app.port, { text: check(100 + i), channel, responseUrl: fake.responseUrl(`crash${i}`) });
    await until(() => completes(channel).length >= 1, WAIT, 'the first answer');
    await app.stop('SIGKILL');
    app = await start(dir);
    const titles = () => new Set(completes(channel).map((c) => (c.body.files as Array<{ title?: string }>)[0]?.title));
    await until(() => titles().size >= 4, WAIT * 2, 'all four answered across the crash');
    expect([...titles()].sort()).toEqual(['Check #1', 'Check #2', 'Check #3', 'Check #4']);
    const e = await entries(dir, channel);
    expect(e).toHaveLength(4);
    expect(new Set(e.map((x) => x.at)).size).toBe(4);
    await untilAsync(async () => (await entries(dir, channel)).every((x) => x.delivered === 'delivered'), WAIT, 'every entry delivered');
    expect(await app.stop()).toBe(0);
  });
});
