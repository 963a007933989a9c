/**
 * The dispatcher: takes acknowledged requests from the shared queue (store/RequestQueue) and runs
 * them, at most `capacity` at a time (one per worker), keeping a lease on each.
 *
 * - Whichever instance recorded a request, any instance may answer it: each claims the oldest
 *   request that is the first unanswered one of its channel, so a channel's answers go out in
 *   request order across instances while other channels run side by side.
 * - Leases: a claimed request is this instance's for `leaseMs` (KOLMO_LEASE_MS, default 10 s),
 *   renewed every `renewMs` (KOLMO_LEASE_RENEW_MS, 3 s) while it runs. If the instance dies, the
 *   lease runs out and another instance (or this one after a restart) takes the request over at
 *   its next poll: within leaseMs + pollMs.
 * - Polling every `pollMs` (KOLMO_QUEUE_POLL_MS, 500 ms) finds work recorded by other instances
 *   and leases that ran out; work recorded here wakes the dispatcher at once (`wake()`).
 * - A queue that cannot be read (the database away) is retried with a growing pause; `healthy`
 *   says whether the last poll got through.
 * - The database away while a request runs: what the request has posted meanwhile (its progress),
 *   and that it is done, cannot be written. The dispatcher keeps both in memory, holds on to the
 *   claim, and writes them as soon as the database answers again — before it claims anything
 *   else, and before it lets go of the claim. Meanwhile no instance that has itself just come
 *   back from the outage takes over a lease that ran out during it: for one lease length after
 *   its own queue answers again it claims only requests nobody holds, which gives the holder that
 *   long to write what it kept. If a claim was taken over all the same (its holder was cut off
 *   from the database for longer than that), the holder says so in its log
 *   (`onLost`): parts of that answer may then be posted twice. DEVELOPERS.md, "Several instances".
 */
import { LEASE_DEFAULT_MS, LEASE_RENEW_DEFAULT_MS, QUEUE_POLL_DEFAULT_MS } from '../config.js';
import type { ClaimedRequest, Progress, RequestQueue } from '../verbs/ask.js';

export interface Claim {
  request: ClaimedRequest;
  /** records what of the answer has been posted (false: the claim was taken over; stop posting) */
  progress(p: Progress): Promise<boolean>;
  /** answered (or given up): done — written now, or kept and written when the database returns */
  finish(): Promise<void>;
  /** handed back unanswered (shutdown) — likewise */
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
  /** a claim this instance held with unwritten progress was taken over by another instance */
  onLost?(request: ClaimedRequest): void;
}

/** A claim this instance holds, and what of it the database has not been told yet. */
interface Held {
  r: ClaimedRequest;
  /** progress recorded in memory only (its write failed) */
  unwritten: boolean;
  /** the handler is done with it: to be recorded finished or released */
  ending?: 'finish' | 'release';
}

export class Dispatcher {
  private readonly held = new Map<string, Held>();
  private pumping = false;
  private again = false;
  private stopped = false;
  private poll?: NodeJS.Timeout;
  private heartbeat?: NodeJS.Timeout;
  private retry?: NodeJS.Timeout;
  private retries = 0;
  private writing?: Promise<boolean>;
  private failures = 0;
  private pauseUntil = 0;
  private lastOk = Date.now();
  /** until then, leases that ran out are not taken over (this instance has just got the queue back) */
  private noTakeoverUntil = 0;
  private readonly idle = new Set<() => void>();
  readonly leaseMs: number;
  readonly pollMs: number;
  readonly renewMs: number;

  constructor(private readonly o: DispatcherOptions) {
    this.leaseMs = o.leaseMs ?? LEASE_DEFAULT_MS;
    this.pollMs = o.pollMs ?? QUEUE_POLL_DEFAULT_MS;
    this.renewMs = o.renewMs ?? LEASE_RENEW_DEFAULT_MS;
  }

  /** requests this instance holds: running, or done with something still to write */
  get running(): number {
    return this.held.size;
  }

  /** claims whose progress or end is kept in memory, waiting for the database */
  get unwritten(): number {
    let n = 0;
    for (const h of this.held.values()) if (h.unwritten || h.ending) n++;
    return n;
  }

  /** the last poll of the queue got through (within three poll periods) */
  get healthy(): boolean {
    return this.failures === 0 && Date.now() - this.lastOk < Math.max(5000, 3 * this.pollMs);
  }

  start(): void {
    this.poll = setInterval(() => this.wake(), this.pollMs);
    this.heartbeat = setInterval(() => void this.renew(), this.renewMs);
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
        // what this instance kept in memory goes to the database before anything new is claimed
        if (this.unwritten > 0 && !(await this.writeBack())) break;
        while (!this.stopped && this.held.size < this.o.capacity && Date.now() >= this.pauseUntil) {
          let r: ClaimedRequest | undefined;
          try {
            const takeover = this.failures === 0 && Date.now() >= this.noTakeoverUntil;
            r = await this.o.queue.claim(this.o.owner, this.leaseMs, { takeover });
            this.answered();
          } catch (err) {
            this.failed();
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

  /** The queue answered: after an outage, leases that ran out during it are left to their holders for one lease length. */
  private answered(): void {
    if (this.failures > 0) this.noTakeoverUntil = Date.now() + this.leaseMs;
    this.failures = 0;
    this.lastOk = Date.now();
  }

  private failed(): void {
    this.failures++;
    this.pauseUntil = Date.now() + Math.min(5000, 250 * 2 ** Math.min(this.failures, 5));
  }

  private run(r: ClaimedRequest): void {
    const h: Held = { r, unwritten: false };
    this.held.set(r.key, h);
    const q = this.o.queue;
    const owner = this.o.owner;
    const end = async (how: 'finish' | 'release'): Promise<void> => {
      if (h.ending || !this.holds(h)) return;
      h.ending = how;
      if (how === 'release') {
        // its worker may have logged the check before it was stopped: the next claim looks for that entry
        r.progress = { ...r.progress, handedBack: true };
        h.unwritten = true;
      }
      // what is kept in memory goes first (writeBack retries until the database answers)
      if (h.unwritten) {
        await this.writeBack();
        return;
      }
      try {
        await q.finish(r.key, owner);
        this.settle(h);
      } catch (err) {
        this.failed();
        this.o.onError?.('the request could not be recorded done; kept in memory until the database answers', err);
        this.scheduleWriteBack();
      }
    };
    const claim: Claim = {
      request: r,
      progress: async (p) => {
        r.progress = { ...r.progress, ...p };
        if (!this.holds(h)) return false;
        if (h.unwritten) return true; // written with the rest when the database answers
        try {
          const mine = await q.setProgress(r.key, owner, r.progress);
          if (!mine) this.lost(h);
          return mine;
        } catch (err) {
          h.unwritten = true;
          this.failed();
          this.o.onError?.('what the answer has posted could not be recorded; kept in memory until the database answers', err);
          this.scheduleWriteBack();
          return true;
        }
      },
      finish: () => end('finish'),
      release: () => end('release'),
    };
    this.o.handle(claim).then(
      () => {
        if (!h.ending) this.settle(h); // the handler forgot: the lease will run out and the request be taken over
      },
      (err) => {
        this.o.onError?.('a request failed', err);
        if (!h.ending) this.settle(h);
      },
    );
  }

  private holds(h: Held): boolean {
    return this.held.get(h.r.key) === h;
  }

  private settle(h: Held): void {
    if (!this.holds(h)) return;
    this.held.delete(h.r.key);
    if (this.held.size === 0) for (const f of this.idle) f();
    this.wake();
  }

  /** Another instance holds the request now: this one writes nothing more for it. */
  private lost(h: Held): void {
    this.o.onLost?.(h.r);
    this.settle(h);
  }

  /**
   * Writes what was kept in memory: each claim's progress (which also tells whether this
   * instance still holds it), then its end. True when everything got through.
   */
  private writeBack(): Promise<boolean> {
    this.writing ??= (async () => {
      const q = this.o.queue;
      const owner = this.o.owner;
      try {
        for (const h of [...this.held.values()]) {
          if (!h.unwritten && !h.ending) continue;
          if (!(await q.setProgress(h.r.key, owner, h.r.progress))) {
            this.lost(h);
            continue;
          }
          h.unwritten = false;
          if (h.ending === 'finish') await q.finish(h.r.key, owner);
          else if (h.ending === 'release') await q.release(h.r.key, owner);
          if (h.ending) this.settle(h);
        }
        this.answered();
        this.retries = 0;
        return true;
      } catch (err) {
        this.failed();
        this.o.onError?.('what was kept in memory could not be written yet; retrying', err);
        return false;
      } finally {
        this.writing = undefined;
        if (this.unwritten > 0) this.scheduleWriteBack();
      }
    })();
    return this.writing;
  }

  /** Tries writeBack again soon: quickly at first, then at most every renewal period (under half a lease). */
  private scheduleWriteBack(): void {
    if (this.retry || this.writing) return;
    const ms = Math.min(this.renewMs, 50 * 2 ** Math.min(this.retries++, 8));
    this.retry = setTimeout(() => {
      this.retry = undefined;
      void this.writeBack().then((ok) => {
        if (ok) this.wake();
      });
    }, ms);
    this.retry.unref?.();
  }

  private async renew(): Promise<void> {
    if (this.held.size === 0) return;
    try {
      await this.o.queue.renew(this.o.owner, [...this.held.keys()], this.leaseMs);
      // the database answers again: what was kept in memory goes now
      if (this.unwritten > 0) void this.writeBack();
    } catch (err) {
      this.o.onError?.('the leases could not be renewed', err);
    }
  }

  /** Stops claiming; resolves when nothing is held any more or after `timeoutMs` (false then). */
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

  /** Ends the heartbeat and the write-back (after the last release). */
  close(): void {
    this.stopped = true;
    clearInterval(this.poll);
    clearInterval(this.heartbeat);
    clearTimeout(this.retry);
  }
}
