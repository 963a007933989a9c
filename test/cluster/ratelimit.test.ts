/**
 * The per-user rate limit and re-sent deliveries, end to end: three instances of the real app
 * (`node dist/src/main.js`, HTTP mode) on one PostgreSQL database, against the loopback fake Web
 * API, reusing the cluster harness (harness.ts).
 *
 * - One person's burst spread round-robin over the three instances is limited once in total (the
 *   bucket lives in the database), not once per instance.
 * - A re-sent delivery (the same event id, with the platform's retry headers), whichever instance
 *   gets it, is acknowledged and not answered again, and takes nothing from the sender's bucket.
 *
 * Outside references: the platform's request signing and retry headers (X-Slack-Retry-Num /
 * -Reason, its Events API documentation); a token bucket grants `burst` requests at once (common
 * practice).
 */
import { describe, expect, it } from 'vitest';
import { FAKE_BOT } from '../chat/fake-web-api.js';
import { mentionBody } from '../chat/harness.js';
import { signedPost, until } from '../robust/harness.js';
import { clusterFixture } from './fixture.js';
import type { Instance } from './harness.js';

const BURST = 4;
const WAIT = 60_000;

// one request a minute refills: nothing comes back within the test
const f = clusterFixture('cluster_rate', { mode: 'http', count: 3, env: { KOLMO_USER_BURST: String(BURST), KOLMO_USER_PER_MINUTE: '1' } });

let ts = 0;
const mention = (user: string, channel: string) => mentionBody({ text: 'help', channel, user, ts: `1798800000.${String(++ts).padStart(6, '0')}`, botUserId: FAKE_BOT.user_id });
const deliver = async (to: Instance, body: string, retry = 0) => {
  const headers: Record<string, string> = retry > 0 ? { 'x-slack-retry-num': String(retry), 'x-slack-retry-reason': 'http_timeout' } : {};
  expect((await signedPost(to.app.port, body, 'application/json', headers)).status).toBe(200);
};
/** The outcomes of the requests of `user` logged by every instance. */
const outcomes = (user: string) =>
  f.cluster.instances
    .flatMap((x) => x.lines())
    .filter((l) => l.msg === 'request' && l.user === user)
    .map((l) => String(l.outcome));
const count = (xs: string[], x: string) => xs.filter((y) => y === x).length;

describe('the per-user rate limit across three instances on one PostgreSQL database', () => {
  it("one person's burst over all instances is limited once in total, not once per instance", { timeout: 120_000 }, async () => {
    const user = 'U0BURST001';
    const n = 3 * BURST; // per-instance buckets would answer all of them
    for (let i = 0; i < n; i++) await deliver(f.cluster.instances[i % 3], mention(user, `C0BURST${i % 3}`));
    await until(() => outcomes(user).length >= n, WAIT, 'every request of the burst logged');
    const got = outcomes(user);
    expect(got).toHaveLength(n);
    expect(count(got, 'ephemeral')).toBe(BURST);
    expect(count(got, 'rate-limited')).toBe(n - BURST);
    // the person is told once (one notice per period), by whichever instance refused first
    await until(() => f.fake.okCallsOf('chat.postEphemeral').filter((c) => c.body.user === user && /faster than it answers one person/.test(String(c.body.text))).length >= 1, WAIT, 'the notice');
    expect(f.fake.okCallsOf('chat.postEphemeral').filter((c) => c.body.user === user && /faster than it answers one person/.test(String(c.body.text)))).toHaveLength(1);
  });

  it('a re-sent delivery, to the same or another instance, is answered once and takes no token', { timeout: 120_000 }, async () => {
    const user = 'U0RESEND01';
    const first = mention(user, 'C0RESEND1');
    await deliver(f.cluster.instances[0], first);
    // the platform re-sends it (no acknowledgement seen in time): to the same instance and to the two others
    await deliver(f.cluster.instances[0], first, 1);
    await deliver(f.cluster.instances[1], first, 2);
    await deliver(f.cluster.instances[2], first, 3);
    // the rest of the burst is intact: BURST − 1 new requests are all answered, the next one is not
    for (let i = 1; i < BURST; i++) await deliver(f.cluster.instances[i % 3], mention(user, 'C0RESEND1'));
    await deliver(f.cluster.instances[1], mention(user, 'C0RESEND1'));
    await until(() => outcomes(user).length >= BURST + 4, WAIT, 'every delivery logged');
    const got = outcomes(user);
    expect(count(got, 'duplicate')).toBe(3);
    expect(count(got, 'ephemeral')).toBe(BURST);
    expect(count(got, 'rate-limited')).toBe(1);
  });
});
