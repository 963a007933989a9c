/**
 * The workspace app (Bolt): `/kolmo <request>` and @-mentions, in HTTP mode or Socket Mode; one
 * instance or several sharing one store (PostgreSQL, KOLMO_DATABASE_URL). This file only wires the
 * pieces together:
 *
 *   platform.ts      the Web API client's policy, the bot's identity, the Bolt app, HTTP guards,
 *                    where /healthz and /metrics are served
 *   listeners/       what the platform sends, by kind (commands, events), acknowledged at once
 *                    (the platform allows 3 seconds) and handed to the intake
 *   intake.ts        record first (the shared request queue catches re-sent deliveries; the
 *                    shared rate limit; the bound on the line), then the answer of a claimed request
 *   dispatch.ts      claims requests from the queue, one per worker, under leases another
 *                    instance takes over when this one dies; a channel's answers in request order
 *   pool.ts          worker processes running the engine and the chart within the compute budget
 *                    (on PostgreSQL they reach the store through this process: ipc-store.ts)
 *   deliver.ts       where each part of a reply goes, through a client whose retries are bounded
 *                    (client.ts)
 *   metrics.ts       Prometheus metrics
 *
 * On SIGTERM the app stops listening, gives answers in progress a grace period, and hands the rest
 * back to the queue: another instance, or the next start, answers them.
 *
 * One log line per request: channel, user, verb, duration, outcome; the request text only at
 * debug level; never a secret (error texts are scrubbed of token shapes and the secrets' values).
 */
import { randomBytes } from 'node:crypto';
import type { IncomingMessage, ServerResponse } from 'node:http';
import { hostname } from 'node:os';
import { monitorEventLoopDelay, type IntervalHistogram } from 'node:perf_hooks';
import { scrub, type Log } from '../log.js';
import { databaseFromEnv, defaultDbPath, openDatabase, StoreError, type AsyncStore, type DatabaseChoice } from '../verbs/ask.js';
import { BoundedClient } from './client.js';
import type { DeliverDeps } from './deliver.js';
import { Dispatcher } from './dispatch.js';
import { DEDUPE_WINDOW_MS } from './inbox.js';
import { createIntake } from './intake.js';
import { registerListeners } from './listeners/index.js';
import { createMetrics, type Metrics } from './metrics.js';
import { InlineEngine, WorkerPool, type Engine } from './pool.js';
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

const loopDelayMs = (h: IntervalHistogram) => {
  const ms = (ns: number) => Math.round(ns / 1e4) / 100;
  return { p50: ms(h.percentile(50)), p99: ms(h.percentile(99)), max: ms(h.max) };
};

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/** how long /healthz waits for the workers' answers */
const WORKER_PING_MS = 1000;
/** how long the start waits for the workers to be up before it listens (they may still come after) */
const WORKER_START_MS = 20_000;

/**
 * The store. PostgreSQL (several instances share it) must be there at start: an instance that
 * would answer from memory alone breaks the cluster's guarantees, so a malformed or unreachable
 * URL stops the start with one clear message. The SQLite file, as before, may fail: the app then
 * answers without a log.
 */
async function openTheStore(config: WorkspaceConfig, owner: string, log: Log, errText: (err: unknown) => string): Promise<{ choice: DatabaseChoice | null; store: AsyncStore | null }> {
  let choice: DatabaseChoice;
  try {
    choice = databaseFromEnv();
  } catch (err) {
    if (err instanceof StoreError && err.code === 'invalid') throw new Error(errText(err));
    log.warn({ err: errText(err) }, 'the log is unavailable; answering without it');
    return { choice: null, store: null };
  }
  if (choice.backend === 'postgres') {
    try {
      // six connections per instance: a pool of five, and the one that listens for new requests
      const poolSize = config.chat.queue.listen ? 5 : 6;
      return { choice, store: await openDatabase(choice, { poolSize, applicationName: `kolmo ${owner}`.slice(0, 63) }) };
    } catch (err) {
      throw new Error(`KOLMO_DATABASE_URL: ${errText(err)}`);
    }
  }
  try {
    const sqlite: DatabaseChoice = { backend: 'sqlite', path: defaultDbPath(config.local.dbPath) };
    // the app's own connection records requests, threads and delivery states: a process crash
    // loses none of them (synchronous=normal); the workers append the checks themselves with
    // the store's default, fsynced, durability
    return { choice: sqlite, store: await openDatabase(sqlite, { synchronous: 'normal' }) };
  } catch (err) {
    log.warn({ err: errText(err) }, 'the log is unavailable; answering without it');
    return { choice: null, store: null };
  }
}

/** The store with every StoreError counted in the metrics (by operation and code). */
function countingStore(store: AsyncStore, metrics: Metrics): AsyncStore {
  return new Proxy(store, {
    get(target, prop, receiver) {
      const v = Reflect.get(target, prop, receiver) as unknown;
      if (typeof v !== 'function') return v;
      return (...args: unknown[]) => {
        const out = (v as (...a: unknown[]) => unknown).apply(target, args);
        if (out instanceof Promise) {
          return out.catch((err: unknown) => {
            if (err instanceof StoreError) metrics.storeErrors.inc({ op: err.op, code: err.code });
            throw err;
          });
        }
        return out;
      };
    },
  });
}

/** Starts the app in the configured mode. Throws with a clear message when it cannot start. */
export async function startChatApp(config: WorkspaceConfig, log: Log): Promise<ChatApp> {
  const settings = config.chat;
  const secrets = secretsOf(config);
  const clientOptions = clientOptionsOf(config, log);
  const errText = (err: unknown): string => scrub(err instanceof Error ? err.message : String(err), secrets);

  const bot = await identifyBot(config, clientOptions);
  const owner = `${hostname()}:${process.pid}:${randomBytes(3).toString('hex')}`;
  const { choice, store } = await openTheStore(config, owner, log, errText);

  let running = () => 0;
  const metrics = createMetrics({ depth: async () => (counted ? counted.depth() : null), running: () => running() });
  // every StoreError this instance meets is counted (the workers' too when they reach the store through this process)
  const counted = store ? countingStore(store, metrics) : null;

  const engine: Engine =
    config.workers > 0
      ? new WorkerPool({
          size: config.workers,
          db: !counted || !choice ? null : choice.backend === 'sqlite' ? { kind: 'file', path: choice.path } : { kind: 'parent', store: counted },
          taskTimeoutMs: config.taskTimeoutSeconds * 1000,
          onEvent: (e) => log.warn({ detail: e.detail }, e.event),
        })
      : new InlineEngine(counted);
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();

  // every reply goes through this client: bounded retries, a 429 holds up only its own call
  const client = new BoundedClient(config.botToken, clientOptions, (method, retryAfter, attempt) =>
    log.warn({ method, retryAfter, attempt }, 'rate-limited by the workspace'),
  );
  const deps: DeliverDeps = {
    client,
    store: counted,
    onLost: (what, err) => log.warn({ what, err: scrub((err as { data?: { error?: string } })?.data?.error ?? String(err), secrets) }, 'could not reach the asker'),
  };
  const intake = createIntake({ config, settings, log, store: counted, engine, deps, metrics, botUserId: bot.botUserId, errText });
  const dispatcher = counted
    ? new Dispatcher({
        queue: counted,
        owner,
        capacity: Math.max(1, engine.size),
        ...settings.queue,
        handle: intake.handle,
        onError: (what, err) => log.warn({ err: errText(err) }, what),
        onLost: (r) => {
          metrics.claimsLost.inc();
          log.warn({ channel: r.channel, user: r.user, attempt: r.attempts }, 'another instance took over a request this one was answering while the database was away; parts of its answer may be posted twice');
        },
      })
    : null;
  if (dispatcher) intake.useDispatcher(dispatcher);
  running = () => (dispatcher?.running ?? 0) + intake.localSize;

  /**
   * Ready: the database answers (within 2 s), the workers answer over their IPC channel (within
   * 1 s; at least one: "degraded" when some do not — a silent idle worker is replaced by the pool),
   * the dispatcher's last poll got through. `unwritten`: claims whose progress is kept in memory
   * until the database answers again.
   */
  const health = async () => {
    const [database, pool] = await Promise.all([
      !counted
        ? 'none'
        : Promise.race([
            counted.ping().then(
              () => 'ok',
              () => 'unavailable',
            ),
            sleep(2000).then(() => 'timeout'),
          ]),
      engine.ping(WORKER_PING_MS),
    ]);
    const workers = pool.answering === 0 ? 'down' : pool.answering < pool.of ? 'degraded' : 'ok';
    const queue = !dispatcher ? 'none' : dispatcher.healthy ? 'ok' : 'unreachable';
    const ready = (database === 'ok' || database === 'none') && workers !== 'down' && queue !== 'unreachable' && !intake.stopping;
    return { ready, database, workers, answering: `${pool.answering}/${pool.of}`, queue, ...(dispatcher ? { unwritten: dispatcher.unwritten } : {}) };
  };
  const ops = async (req: IncomingMessage, res: ServerResponse): Promise<boolean> => {
    const path = (req.url ?? '').split('?')[0];
    if (req.method !== 'GET') return false;
    if (path === '/healthz') {
      const h = await health();
      res.writeHead(h.ready ? 200 : 503, { 'content-type': 'application/json' });
      res.end(JSON.stringify(h) + '\n');
      return true;
    }
    if (path === '/metrics') {
      const text = await metrics.text();
      res.writeHead(200, { 'content-type': metrics.contentType });
      res.end(text);
      return true;
    }
    return false;
  };

  const app = createBoltApp(config, settings, clientOptions, bot, log, ops);
  intake.recordFirst(app);
  registerListeners({ app, intake, botUserId: bot.botUserId, store: counted, delivery: deps, log, budget: settings.computeBudget, forms: {} });
  app.error(async (err) => {
    log.error({ err: errText(err), code: (err as { code?: string }).code }, 'listener error');
  });

  // listening means ready to work: the workers are loaded first (bounded; /healthz says if not)
  if (!(await engine.started(WORKER_START_MS))) log.warn({ workers: engine.size }, 'the workers are not all up yet; starting anyway');
  const { port, opsServer } = await startListening(app, config, settings, log, engine.size, ops, { store: counted?.backend ?? 'none', owner });

  // requests recorded but not answered (by a previous run, or by instances that stopped) are
  // claimed by the dispatcher like any other; say so once
  if (counted && dispatcher) {
    try {
      const open = await counted.depth();
      if (open > 0) log.info({ open }, 'picked up requests left by the previous run');
      const pruned = await counted.prune(DEDUPE_WINDOW_MS);
      if (pruned > 0) log.debug({ pruned }, 'forgot delivery keys older than the re-send window');
    } catch (err) {
      log.warn({ err: errText(err) }, 'the request queue could not be read; it is retried');
    }
    dispatcher.start();
  }
  // PostgreSQL: idle dispatchers are woken when any instance records a request (polling stays the fallback)
  let listening: { close(): Promise<void> } | undefined;
  if (counted?.listen && dispatcher && settings.queue.listen) {
    listening = await counted.listen(
      () => dispatcher.wake(),
      (err) => log.warn({ err: errText(err) }, 'not listening for new requests meanwhile (polling every KOLMO_QUEUE_POLL_MS)'),
    );
  }

  let stopped: Promise<void> | undefined;
  return {
    mode: config.mode,
    port,
    botUserId: bot.botUserId,
    stop() {
      stopped ??= (async () => {
        intake.stop();
        log.info({ running: dispatcher?.running ?? 0, inLine: intake.localSize }, 'stopping: no new requests; finishing answers in progress');
        await app.stop().catch(() => undefined);
        const finished = (await dispatcher?.stop(settings.shutdownGraceMs)) ?? true;
        const localDone = await intake.drainLocal(settings.shutdownGraceMs);
        // what is still computing is handed back (its worker is stopped; the queue keeps it)
        await engine.close();
        if (!finished) await dispatcher?.stop(5000);
        if (!localDone) await intake.drainLocal(5000);
        dispatcher?.close();
        let leftOpen: number | undefined;
        try {
          leftOpen = counted ? await counted.depth() : undefined;
        } catch {
          leftOpen = undefined;
        }
        loopDelay.disable();
        log.info(
          {
            ...intake.counts,
            // requests left in the queue for the other instances or the next start
            handedBack: Math.max(intake.counts.handedBack, leftOpen ?? 0),
            loopDelayMs: loopDelayMs(loopDelay),
            rssMiB: Math.round(process.memoryUsage().rss / 1048576),
          },
          'stopped',
        );
        await new Promise<void>((r) => (opsServer ? opsServer.close(() => r()) : r()));
        await listening?.close();
        await counted?.close();
      })();
      return stopped;
    },
  };
}
