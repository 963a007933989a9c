/**
 * The dispatcher: takes acknowledged requests from the shared queue (store/RequestQueue) and runs
 * them, at most `capacity` at a time (one per worker), keeping a lease on each.
 *
 * - Whichever instance recorded a request, any instance may answer it: each claims the oldest
 *   request that is the first unanswered one of its channel, so a channel's answers go out in
 *   request order across instances while other channels run side by side.
 * - Leases: a claimed request is this instance's for `leaseMs` (KOLMO_LEASE_MS, default 10 s),
 *   renewed every `renewMs` (KOLMO_LEASE_RENEW_MS, 3 s) while it runs. If the instance dies, the lease runs out and another instance (or this
 *   one after a restart) takes the request over at its next poll: within leaseMs + pollMs.
 * - Polling every `pollMs` (KOLMO_QUEUE_POLL_MS, 500 ms) finds work recorded by other instances and leases that ran
 *   out; work recorded here wakes the dispatcher at once (`wake()`).
 * - A queue that cannot be read (the database away) is retried with a growing pause; `healthy`
 *   says whether the last poll got through.
 */
import { LEASE_DEFAULT_MS, LEASE_RENEW_DEFAULT_MS, QUEUE_POLL_DEFAULT_MS } from '../config.js';
import type { ClaimedRequest, Progress, RequestQueue } from '../verbs/ask.js';

export interface Claim {
  request: ClaimedRequest;
  /** records what of the answer has been posted (false: the lease was lost; stop posting) */
  progress(p: Progress): Promise<boolean>;
  /** answered (or given up): done */
  finish(): Promise<void>;
  /** handed back unanswered (shutdown) */
  release(): Promise<void>;
}

export interface DispatcherOptions {
  queue: RequestQueue;
  /** this instance's name in the leases (host, pid and a random part) */
  owner: string;
  /** requests run at once (the number of workers) */
  capacity: number;
  leaseMs?: number;
  renewMs?: number;
  pollMs?: number;
  /** runs one claimed request; must end with claim.finish() or claim.release() (else the lease runs out) */
  handle(claim: Claim): Promise<void>;
  onError?(what: string, err: unknown): void;
}


export class Dispatcher {
  private readonly held = new Map<string, ClaimedRequest>();
  private pumping = false;
  private again = false;
  private stopped = false;
  private poll?: NodeJS.Timeout;
  private heartbeat?: NodeJS.Timeout;
  private failures = 0;
  private pauseUntil = 0;
  private lastOk = Date.now();
  private readonly idle = new Set<() => void>();
  readonly leaseMs: number;
  readonly pollMs: number;

  constructor(private readonly o: DispatcherOptions) {
    this.leaseMs = o.leaseMs ?? LEASE_DEFAULT_MS;
    this.pollMs = o.pollMs ?? QUEUE_POLL_DEFAULT_MS;
  }

  /** requests this instance is running */
  get running(): number {
    return this.held.size;
  }

  /** the last poll of the queue got through (within three poll periods) */
  get healthy(): boolean {
    return this.failures === 0 && Date.now() - this.lastOk < Math.max(5000, 3 * this.pollMs);
  }

  start(): void {
    this.poll = setInterval(() => this.wake(), this.pollMs);
    this.heartbeat = setInterval(() => void this.renew(), this.o.renewMs ?? LEASE_RENEW_DEFAULT_MS);
    this.poll.unref();
    this.heartbeat.unref();
    this.wake();
  }

  /** Looks for work now (a request was just recorded here, or one finished). */
  wake(): void {
    if (this.stopped) return;
    if (this.pumping) {
      this.again = true;
      return;
    }
    void this.pump();
  }

  private async pump(): Promise<void> {
    this.pumping = true;
    try {
      do {
        this.again = false;
        while (!this.stopped && this.held.size < this.o.capacity && Date.now() >= this.pauseUntil) {
          let r: ClaimedRequest | undefined;
          try {
            r = await this.o.queue.claim(this.o.owner, this.leaseMs);
            this.failures = 0;
            this.lastOk = Date.now();
          } catch (err) {
            this.failures++;
            this.pauseUntil = Date.now() + Math.min(5000, 250 * 2 ** Math.min(this.failures, 5));
            this.o.onError?.('the queue could not be read', err);
            break;
          }
          if (!r) break;
          if (this.stopped) {
            await this.o.queue.release(r.key, this.o.owner).catch(() => undefined);
            break;
          }
          this.run(r);
        }
      } while (this.again && !this.stopped);
    } finally {
      this.pumping = false;
    }
  }

  private run(r: ClaimedRequest): void {
    this.held.set(r.key, r);
    let settled = false;
    const settle = () => {
      settled = true;
      this.held.delete(r.key);
      if (this.held.size === 0) for (const f of this.idle) f();
      this.wake();
    };
    const q = this.o.queue;
    const owner = this.o.owner;
    const claim: Claim = {
      request: r,
      progress: async (p) => {
        r.progress = { ...r.progress, ...p };
        return q.setProgress(r.key, owner, r.progress);
      },
      finish: async () => {
        try {
          await q.finish(r.key, owner);
        } finally {
          settle();
        }
      },
      release: async () => {
        try {
          await q.release(r.key, owner);
        } finally {
          settle();
        }
      },
    };
    this.o.handle(claim).then(
      () => {
        if (!settled) settle(); // the handler forgot: the lease will run out and the request be taken over
      },
      (err) => {
        this.o.onError?.('a request failed', err);
        if (!settled) settle();
      },
    );
  }

  private async renew(): Promise<void> {
    if (this.held.size === 0) return;
    try {
      await this.o.queue.renew(this.o.owner, [...this.held.keys()], this.leaseMs);
    } catch (err) {
      this.o.onError?.('the leases could not be renewed', err);
    }
  }

  /** Stops claiming; resolves when nothing runs any more or after `timeoutMs` (false then). */
  async stop(timeoutMs: number): Promise<boolean> {
    this.stopped = true;
    clearInterval(this.poll);
    if (this.held.size === 0) {
      clearInterval(this.heartbeat);
      return true;
    }
    const done = await new Promise<boolean>((resolve) => {
      const t = setTimeout(() => {
        this.idle.delete(f);
        resolve(false);
      }, timeoutMs);
      const f = () => {
        clearTimeout(t);
        this.idle.delete(f);
        resolve(true);
      };
      this.idle.add(f);
    });
    if (done) clearInterval(this.heartbeat);
    return done;
  }

  /** Ends the heartbeat (after the last release). */
  close(): void {
    this.stopped = true;
    clearInterval(this.poll);
    clearInterval(this.heartbeat);
  }
}
