/**
 * Per-user rate limit: a token bucket per user (`burst` requests at once, refilled at `perMinute`).
 * A request beyond it is not queued; the asker is told politely, at most once per `noticeEverySeconds`
 * (someone pasting the same request fifty times gets one notice, not fifty — the notices would
 * themselves spend the app's own Web API allowance).
 *
 * Memory is bounded: a bucket that has refilled completely carries no information and is dropped,
 * and beyond `maxUsers` tracked users the longest-idle ones are forgotten (at worst such a user
 * gets a fresh burst).
 */
import { USER_BURST_DEFAULT, USER_PER_MINUTE_DEFAULT } from '../config.js';

export interface UserRateOptions {
  burst: number;
  perMinute: number;
  noticeEverySeconds: number;
  maxUsers: number;
}

export const USER_RATE_DEFAULTS: UserRateOptions = { burst: USER_BURST_DEFAULT, perMinute: USER_PER_MINUTE_DEFAULT, noticeEverySeconds: 30, maxUsers: 20_000 };

export type RateDecision = { ok: true } | { ok: false; retryInSeconds: number; notify: boolean };

interface Bucket {
  tokens: number;
  at: number;
  noticeAt: number;
}

export class UserRateLimit {
  private readonly buckets = new Map<string, Bucket>();
  private readonly perMs: number;

  constructor(
    readonly opts: UserRateOptions = USER_RATE_DEFAULTS,
    private readonly clock: () => number = () => performance.now(),
  ) {
    if (!(opts.burst >= 1 && opts.perMinute > 0 && opts.maxUsers >= 1)) throw new RangeError('rate limit: burst ≥ 1, perMinute > 0, maxUsers ≥ 1');
    this.perMs = opts.perMinute / 60000;
  }

  get tracked(): number {
    return this.buckets.size;
  }

  take(user: string): RateDecision {
    const t = this.clock();
    this.sweep(t);
    let b = this.buckets.get(user);
    if (b) {
      this.buckets.delete(user); // re-inserted below: the map's order is least recently seen first
      b.tokens = Math.min(this.opts.burst, b.tokens + (t - b.at) * this.perMs);
      b.at = t;
    } else {
      b = { tokens: this.opts.burst, at: t, noticeAt: -Infinity };
    }
    this.buckets.set(user, b);
    if (b.tokens >= 1) {
      b.tokens -= 1;
      return { ok: true };
    }
    const retryInSeconds = Math.max(1, Math.ceil((1 - b.tokens) / this.perMs / 1000));
    const notify = t - b.noticeAt >= this.opts.noticeEverySeconds * 1000;
    if (notify) b.noticeAt = t;
    return { ok: false, retryInSeconds, notify };
  }

  private sweep(t: number): void {
    while (this.buckets.size >= this.opts.maxUsers) {
      const oldest = this.buckets.keys().next().value as string;
      this.buckets.delete(oldest);
    }
    // drop a few idle, full buckets from the old end on every call (amortised O(1))
    let n = 0;
    for (const [user, b] of this.buckets) {
      if (n++ >= 4) break;
      const full = b.tokens + (t - b.at) * this.perMs >= this.opts.burst;
      const quiet = t - b.noticeAt >= this.opts.noticeEverySeconds * 1000;
      if (full && quiet) this.buckets.delete(user);
      else break;
    }
  }
}
