/**
 * The Web API client the app answers with: the platform library's client with every retry
 * bounded.
 *
 * - Connection failures, timeouts and 5xx answers: retried by the library's own policy
 *   (RETRY_CONFIG in platform.ts: 3 retries, 0.2 s … 2 s apart), each call cut off after API_TIMEOUT_MS.
 * - 429 with Retry-After: the library, left to itself, pauses *every* call of the client for as
 *   long as the header says — one channel's rate limit would hold up all channels, and a
 *   `Retry-After: 3600` would hold them for an hour. Here the library is told to reject rate-limited
 *   calls at once, and this class waits out the Retry-After of that one call only, at most
 *   RATE_LIMIT.retries times and only when the wait is at most RATE_LIMIT.maxWaitSeconds; beyond
 *   that the call fails with the library's rate-limited error, which deliver.ts explains to the asker.
 */
import bolt from '@slack/bolt';
import type { webApi } from '@slack/bolt';

type WebClientOptions = webApi.WebClientOptions;

export const RATE_LIMIT = {
  /** waits for one call's Retry-After before giving up */
  retries: 3,
  /** a longer Retry-After is not waited for: the answer would come too late to matter */
  maxWaitSeconds: 20,
} as const;

interface RateLimited {
  code?: string;
  retryAfter?: number;
}

export function isRateLimited(err: unknown): err is RateLimited & Error {
  return (err as RateLimited | undefined)?.code === 'slack_webapi_rate_limited_error';
}

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

export class BoundedClient extends bolt.webApi.WebClient {
  constructor(token: string, options: WebClientOptions, private readonly onRateLimited?: (method: string, retryAfter: number, attempt: number) => void) {
    super(token, { ...options, rejectRateLimitedCalls: true });
  }

  override async apiCall(method: string, options?: Record<string, unknown>): Promise<webApi.WebAPICallResult> {
    for (let attempt = 1; ; attempt++) {
      try {
        return await super.apiCall(method, options);
      } catch (err) {
        if (!isRateLimited(err)) throw err;
        const wait = Number.isFinite(err.retryAfter) && (err.retryAfter as number) >= 0 ? (err.retryAfter as number) : 1;
        this.onRateLimited?.(method, wait, attempt);
        if (attempt > RATE_LIMIT.retries || wait > RATE_LIMIT.maxWaitSeconds) throw err;
        await sleep(wait * 1000);
      }
    }
  }
}
