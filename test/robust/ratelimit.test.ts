/**
 * The per-user token bucket on a hand-driven clock (token-bucket arithmetic: `burst` at once,
 * then one request per 60/perMinute seconds; common practice for request rate limits), and the
 * bound on what it remembers.
 */
import { describe, it, expect } from 'vitest';
import { UserRateLimit } from '../../src/chat/ratelimit.js';

describe('per-user rate limit', () => {
  it('allows the burst, then one per refill interval, and notifies once per notice period', () => {
    let now = 0;
    const rl = new UserRateLimit({ burst: 3, perMinute: 60, noticeEverySeconds: 30, maxUsers: 100 }, () => now);
    expect([rl.take('U1'), rl.take('U1'), rl.take('U1')].every((d) => d.ok)).toBe(true);
    const first = rl.take('U1');
    expect(first).toEqual({ ok: false, retryInSeconds: 1, notify: true });
    expect(rl.take('U1')).toMatchObject({ ok: false, notify: false });
    expect(rl.take('U2').ok).toBe(true); // others are not held up
    now += 1000; // one token back after 60/60 s
    expect(rl.take('U1').ok).toBe(true);
    expect(rl.take('U1')).toMatchObject({ ok: false, notify: false }); // still within the 30 s notice period
    now += 31_000;
    for (let i = 0; i < 3; i++) expect(rl.take('U1').ok).toBe(true); // refilled to the burst, not beyond
    expect(rl.take('U1')).toMatchObject({ ok: false, notify: true });
  });

  it('remembers at most maxUsers users and forgets idle ones', () => {
    let now = 0;
    const rl = new UserRateLimit({ burst: 2, perMinute: 600, noticeEverySeconds: 1, maxUsers: 50 }, () => now);
    for (let i = 0; i < 5000; i++) {
      rl.take(`U${i}`);
      expect(rl.tracked).toBeLessThanOrEqual(50);
    }
    now += 60_000; // everyone refilled and quiet
    for (let i = 0; i < 20; i++) rl.take('UACTIVE1');
    expect(rl.tracked).toBeLessThan(50);
  });
});
