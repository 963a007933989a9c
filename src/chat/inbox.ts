/**
 * The in-memory inbox, for the path without a store (the SQLite file could not be opened, or the
 * store failed at the moment a request came): it keeps the keys of deliveries this process has
 * seen for an hour, so a re-sent delivery is still answered once while the process lives. With a
 * store, the shared request queue (src/store, RequestQueue) is the inbox, across restarts and
 * instances; the windows below apply to it too.
 */

export const DEDUPE_WINDOW_MS = 60 * 60 * 1000;
export const RESUME_WINDOW_MS = 25 * 60 * 1000;
export const MAX_ATTEMPTS = 2;
/** keys kept in memory at most (the in-memory inbox) */
export const MEMORY_KEYS_MAX = 50_000;

/** The keys of deliveries seen by this process in the last DEDUPE_WINDOW_MS (at most MEMORY_KEYS_MAX). */
export class MemoryInbox {
  /** key → ms when first seen; insertion order is age order */
  private readonly keys = new Map<string, number>();

  /** Records a delivery key; false when it was seen before (a re-sent delivery). */
  accept(key: string): boolean {
    if (this.keys.has(key)) return false;
    this.keys.set(key, Date.now());
    const cut = Date.now() - DEDUPE_WINDOW_MS;
    for (const [k, at] of this.keys) {
      if (this.keys.size <= MEMORY_KEYS_MAX && at > cut) break;
      this.keys.delete(k);
    }
    return true;
  }
}
