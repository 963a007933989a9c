/**
 * The inbox: every request the app has acknowledged, until it is answered (or definitively given
 * up). Two jobs:
 *
 * 1. Duplicate deliveries. The platform re-sends an event it thinks was not acknowledged
 *    (X-Slack-Retry-Num / X-Slack-Retry-Reason; Socket Mode envelopes likewise). A request is
 *    known by a key — the event's `event_id`, or for a slash command its `trigger_id` with its
 *    `response_url` (both unique per invocation) — and a key already in the inbox is not answered
 *    again, also after a restart. Keys are kept for DEDUPE_WINDOW_MS after the answer (the
 *    platform's retries come within minutes), then pruned, so the file stays small.
 * 2. Restarts. A request acknowledged but not yet answered when the app stops (SIGTERM with work
 *    still queued, or a crash) stays `queued`; the next start answers it (`pending()`), unless it
 *    is older than RESUME_WINDOW_MS (a slash command's response URL lives 30 minutes) or has already
 *    been tried MAX_ATTEMPTS times (a request that keeps killing the app is not retried forever).
 *
 * A SQLite file of its own beside the log (`<log>.inbox`), written with synchronous=NORMAL: a
 * process crash loses nothing, a power cut may lose the last few keys. Without a log file (the
 * log unavailable) the same interface runs in memory: duplicates are still caught while the
 * process lives, and nothing is resumed.
 */
import Database from 'better-sqlite3';

export const DEDUPE_WINDOW_MS = 60 * 60 * 1000;
export const RESUME_WINDOW_MS = 25 * 60 * 1000;
export const MAX_ATTEMPTS = 2;
/** keys kept in memory at most (the in-memory inbox) */
export const MEMORY_KEYS_MAX = 50_000;

export interface InboxEntry {
  key: string;
  source: 'command' | 'mention';
  channel: string;
  user: string;
  threadTs?: string;
  /** slash commands: where ephemeral replies go */
  responseUrl?: string;
  text: string;
  /** ISO time the request arrived (the engine's "now", so a resumed request means the same) */
  now: string;
  /** times the app has started on it (1 on first receipt) */
  attempts: number;
}

export interface Inbox {
  /** Records an accepted request; false (and nothing recorded) when its key was seen before. */
  accept(e: Omit<InboxEntry, 'attempts'>): boolean;
  /** The request is answered or given up: it will not be resumed. */
  finish(key: string): void;
  /** Requests accepted but never finished, oldest first; each one's attempts counted up. */
  takePending(): { resume: InboxEntry[]; expired: InboxEntry[] };
  readonly persistent: boolean;
  close(): void;
}

const now = () => Date.now();

class MemoryInbox implements Inbox {
  readonly persistent = false;
  /** key → ms when finished (0 while open); insertion order is age order */
  private readonly keys = new Map<string, number>();
  accept(e: Omit<InboxEntry, 'attempts'>): boolean {
    if (this.keys.has(e.key)) return false;
    this.keys.set(e.key, 0);
    this.prune();
    return true;
  }
  finish(key: string): void {
    if (this.keys.has(key)) this.keys.set(key, now());
  }
  takePending() {
    return { resume: [], expired: [] };
  }
  private prune(): void {
    const cut = now() - DEDUPE_WINDOW_MS;
    for (const [k, done] of this.keys) {
      if (this.keys.size <= MEMORY_KEYS_MAX && (done === 0 || done > cut)) break;
      this.keys.delete(k);
    }
  }
  close(): void {}
}

interface Row {
  key: string;
  source: string;
  channel: string;
  user: string;
  thread_ts: string | null;
  response_url: string | null;
  text: string;
  now: string;
  attempts: number;
  received_ms: number;
}

class SqliteInbox implements Inbox {
  readonly persistent = true;
  private readonly db: Database.Database;
  private readonly stmts;
  private accepted = 0;

  constructor(path: string) {
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    this.db.pragma('synchronous = NORMAL');
    this.db.pragma('busy_timeout = 2000');
    this.db.exec(`CREATE TABLE IF NOT EXISTS inbox (
      key TEXT PRIMARY KEY,
      source TEXT NOT NULL,
      channel TEXT NOT NULL,
      user TEXT NOT NULL,
      thread_ts TEXT,
      response_url TEXT,
      text TEXT NOT NULL,
      now TEXT NOT NULL,
      attempts INTEGER NOT NULL DEFAULT 1,
      received_ms INTEGER NOT NULL,
      finished_ms INTEGER
    );
    CREATE INDEX IF NOT EXISTS inbox_open ON inbox (finished_ms, received_ms);`);
    this.stmts = {
      insert: this.db.prepare(
        `INSERT OR IGNORE INTO inbox (key, source, channel, user, thread_ts, response_url, text, now, attempts, received_ms)
         VALUES (@key, @source, @channel, @user, @thread_ts, @response_url, @text, @now, 1, @received_ms)`,
      ),
      finish: this.db.prepare('UPDATE inbox SET finished_ms = ? WHERE key = ? AND finished_ms IS NULL'),
      open: this.db.prepare('SELECT * FROM inbox WHERE finished_ms IS NULL ORDER BY received_ms, rowid'),
      bump: this.db.prepare('UPDATE inbox SET attempts = attempts + 1 WHERE key = ?'),
      prune: this.db.prepare('DELETE FROM inbox WHERE finished_ms IS NOT NULL AND finished_ms < ?'),
    };
    this.stmts.prune.run(now() - DEDUPE_WINDOW_MS);
  }

  accept(e: Omit<InboxEntry, 'attempts'>): boolean {
    const r = this.stmts.insert.run({
      key: e.key,
      source: e.source,
      channel: e.channel,
      user: e.user,
      thread_ts: e.threadTs ?? null,
      response_url: e.responseUrl ?? null,
      text: e.text,
      now: e.now,
      received_ms: now(),
    });
    if (++this.accepted % 500 === 0) this.stmts.prune.run(now() - DEDUPE_WINDOW_MS);
    return r.changes === 1;
  }

  finish(key: string): void {
    this.stmts.finish.run(now(), key);
  }

  takePending() {
    const rows = this.stmts.open.all() as Row[];
    const resume: InboxEntry[] = [];
    const expired: InboxEntry[] = [];
    const cut = now() - RESUME_WINDOW_MS;
    for (const r of rows) {
      const e: InboxEntry = {
        key: r.key,
        source: r.source === 'mention' ? 'mention' : 'command',
        channel: r.channel,
        user: r.user,
        ...(r.thread_ts ? { threadTs: r.thread_ts } : {}),
        ...(r.response_url ? { responseUrl: r.response_url } : {}),
        text: r.text,
        now: r.now,
        attempts: r.attempts + 1,
      };
      if (r.received_ms < cut || r.attempts >= MAX_ATTEMPTS) {
        expired.push(e);
      } else {
        this.stmts.bump.run(r.key);
        resume.push(e);
      }
    }
    return { resume, expired };
  }

  close(): void {
    try {
      this.db.close();
    } catch {
      /* already closed */
    }
  }
}

/** Opens the inbox beside the log at `dbPath`, or an in-memory one when there is no log. */
export function openInbox(dbPath: string | null): Inbox {
  if (dbPath === null || dbPath === ':memory:') return new MemoryInbox();
  return new SqliteInbox(`${dbPath}.inbox`);
}

export function memoryInbox(): Inbox {
  return new MemoryInbox();
}
