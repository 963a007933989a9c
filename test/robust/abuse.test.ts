/**
 * The real app against abuse and bad input: oversized bodies, requests beyond the compute budget,
 * one user flooding it, another channel reading the log, and secrets that must never leave the
 * process. HTTP mode against the fake Web API on 127.0.0.1; every wait bounded.
 *
 * Outside references: the platform's request-signing scheme (test/chat/harness.ts), HTTP 413
 * Content Too Large (RFC 9110 §15.5.14) for a body over the limit, and docs/design.md §2 (a rejected
 * request is told only to the asker, quoted with a caret; the log is per channel).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FakeWebApi, type Call } from '../chat/fake-web-api.js';
import { BOT_TOKEN, SECRET, httpEnv, sendSlash } from '../chat/harness.js';
import { openDatabase } from '../../src/store/store.js';
import { signedPost, startIn, until, type App } from './harness.js';

const WAIT = 45000;
let fake: FakeWebApi;
let app: App;
let dir: string;

beforeAll(async () => {
  fake = await FakeWebApi.start();
  dir = mkdtempSync(join(tmpdir(), 'kolmo-abuse-'));
  app = await startIn(
    dir,
    httpEnv(fake.apiUrl, {
      KOLMO_WORKERS: '1',
      LOG_LEVEL: 'debug',
      KOLMO_USER_BURST: '3',
      KOLMO_USER_PER_MINUTE: '1',
      KOLMO_COMPUTE_BUDGET: '1000',
      KOLMO_BODY_LIMIT: '65536',
    }),
  );
});

afterAll(async () => {
  await app?.stop();
  await fake?.close();
  if (dir) rmSync(dir, { recursive: true, force: true });
});

const responses = (id: string): Call[] => fake.okCallsOf('response').filter((c) => c.body.response_id === id);
const said = (id: string) => responses(id).map((c) => `${String(c.body.text)}\n${JSON.stringify(c.body.blocks)}`).join('\n');
const inChannel = (method: string, channel: string): Call[] => fake.okCallsOf(method).filter((c) => (c.body.channel ?? c.body.channel_id) === channel);
async function entries(channel: string) {
  const s = await openDatabase({ backend: 'sqlite', path: join(dir, 'kolmo.db') }, { readonly: true });
  try {
    return await s.recent(channel, 1000);
  } finally {
    await s.close();
  }
}

describe('abuse and bad input', () => {
  it('a body over the limit is refused with 413 before it is read; the app answers on', async () => {
    const huge = 'text=' + 'x'.repeat(300 * 1024);
    // the app answers 413 from the declared length and closes; a client still sending may see the reset first
    const r = await signedPost(app.port, huge, 'application/x-www-form-urlencoded').catch((err: NodeJS.ErrnoException) => ({ status: err.code ?? 'error', body: '' }));
    expect([413, 'ECONNRESET', 'EPIPE']).toContain(r.status);
    await until(() => app.lines.some((l) => l.msg === 'request body over the limit refused' && l.limit === 65536), WAIT, 'the refusal in the log');
    const ok = await sendSlash(app.port, { text: 'help', channel: 'CBIGBODY01', user: 'UBIGBODY01', responseUrl: fake.responseUrl('after-413') });
    expect(ok.status).toBe(200);
    await until(() => responses('after-413').length > 0, WAIT, 'the help after the refused body');
  });

  it('a check over the compute budget is refused at once with a clear message and nothing is logged; a small one is answered', async () => {
    const channel = 'CBUDGET001';
    // one leg, but jumps at 100 a year over 30 years with the horizon 13 years before expiry: two
    // Poisson series of over a thousand terms each, nested (about 50 s of computing unchecked)
    const big = 'check +1 c 100 2056-12-01 iv 30% spot 100 rate 4% drift 8% asof 2027-01-04 jumps 100/yr -10% 200% horizon 2040-01-01';
    await sendSlash(app.port, { text: big, channel, user: 'UBUDGET001', responseUrl: fake.responseUrl('budget-big') });
    await until(() => responses('budget-big').length > 0, WAIT, 'the budget refusal');
    const msg = said('budget-big');
    expect(msg).toMatch(/units of computing/);
    expect(msg).toMatch(/allows 1,000 per request/);
    expect(msg).toMatch(/\^{5}/); // quoted with a caret under `jumps`, the term that makes it costly
    expect(responses('budget-big')[0].body.response_type).toBe('ephemeral');
    expect(inChannel('chat.postMessage', channel)).toHaveLength(0);
    expect(await entries(channel)).toHaveLength(0);
    const small = 'check +1 p 95 3m iv 30% spot 100 rate 4% drift 8% asof 2027-01-04 style american';
    await sendSlash(app.port, { text: small, channel, user: 'UBUDGET001', responseUrl: fake.responseUrl('budget-small') });
    await until(() => inChannel('files.completeUploadExternal', channel).length > 0, WAIT, 'the small check answered with its chart');
    expect(said('budget-small')).not.toMatch(/units of computing/);
    expect(await entries(channel)).toHaveLength(1);
  });

  it('one user over the rate limit is told politely once; the next user is answered', async () => {
    const ids = Array.from({ length: 7 }, (_, i) => `flood${i}`);
    for (const id of ids) await sendSlash(app.port, { text: 'help', channel: 'CFLOOD0001', user: 'UFLOOD0001', responseUrl: fake.responseUrl(id) });
    await sendSlash(app.port, { text: 'help', channel: 'CFLOOD0001', user: 'UCALMUSER1', responseUrl: fake.responseUrl('calm') });
    await until(() => responses('calm').length > 0, WAIT, 'the other user’s answer');
    await until(() => ids.filter((id) => responses(id).length > 0).length >= 4, WAIT, 'three answers and one notice');
    const texts = ids.map((id) => said(id));
    const notices = texts.filter((t) => /faster than it answers one person/.test(t));
    const answered = texts.filter((t) => t !== '' && !/faster than it answers/.test(t));
    expect(answered).toHaveLength(3); // the burst of 3
    expect(notices).toHaveLength(1); // told once, not four times
    expect(notices[0]).toMatch(/Try again in \d+ s/);
    expect(app.lines.filter((l) => l.outcome === 'rate-limited' && l.user === 'UFLOOD0001')).toHaveLength(4);
  });

  it('the log is readable only from its own channel', async () => {
    const mine = 'CLOGOWNER1';
    const other = 'CLOGOTHER1';
    const text = 'check +3 call 137 2027-03-19 iv 28% spot 130 rate 4.5% drift 9% asof 2027-01-04';
    await sendSlash(app.port, { text, channel: mine, user: 'ULOGOWNER1', responseUrl: fake.responseUrl('log-own-check') });
    await until(() => inChannel('files.completeUploadExternal', mine).length > 0, WAIT, 'the check in its own channel');
    for (const [id, t] of [['log-other', 'log'], ['again-other', 'again 1'], ['log-own', 'log']] as const) {
      const channel = id === 'log-own' ? mine : other;
      await sendSlash(app.port, { text: t, channel, user: 'UNOSY00001', responseUrl: fake.responseUrl(id) });
      await until(() => responses(id).length > 0 || inChannel('chat.postMessage', channel).length > (id === 'log-own' ? 2 : 0), WAIT, `the reply to ${t} in ${channel}`);
    }
    const seenFromOther = said('log-other') + said('again-other') + inChannel('chat.postMessage', other).map((c) => JSON.stringify(c.body)).join('');
    expect(seenFromOther).not.toMatch(/137/);
    expect(seenFromOther).not.toContain('ULOGOWNER1');
    expect(await entries(other)).toHaveLength(0);
    // the control: from its own channel the same `log` does show it
    const own = said('log-own') + inChannel('chat.postMessage', mine).slice(2).map((c) => JSON.stringify(c.body)).join('');
    expect(own).toMatch(/137/);
  });

  it('no token or signing secret in any log line, error or message sent to the workspace', async () => {
    expect(app.lines.some((l) => l.level === 'debug')).toBe(true);
    const everything = app.output() + fake.calls.map((c) => c.raw.toString('utf8')).join('\n');
    for (const secret of [BOT_TOKEN, SECRET, 'xoxb-fake']) expect(everything).not.toContain(secret);
  });
});
