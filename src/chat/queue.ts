/**
 * Per-channel ordering with a bound on the total: requests of one channel are handled one after
 * another in arrival order (so log numbers and posts keep the order people asked in), different
 * channels run side by side. Beyond `limit` requests waiting or running, new ones are refused at
 * once so the asker can be told instead of waiting behind an ever longer line.
 */
export class ChannelQueue {
  private readonly tails = new Map<string, Promise<void>>();
  private pending = 0;

  constructor(private readonly limit: number) {}

  get size(): number {
    return this.pending;
  }

  /** Queues `fn` behind the channel's earlier work; false (and nothing queued) when full. */
  offer(channel: string, fn: () => Promise<void>): boolean {
    if (this.pending >= this.limit) return false;
    this.pending++;
    const prev = this.tails.get(channel) ?? Promise.resolve();
    const next = prev.then(fn).then(
      () => undefined,
      () => undefined, // fn reports its own failures; the chain must go on
    );
    const tail = next.finally(() => {
      this.pending--;
      if (this.tails.get(channel) === tail) this.tails.delete(channel);
    });
    this.tails.set(channel, tail);
    return true;
  }

  /** Resolves when everything queued so far has finished, or after `timeoutMs`. */
  async drain(timeoutMs: number): Promise<boolean> {
    const all = Promise.all([...this.tails.values()]).then(() => true);
    let timer: NodeJS.Timeout | undefined;
    const late = new Promise<boolean>((r) => {
      timer = setTimeout(() => r(false), timeoutMs);
    });
    const ok = await Promise.race([all, late]);
    clearTimeout(timer);
    return ok;
  }
}
