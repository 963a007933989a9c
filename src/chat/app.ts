/**
 * The workspace app (Bolt): `/kolmo <request>` and @-mentions, in HTTP mode or Socket Mode.
 * This file only wires the pieces together:
 *
 *   platform.ts      the Web API client's policy, the bot's identity, the Bolt app, HTTP guards
 *   listeners/       what the platform sends, by kind (commands, events), acknowledged at once
 *                    (the platform allows 3 seconds) and handed to the intake
 *   intake.ts        inbox (re-sent deliveries), rate limit, per-channel line, engine, delivery
 *   pool.ts          worker processes running the engine and the chart within the compute budget
 *   deliver.ts       where each part of a reply goes, through a client whose retries are bounded
 *                    (client.ts)
 *
 * On SIGTERM the app stops listening, gives answers in progress a grace period, and hands back
 * what is left: it stays in the inbox and the next start answers it.
 *
 * One log line per request: channel, user, verb, duration, outcome; the request text only at
 * debug level; never a secret (error texts are scrubbed of token shapes and the secrets' values).
 */
import { monitorEventLoopDelay, type IntervalHistogram } from 'node:perf_hooks';
import { scrub, type Log } from '../log.js';
import { openStore, defaultDbPath, type Store } from '../verbs/ask.js';
import { BoundedClient } from './client.js';
import type { DeliverDeps } from './deliver.js';
import { memoryInbox, openInbox, type Inbox } from './inbox.js';
import { Intake } from './intake.js';
import { registerListeners } from './listeners/index.js';
import { InlineEngine, WorkerPool, type Engine } from './pool.js';
import { ChannelQueue } from './queue.js';
import { USER_RATE_DEFAULTS, UserRateLimit } from './ratelimit.js';
import { clientOptionsOf, createBoltApp, identifyBot, secretsOf, startListening, type WorkspaceConfig } from './platform.js';

export { COMMAND } from './listeners/commands.js';
export { EVENTS_PATH } from './platform.js';

export interface ChatApp {
  mode: 'http' | 'socket';
  /** the port listened on (HTTP mode) */
  port?: number;
  botUserId?: string;
  stop(): Promise<void>;
}

/**
 * The log and the inbox beside it. Either may be unavailable: the app then answers without the
 * log, and catches re-sent deliveries in memory only.
 */
function openLogAndInbox(config: WorkspaceConfig, log: Log, errText: (err: unknown) => string): { dbPath: string | null; store: Store | null; inbox: Inbox } {
  let dbPath: string | null = null;
  let store: Store | null = null;
  try {
    dbPath = defaultDbPath(config.local.dbPath);
    // the app's own connection only records threads and delivery states: a process crash loses
    // none of them, and no fsync per answer holds up the event loop (the workers append the
    // checks themselves with the store's default, fsynced, durability)
    store = openStore(dbPath, { synchronous: 'normal' });
  } catch (err) {
    log.warn({ err: errText(err) }, 'the log is unavailable; answering without it');
    dbPath = null;
    store = null;
  }
  let inbox: Inbox;
  try {
    inbox = openInbox(dbPath);
  } catch (err) {
    log.warn({ err: errText(err) }, 'the inbox is unavailable; duplicates are caught in memory and unanswered requests are not resumed after a restart');
    inbox = memoryInbox();
  }
  return { dbPath, store, inbox };
}

const loopDelayMs = (h: IntervalHistogram) => {
  const ms = (ns: number) => Math.round(ns / 1e4) / 100;
  return { p50: ms(h.percentile(50)), p99: ms(h.percentile(99)), max: ms(h.max) };
};

/** Starts the app in the configured mode. Throws with a clear message when it cannot start. */
export async function startChatApp(config: WorkspaceConfig, log: Log): Promise<ChatApp> {
  const settings = config.chat;
  const secrets = secretsOf(config);
  const clientOptions = clientOptionsOf(config, log);
  const errText = (err: unknown): string => scrub(err instanceof Error ? err.message : String(err), secrets);

  const bot = await identifyBot(config, clientOptions);
  const { dbPath, store, inbox } = openLogAndInbox(config, log, errText);
  const engine: Engine =
    config.workers > 0
      ? new WorkerPool({
          size: config.workers,
          dbPath,
          taskTimeoutMs: config.taskTimeoutSeconds * 1000,
          onEvent: (e) => log.warn({ detail: e.detail }, e.event),
        })
      : new InlineEngine(store);
  const queue = new ChannelQueue(config.queueLimit);
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();

  // every reply goes through this client: bounded retries, a 429 holds up only its own call
  const client = new BoundedClient(config.botToken, clientOptions, (method, retryAfter, attempt) =>
    log.warn({ method, retryAfter, attempt }, 'rate-limited by the workspace'),
  );
  const delivery: DeliverDeps = {
    client,
    store,
    onLost: (what, err) => log.warn({ what, err: scrub((err as { data?: { error?: string } })?.data?.error ?? String(err), secrets) }, 'could not reach the asker'),
  };
  const intake = new Intake({
    config,
    settings,
    log,
    inbox,
    engine,
    queue,
    limiter: new UserRateLimit({ ...USER_RATE_DEFAULTS, ...settings.userRate }),
    delivery,
    errText,
  });

  const app = createBoltApp(config, settings, clientOptions, bot, log);
  registerListeners({ app, intake, botUserId: bot.botUserId, store, delivery, log, budget: settings.computeBudget, forms: {} });
  app.error(async (err) => {
    log.error({ err: errText(err), code: (err as { code?: string }).code }, 'listener error');
  });

  const port = await startListening(app, config, settings, log, engine.size);
  // requests a previous process acknowledged but did not answer
  intake.resumePending();

  let stopped: Promise<void> | undefined;
  return {
    mode: config.mode,
    port,
    botUserId: bot.botUserId,
    stop() {
      stopped ??= (async () => {
        intake.stop();
        log.info({ inLine: queue.size }, 'stopping: no new requests; finishing answers in progress');
        await app.stop().catch(() => undefined);
        const finished = await queue.drain(settings.shutdownGraceMs);
        // what is still computing is handed back (its worker is stopped; the inbox keeps it)
        await engine.close();
        if (!finished) await queue.drain(5000);
        loopDelay.disable();
        log.info({ ...intake.counts, loopDelayMs: loopDelayMs(loopDelay), rssMiB: Math.round(process.memoryUsage().rss / 1048576) }, 'stopped');
        inbox.close();
        store?.close();
      })();
      return stopped;
    },
  };
}
