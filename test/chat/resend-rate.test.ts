/**
 * A re-sent delivery takes nothing from the sender's rate bucket, on one instance: with the
 * embedded SQLite log (the request queue is the inbox) and without any log (the in-memory inbox
 * and bucket: the SQLite file cannot be opened). The real app (`node dist/src/main.js`, HTTP mode)
 * against the loopback fake Web API. The cluster case is test/cluster/ratelimit.test.ts.
 *
 * Outside references: the platform's request signing and retry headers (X-Slack-Retry-Num /
 * -Reason, its Events API documentation); a token bucket grants `burst` requests at once (common
 * practice).
 */
import { describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { FAKE_BOT } from './fake-web-api.js';
import { httpEnv, mentionBody } from './harness.js';
import { appsFixture } from '../robust/fixture.js';
import { signedPost, until, type App } from '../robust/harness.js';

const BURST = 3;
const WAIT = 60_000;
const fx = appsFixture('kolmo-resend');

let ts = 0;
const mention = (user: string) => mentionBody({ text: 'help', channel: 'C0RESENDS1', user, ts: `1798700000.${String(++ts).padStart(6, '0')}`, botUserId: FAKE_BOT.user_id });

async function resendsTakeNoToken(app: App, user: string): Promise<string[]> {
  const deliver = async (body: string, retry = 0) => {
    const headers: Record<string, string> = retry > 0 ? { 'x-slack-retry-num': String(retry), 'x-slack-retry-reason': 'http_timeout' } : {};
    expect((await signedPost(app.port, body, 'application/json', headers)).status).toBe(200);
  };
  const first = mention(user);
  await deliver(first);
  await deliver(first, 1);
  await deliver(first, 2);
  for (let i = 1; i < BURST; i++) await deliver(mention(user));
  await deliver(mention(user));
  const outcomes = () => app.lines.filter((l) => l.msg === 'request' && l.user === user).map((l) => String(l.outcome));
  await until(() => outcomes().length >= BURST + 3, WAIT, 'every delivery logged');
  return outcomes().sort();
}

const expected = [...Array(2).fill('duplicate'), ...Array(BURST).fill('ephemeral'), 'rate-limited'].sort();
const env = (extra: Record<string, string>) => httpEnv(fx.fake.apiUrl, { KOLMO_WORKERS: '1', KOLMO_USER_BURST: String(BURST), KOLMO_USER_PER_MINUTE: '1', ...extra });

describe('a re-sent delivery takes no rate-limit token', () => {
  it('with the SQLite log (the shared request queue is the inbox)', { timeout: 120_000 }, async () => {
    const app = await fx.start(fx.freshDir(), env({}));
    expect(await resendsTakeNoToken(app, 'U0RESENDSQ')).toEqual(expected);
  });

  it('without a log (the in-memory inbox and bucket)', { timeout: 120_000 }, async () => {
    const dir = fx.freshDir();
    // the log's folder would be a file: the log cannot be opened, the app answers from memory
    writeFileSync(join(dir, 'not-a-folder'), 'x');
    const app = await fx.start(dir, env({ KOLMO_DB: join(dir, 'not-a-folder', 'kolmo.db') }));
    expect(app.lines.some((l) => /answering without it/.test(String(l.msg)))).toBe(true);
    expect(await resendsTakeNoToken(app, 'U0RESENDME')).toEqual(expected);
  });
});
