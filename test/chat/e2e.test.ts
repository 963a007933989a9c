/**
 * End to end: the real app (`node dist/src/main.js`, built by `tsc` before the tests) in HTTP mode
 * and in Socket Mode, the real engine behind it, against the fake Web API on 127.0.0.1.
 *
 * Outside references: the platform's request-signing scheme (v0 HMAC-SHA256 over
 * `v0:{timestamp}:{body}`, requests older than five minutes refused), its Web API method
 * reference (which methods exist, their arguments, and the scope each needs), the three-call
 * external upload (files.getUploadURLExternal, the byte POST, files.completeUploadExternal), the
 * Socket Mode protocol (hello, envelopes acknowledged by envelope_id), and the PNG signature
 * (89 50 4E 47 0D 0A 1A 0A, PNG specification §5.2). Every wait is bounded.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { CAUTION } from '../../src/reply.js';
import { FakeWebApi, FAKE_BOT, type Call } from './fake-web-api.js';
import {
  APP_TOKEN,
  BOT_TOKEN,
  MAIN_JS,
  ROOT,
  SECRET,
  httpEnv,
  mentionBody,
  post,
  sendSlash,
  sign,
  slashBody,
  startApp,
  type RunningApp,
} from './harness.js';

const CHECK =
  'check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const WAIT = 30000;

let fake: FakeWebApi;
let app: RunningApp;

beforeAll(async () => {
  fake = await FakeWebApi.start();
  // debug level: the most the logs ever say, so the secret and request-text checks below see everything
  app = await startApp(httpEnv(fake.apiUrl, { KOLMO_WORKERS: '2', LOG_LEVEL: 'debug' }));
});

afterAll(async () => {
  await app?.stop();
  await fake?.close();
});

const inChannel = (method: string, channel: string): Call[] =>
  fake.okCallsOf(method).filter((c) => (c.body.channel ?? c.body.channel_id) === channel);
const responses = (id: string): Call[] => fake.okCallsOf('response').filter((c) => c.body.response_id === id);
const completes = (channel: string): Call[] => inChannel('files.completeUploadExternal', channel);

/** the thread answer and the chart have arrived for this channel */
async function answered(channel: string, what: string): Promise<void> {
  await fake.waitFor(() => completes(channel).length > 0, WAIT, what);
}

describe('slash command in HTTP mode', () => {
  it('acks before the slow work, then posts the root line, the answer in its thread and the chart into that thread', async () => {
    const channel = 'CDESKMAIN1';
    const sent = await sendSlash(app.port, { text: CHECK, channel, user: 'UTRADERAA1', responseUrl: fake.responseUrl('main') });
    expect(sent.status).toBe(200);
    await answered(channel, 'the chart upload of the main check');

    const posts = inChannel('chat.postMessage', channel);
    expect(posts.length).toBeGreaterThanOrEqual(2);
    // the ack arrived before the first post was even made
    expect(sent.at).toBeLessThan(posts[0].at);

    // root: in the channel (no thread), names who asked
    const root = posts[0];
    expect(root.body.thread_ts).toBeUndefined();
    expect(String(root.body.text)).toContain('<@UTRADERAA1>');
    const rootTs = (root.response as { ts: string }).ts;
    expect(rootTs).toMatch(/^\d+\.\d+$/);
    // every other post is in the root's thread
    for (const p of posts.slice(1)) expect(p.body.thread_ts).toBe(rootTs);
    const threadText = posts.slice(1).map((p) => JSON.stringify(p.body.blocks)).join('\n');
    expect(threadText).toContain('```'); // the table in a monospace block
    expect(threadText).toContain(JSON.stringify(CAUTION).slice(1, 30)); // the caution as a context line
    const blocks = posts.slice(1).flatMap((p) => p.body.blocks as Array<{ type: string; text?: { text: string } }>);
    // the caution closes the answer; the buttons (interactive.test.ts) come under it
    expect(blocks[blocks.length - 2].type).toBe('context');
    expect(blocks[blocks.length - 1].type).toBe('actions');
    for (const b of blocks) if (b.text) expect(b.text.text.length).toBeLessThanOrEqual(3000);

    // the chart: three calls, bytes are a PNG, completed into the same thread of the same channel
    const upUrl = fake.okCallsOf('files.getUploadURLExternal');
    expect(upUrl.length).toBeGreaterThan(0);
    const bytes = fake.okCallsOf('upload');
    expect(bytes.some((u) => u.body.png === true)).toBe(true);
    const done = completes(channel);
    expect(done).toHaveLength(1);
    expect(done[0].body.thread_ts).toBe(rootTs);
    expect(done[0].body.channel_id).toBe(channel);
    // a permalink was asked for the root message
    expect(inChannel('chat.getPermalink', channel).some((c) => c.body.message_ts === rootTs)).toBe(true);
    // nothing ephemeral was needed
    expect(responses('main')).toHaveLength(0);
    // the request log line: channel, user, verb, duration, outcome — and not the request text
    await waitLine((l) => l.msg === 'request' && l.channel === channel);
    const line = app.lines.find((l) => l.msg === 'request' && l.channel === channel)!;
    expect(line).toMatchObject({ channel, user: 'UTRADERAA1', verb: 'check', outcome: 'answered' });
    expect(typeof line.ms).toBe('number');
    // the request text appears in the logs, but only at debug level
    const withText = app.lines.filter((l) => JSON.stringify(l).includes('call 105 2027-03-19 @3.10'));
    expect(withText.length).toBeGreaterThan(0);
    for (const l of withText) expect(l.level).toBe('debug');
  });

  it('help answers ephemerally with the grammar, nothing in the channel', async () => {
    const channel = 'CDESKHELP1';
    const sent = await sendSlash(app.port, { text: 'help', channel, responseUrl: fake.responseUrl('help') });
    expect(sent.status).toBe(200);
    await fake.waitFor(() => responses('help').length > 0, WAIT, 'the help reply');
    const r = responses('help')[0].body;
    expect(r.response_type).toBe('ephemeral');
    expect(String(r.text)).toMatch(/check/i);
    await waitLine((l) => l.msg === 'request' && l.channel === channel);
    expect(inChannel('chat.postMessage', channel)).toHaveLength(0);
  });

  it('a rejected request gives one ephemeral reply and no channel post', async () => {
    const channel = 'CDESKBAD01';
    const sent = await sendSlash(app.port, { text: 'check +2 call 105 2027-03-19 vol 0.25 spot 100', channel, responseUrl: fake.responseUrl('bad') });
    expect(sent.status).toBe(200);
    await fake.waitFor(() => responses('bad').length > 0, WAIT, 'the rejection');
    await waitLine((l) => l.msg === 'request' && l.channel === channel);
    expect(responses('bad')).toHaveLength(1);
    expect(responses('bad')[0].body.response_type).toBe('ephemeral');
    expect(String(responses('bad')[0].body.text)).toContain('^'); // the caret under the bad token
    expect(inChannel('chat.postMessage', channel)).toHaveLength(0);
    expect(completes(channel)).toHaveLength(0);
    expect(app.lines.find((l) => l.msg === 'request' && l.channel === channel)).toMatchObject({ outcome: 'rejected' });
  });

  it('refuses a forged signature and a stale timestamp (401), and does nothing for them', async () => {
    const channel = 'CDESKSIGN1';
    const body = slashBody({ text: CHECK, channel, responseUrl: fake.responseUrl('sig') });
    const forged = await post(app.port, body, 'application/x-www-form-urlencoded', { secret: 'not-the-signing-secret' });
    expect(forged.status).toBe(401);
    const stale = Math.floor(Date.now() / 1000) - 10 * 60;
    const old = await post(app.port, body, 'application/x-www-form-urlencoded', { timestamp: stale, signature: sign(SECRET, stale, body) });
    expect(old.status).toBe(401);
    const tampered = await post(app.port, body.replace('help', 'hxlp') + '&x=1', 'application/x-www-form-urlencoded', {
      signature: sign(SECRET, Math.floor(Date.now() / 1000), body),
    });
    expect(tampered.status).toBe(401);
    // a genuine request in the same channel afterwards: the channel's queue is in order, so once it
    // is answered anything the refused ones had started would have shown up before it
    const ok = await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('sig') });
    expect(ok.status).toBe(200);
    await answered(channel, 'the genuine request after the refused ones');
    expect(inChannel('chat.postMessage', channel).filter((c) => c.body.thread_ts === undefined)).toHaveLength(1);
    expect(completes(channel)).toHaveLength(1);
  });

  it('waits out a 429 (Retry-After) and still delivers the answer', async () => {
    const channel = 'CDESK429A1';
    fake.fail('chat.postMessage', { status: 429, retryAfter: 1, channel });
    const sent = await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('429') });
    expect(sent.status).toBe(200);
    await answered(channel, 'the answer after a 429');
    const all = fake.callsOf('chat.postMessage').filter((c) => c.body.channel === channel);
    expect(all[0].status).toBe(429);
    expect(all[1].status).toBe(200);
    expect(all[1].at - all[0].at).toBeGreaterThanOrEqual(1000 - 50); // Retry-After: 1 second was honoured
    expect(inChannel('chat.postMessage', channel).filter((c) => c.body.thread_ts === undefined)).toHaveLength(1);
    expect(responses('429')).toHaveLength(0);
  });

  it('a rate limit that does not clear within the retries: the asker is told, ephemerally', async () => {
    const channel = 'CDESK429B1';
    // one more 429 than the client's retries (3): every attempt at the root line is refused
    fake.fail('chat.postMessage', ...Array.from({ length: 4 }, () => ({ status: 429, retryAfter: 0, channel })));
    await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('429b') });
    await fake.waitFor(() => responses('429b').length > 0, WAIT, 'the rate-limit notice');
    expect(fake.callsOf('chat.postMessage').filter((c) => c.body.channel === channel).map((c) => c.status)).toEqual([429, 429, 429, 429]);
    expect(String(responses('429b')[0].body.text)).toMatch(/rate-limiting/);
    expect(responses('429b')[0].body.response_type).toBe('ephemeral');
    expect(completes(channel)).toHaveLength(0);
  });

  it('a server error (5xx) once is retried too', async () => {
    const channel = 'CDESK500A1';
    fake.fail('files.completeUploadExternal', { status: 500, channel });
    await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('500') });
    await answered(channel, 'the chart after a 500');
    expect(completes(channel)).toHaveLength(1);
  });

  it('a channel the app is not in: the asker is told, ephemerally, how to fix it', async () => {
    const channel = 'CDESKNOTIN';
    fake.fail('chat.postMessage', { error: 'not_in_channel', channel });
    await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('notin') });
    await fake.waitFor(() => responses('notin').length > 0, WAIT, 'the not-in-channel notice');
    await waitLine((l) => l.msg === 'request' && l.channel === channel);
    const texts = responses('notin').map((r) => String(r.body.text));
    expect(texts[0]).toMatch(/not a member of this channel/);
    expect(texts[0]).toMatch(/\/invite/);
    expect(responses('notin').every((r) => r.body.response_type === 'ephemeral')).toBe(true);
    expect(inChannel('chat.postMessage', channel)).toHaveLength(0);
    expect(completes(channel)).toHaveLength(0);
    expect(app.lines.find((l) => l.msg === 'request' && l.channel === channel)).toMatchObject({ outcome: 'undelivered' });
  });

  it('an upload refused: the text answer is still in the thread and the asker is told about the chart', async () => {
    const channel = 'CDESKNOPIC';
    fake.fail('files.getUploadURLExternal', { error: 'missing_scope' });
    await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('nopic') });
    await fake.waitFor(() => responses('nopic').length > 0, WAIT, 'the chart notice');
    const posts = inChannel('chat.postMessage', channel);
    expect(posts.length).toBeGreaterThanOrEqual(2);
    expect(posts.slice(1).every((p) => typeof p.body.thread_ts === 'string')).toBe(true);
    expect(completes(channel)).toHaveLength(0);
    expect(String(responses('nopic')[0].body.text)).toMatch(/chart/);
    expect(String(responses('nopic')[0].body.text)).toMatch(/permission/);
  });
});

describe('mentions', () => {
  it('a mention in the channel (not in a thread) gets a root line and the answer in its thread', async () => {
    const channel = 'CDESKTOPM1';
    const sent = await post(app.port, mentionBody({ text: CHECK, channel, ts: '1798700300.000100', botUserId: FAKE_BOT.user_id }), 'application/json');
    expect(sent.status).toBe(200);
    await answered(channel, 'the answer to a top-level mention');
    const posts = inChannel('chat.postMessage', channel);
    const rootTs = (posts[0].response as { ts: string }).ts;
    expect(posts[0].body.thread_ts).toBeUndefined();
    expect(posts.slice(1).every((p) => p.body.thread_ts === rootTs)).toBe(true);
    expect(completes(channel)[0].body.thread_ts).toBe(rootTs);
  });

  it('history with a CSV shared in the mention: the file is downloaded with the bot token and the estimates answered in the thread', async () => {
    const channel = 'CDESKHIST1';
    const rows = ['date,close', ...Array.from({ length: 40 }, (_, i) => `${new Date(Date.UTC(2026, 0, 5 + i)).toISOString().slice(0, 10)},${(84 + Math.sin(i) * 2).toFixed(2)}`)];
    const file = fake.shareFile('fernwk-closes.csv', rows.join('\n'));
    const sent = await post(app.port, mentionBody({ text: 'history FERNWK save', channel, ts: '1798700400.000100', botUserId: FAKE_BOT.user_id, files: [file] }), 'application/json');
    expect(sent.status).toBe(200);
    await answered(channel, 'the history answer');
    const dl = fake.okCallsOf('download');
    expect(dl.length).toBeGreaterThan(0);
    expect(dl[dl.length - 1].authorization).toBe(`Bearer ${BOT_TOKEN}`);
    const thread = inChannel('chat.postMessage', channel).map((p) => JSON.stringify(p.body)).join('\n');
    expect(thread).toMatch(/History FERNWK \(fernwk-closes\.csv\): 40 closes, 2026-01-05/);
    expect(thread).toMatch(/Saved into the mark FERNWK/);
    // a file that is not text: the asker is told, nothing is posted in the channel
    const channel2 = 'CDESKHIST2';
    const png = fake.shareFile('chart.png', Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 13]), 'image/png');
    await post(app.port, mentionBody({ text: 'history FERNWK', channel: channel2, ts: '1798700500.000100', botUserId: FAKE_BOT.user_id, files: [png] }), 'application/json');
    await fake.waitFor(() => inChannel('chat.postEphemeral', channel2).length > 0, WAIT, 'the refusal of a file that is not text');
    expect(JSON.stringify(inChannel('chat.postEphemeral', channel2)[0].body)).toMatch(/not text/);
    expect(inChannel('chat.postMessage', channel2)).toHaveLength(0);
  });

  it('a mention inside an existing thread answers in that thread', async () => {
    const channel = 'CDESKTHRD1';
    const threadTs = '1798700000.000050';
    const body = mentionBody({ text: CHECK, channel, ts: '1798700100.000100', threadTs, botUserId: FAKE_BOT.user_id });
    const sent = await post(app.port, body, 'application/json');
    expect(sent.status).toBe(200);
    await answered(channel, 'the threaded answer to a mention');
    const posts = inChannel('chat.postMessage', channel);
    expect(posts.length).toBeGreaterThanOrEqual(1);
    for (const p of posts) expect(p.body.thread_ts).toBe(threadTs);
    expect(String(posts[0].body.text)).toContain('<@UTRADERAA1>');
    expect(completes(channel)[0].body.thread_ts).toBe(threadTs);
    // the platform re-sending the same event is not answered twice
    const again = await post(app.port, body, 'application/json');
    expect(again.status).toBe(200);
    const follow = mentionBody({ text: 'help', channel, ts: '1798700200.000100', threadTs, botUserId: FAKE_BOT.user_id });
    await post(app.port, follow, 'application/json');
    await fake.waitFor(() => fake.okCallsOf('chat.postEphemeral').some((c) => c.body.channel === channel), WAIT, 'the help after the repeat');
    expect(completes(channel)).toHaveLength(1);
    // help after a mention: ephemeral through chat.postEphemeral, in the thread
    const eph = fake.okCallsOf('chat.postEphemeral').filter((c) => c.body.channel === channel);
    expect(eph).toHaveLength(1);
    expect(eph[0].body.thread_ts).toBe(threadTs);
    expect(eph[0].body.user).toBe('UTRADERAA1');
  });
});

describe('Socket Mode (offline: apps.connections.open on the fake returns a ws://127.0.0.1 URL)', () => {
  it('acknowledges a slash-command envelope and answers in a thread', async () => {
    const sock = await startApp({
      SLACK_APP_TOKEN: APP_TOKEN,
      SLACK_BOT_TOKEN: BOT_TOKEN,
      KOLMO_API_URL: fake.apiUrl,
      KOLMO_WORKERS: '1',
    });
    try {
      expect(fake.okCallsOf('apps.connections.open').length).toBeGreaterThan(0);
      expect(fake.okCallsOf('apps.connections.open').at(-1)!.authorization).toBe(`Bearer ${APP_TOKEN}`);
      const channel = 'CDESKSOCK1';
      const payload = Object.fromEntries(new URLSearchParams(slashBody({ text: CHECK, channel, responseUrl: fake.responseUrl('sock') })));
      await fake.waitFor(() => fake.socketCount > 0, WAIT, 'the socket connection');
      fake.sendEnvelope({ envelope_id: 'env-kolmo-1', type: 'slash_commands', accepts_response_payload: true, payload });
      await fake.waitFor(() => fake.socketMessages.some((m) => m.data.envelope_id === 'env-kolmo-1'), WAIT, 'the envelope ack');
      await answered(channel, 'the Socket Mode answer');
      const ack = fake.socketMessages.find((m) => m.data.envelope_id === 'env-kolmo-1')!;
      const posts = inChannel('chat.postMessage', channel);
      expect(ack.at).toBeLessThan(posts[0].at);
      expect(posts[0].body.thread_ts).toBeUndefined();
      expect(completes(channel)[0].body.thread_ts).toBe(posts[1].body.thread_ts);
    } finally {
      const code = await sock.stop();
      expect(code).toBe(0);
    }
  });
});

describe('modes and settings', () => {
  it('a missing setting stops the app with a message naming it, and no secret in the output', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'kolmo-cfg-'));
    try {
      const r = await run([MAIN_JS], { SLACK_BOT_TOKEN: BOT_TOKEN, PORT: 'eighty' }, '', dir);
      expect(r.code).toBe(78);
      expect(r.stderr).toMatch(/SLACK_SIGNING_SECRET is missing/);
      expect(r.stderr).toMatch(/PORT="eighty" is malformed/);
      expect(r.stderr + r.stdout).not.toContain(BOT_TOKEN);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('without tokens, the console answers a request piped to stdin', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'kolmo-console-'));
    try {
      const r = await run([join(ROOT, 'bin', 'kolmo-main.js')], { KOLMO_DB: join(dir, 'k.db'), KOLMO_OUT: join(dir, 'out') }, `${CHECK}\nquit\n`, dir);
      expect(r.code).toBe(0);
      expect(r.stdout).toContain(CAUTION);
      expect(r.stdout).toMatch(/chart: .*\.png/);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('no secret ever reached the HTTP app’s logs, even at debug level', () => {
    const all = app.stdout() + app.stderr();
    expect(app.lines.some((l) => l.level === 'debug')).toBe(true);
    expect(all).not.toContain(BOT_TOKEN);
    expect(all).not.toContain(SECRET);
    expect(all).not.toContain('xoxb-fake');
  });

  it('the manifests ask for every scope the methods used here need (the full least-privilege check, with the interactive methods, is in interactive.test.ts)', () => {
    // scopes per the platform's Web API method reference; auth.test, chat.getPermalink and
    // apps.connections.open (app-level token) need no bot scope
    const needs: Record<string, string | null> = {
      'auth.test': null,
      'chat.postMessage': 'chat:write',
      'chat.postEphemeral': 'chat:write',
      'chat.getPermalink': null,
      'files.getUploadURLExternal': 'files:write',
      'files.completeUploadExternal': 'files:write',
      'apps.connections.open': null,
      // a file shared with a `history` mention, fetched from its url_private_download
      download: 'files:read',
    };
    const used = new Set<string>(['commands' /* /kolmo was received */, 'app_mentions:read' /* app_mention was received */]);
    for (const c of fake.calls) {
      if (c.method === 'upload' || c.method === 'response') continue;
      expect(Object.keys(needs)).toContain(c.method);
      const s = needs[c.method];
      if (s) used.add(s);
    }
    for (const file of ['kolmo.socket.json', 'kolmo.http.json']) {
      const m = JSON.parse(readFileSync(join(ROOT, 'manifests', file), 'utf8')) as {
        oauth_config: { scopes: { bot: string[] } };
        features: { slash_commands: Array<{ command: string; url?: string }> };
        settings: { socket_mode_enabled: boolean; event_subscriptions: { bot_events: string[]; request_url?: string } };
      };
      for (const s of used) expect(m.oauth_config.scopes.bot).toContain(s);
      expect(m.features.slash_commands.map((c) => c.command)).toEqual(['/kolmo']);
      expect(m.settings.event_subscriptions.bot_events).toContain('app_mention');
      if (file.includes('http')) {
        expect(m.settings.socket_mode_enabled).toBe(false);
        expect(m.settings.event_subscriptions.request_url).toMatch(/\/slack\/events$/);
        expect(m.features.slash_commands[0].url).toMatch(/\/slack\/events$/);
      } else expect(m.settings.socket_mode_enabled).toBe(true);
    }
  });
});

// ---------------------------------------------------------------------------------------------

async function waitLine(pred: (l: Record<string, unknown>) => boolean, timeoutMs = WAIT): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (!app.lines.some(pred)) {
    if (performance.now() > deadline) throw new Error('timed out waiting for a log line');
    await new Promise((r) => setTimeout(r, 25));
  }
}

function run(args: string[], env: Record<string, string>, stdin: string, cwd: string): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, args, { cwd, env: { PATH: process.env.PATH ?? '', HOME: cwd, ...env }, stdio: ['pipe', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (c: Buffer) => (stdout += c.toString('utf8')));
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString('utf8')));
    const t = setTimeout(() => {
      child.kill('SIGKILL');
      reject(new Error(`timed out: ${stdout} ${stderr}`));
    }, WAIT);
    child.on('exit', (code) => {
      clearTimeout(t);
      resolve({ code, stdout, stderr });
    });
    child.stdin.end(stdin);
  });
}
