/**
 * The workspace app (Bolt): `/kolmo <request>` and @-mentions, in HTTP mode or Socket Mode; one
 * instance or several sharing one store (PostgreSQL, KOLMO_DATABASE_URL).
 *
 * A request's way through the app:
 *   1. before Bolt acknowledges it, it is recorded in the store's request queue under its
 *      delivery key (record first, then acknowledge: an acknowledged request is never lost, also
 *      if this instance dies the next moment); a key seen before is a re-sent delivery,
 *      acknowledged but not answered again, whichever instance got it first. The asker's rate
 *      limit (shared by all instances) and the bound on requests in line may turn it away, with
 *      a polite ephemeral notice;
 *   2. it is acknowledged (the platform allows 3 seconds);
 *   3. the dispatcher (dispatch.ts) of any instance claims it — a channel's requests one after
 *      another in arrival order, other channels side by side — under a lease that a dead
 *      instance's successor takes over;
 *   4. the engine and the chart run in a worker process (pool.ts) within the compute budget,
 *      then the reply is delivered (deliver.ts), each posted part recorded so a take-over posts
 *      only the rest;
 *   5. the request is marked done.
 * Without a store (the SQLite file cannot be opened) or when it fails mid-run, requests are
 * answered from memory in the old way (queue.ts, ratelimit.ts, an in-memory inbox) and flagged
 * "Not logged".
 * On SIGTERM the app stops listening, gives answers in progress a grace period, and hands the
 * rest back to the queue: another instance, or the next start, answers them.
 *
 * One log line per request: channel, user, verb, duration, outcome; the request text only at
 * debug level; never a secret (error texts are scrubbed of token shapes and the secrets' values).
 */
import { createHash } from 'node:crypto';
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import bolt from '@slack/bolt';
import type { webApi } from '@slack/bolt';
import type { HttpConfig, SocketConfig } from '../config.js';
import { boltLogger, scrub, type Log } from '../log.js';
import { hostname } from 'node:os';
import { randomBytes } from 'node:crypto';
import {
  databaseFromEnv,
  openDatabase,
  StoreError,
  verbOfText,
  type AsyncStore,
  type ClaimedRequest,
  type LogStore,
  type Progress,
  type QueuedRequest,
  type RateDecision,
} from '../verbs/ask.js';
import { Dispatcher, type Claim } from './dispatch.js';
import { createMetrics, type Metrics } from './metrics.js';
import { plainNotice } from './blocks.js';
import { BoundedClient } from './client.js';
import { deliver, tellAsker, type DeliverDeps, type Origin, type Outcome, type Respond } from './deliver.js';
import { DEDUPE_WINDOW_MS, MAX_ATTEMPTS, MemoryInbox, RESUME_WINDOW_MS } from './inbox.js';
import { EngineError, InlineEngine, WorkerPool, type Engine } from './pool.js';
import { ChannelQueue } from './queue.js';
import { USER_RATE_DEFAULTS, UserRateLimit } from './ratelimit.js';
import { downloadFile, fileRefsOf } from './files.js';

const { App, HTTPReceiver, SocketModeReceiver } = bolt;
type WebClientOptions = webApi.WebClientOptions;

export const COMMAND = '/kolmo';
export const EVENTS_PATH = '/slack/events';

/**
 * Retries of the Web API client. Without an explicit policy the client retries for up to about
 * half an hour (and the Socket Mode client 100 times); a chat answer that late is worthless.
 * A 429 is waited out for its Retry-After before each retry.
 */
export const RETRY_CONFIG = { retries: 3, factor: 2, minTimeout: 200, maxTimeout: 2000, randomize: true } as const;
/** per-call timeout of the Web API client, in ms */
export const API_TIMEOUT_MS = 15000;
/** HTTP mode: a request's headers and body must arrive within these (slow senders are cut off) */
export const HEADERS_TIMEOUT_MS = 10000;
export const REQUEST_TIMEOUT_MS = 15000;

export interface ChatApp {
  mode: 'http' | 'socket';
  /** the port listened on (HTTP mode) */
  port?: number;
  botUserId?: string;
  stop(): Promise<void>;
}

/** The verb a request text starts with, for the log line (the engine decides what it means). */
export const verbOf = verbOfText;

/** Removes mentions of the app itself from a mention's text. */
export function stripMention(text: string, botUserId: string | undefined): string {
  const re = botUserId ? new RegExp(`<@${botUserId}(\\|[^>]*)?>`, 'g') : /^\s*<@[A-Z0-9]+(\|[^>]*)?>/;
  return text.replace(re, ' ').replace(/\s+/g, ' ').trim();
}

function secretsOf(config: HttpConfig | SocketConfig): string[] {
  return [config.botToken, ...(config.mode === 'http' ? [config.signingSecret] : [config.appToken])];
}

export function clientOptionsOf(config: HttpConfig | SocketConfig, log: Log): WebClientOptions {
  return {
    ...(config.apiUrl ? { slackApiUrl: config.apiUrl } : {}),
    retryConfig: { ...RETRY_CONFIG },
    timeout: API_TIMEOUT_MS,
    rejectRateLimitedCalls: false,
    logger: boltLogger(log, 'web-api', secretsOf(config)),
  };
}

/** The delivery key of a slash command: its trigger and response URL are unique per invocation. */
export function commandKey(triggerId: string | undefined, responseUrl: string | undefined, fallback: string): string {
  const id = triggerId || responseUrl ? `${triggerId ?? ''}\n${responseUrl ?? ''}` : fallback;
  return `cmd:${createHash('sha256').update(id).digest('base64url').slice(0, 32)}`;
}

export function eventKey(eventId: string | undefined, fallback: string): string {
  return eventId ? `ev:${eventId.slice(0, 100)}` : `ev:${createHash('sha256').update(fallback).digest('base64url').slice(0, 32)}`;
}

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/**
 * Ephemeral replies through a slash command's response URL (http(s) only), each POST cut off
 * after API_TIMEOUT_MS and retried twice on 5xx, 429 or a dropped connection. A 4xx (an expired
 * or used-up URL) is not retried: tellAsker then falls back to chat.postEphemeral.
 */
export function responder(url: string | undefined): Respond | undefined {
  if (!url) return undefined;
  try {
    const u = new URL(url);
    if (u.protocol !== 'https:' && u.protocol !== 'http:') return undefined;
  } catch {
    return undefined;
  }
  return async (msg) => {
    for (let attempt = 0; ; attempt++) {
      let retry = false;
      try {
        const res = await fetch(url, {
          method: 'POST',
          headers: { 'content-type': 'application/json; charset=utf-8' },
          body: JSON.stringify(msg),
          redirect: 'error',
          signal: AbortSignal.timeout(API_TIMEOUT_MS),
        });
        await res.arrayBuffer().catch(() => undefined);
        if (res.ok) return;
        retry = res.status >= 500 || res.status === 429;
        throw Object.assign(new Error(`the response URL answered HTTP ${res.status}`), { statusCode: res.status, code: 'kolmo_response_url' });
      } catch (err) {
        const network = !(err as { code?: string }).code?.startsWith('kolmo_');
        if (!(retry || network) || attempt >= 2) throw err;
      }
      await sleep(200 * 2 ** attempt);
    }
  };
}

/**
 * A body over `limit` is refused with 413 and its connection closed. Bolt refuses it too, but
 * leaves the connection open with the unread body still on it, so the next request on that
 * keep-alive connection hangs; a declared Content-Length over the limit is refused here before
 * Bolt sees it, and any 413 (a chunked body that grew too large) closes its connection.
 */
export function guardBodySize(server: Server, limit: number, log: Log): void {
  const handlers = server.listeners('request') as Array<(req: IncomingMessage, res: ServerResponse) => void>;
  server.removeAllListeners('request');
  server.on('request', (req: IncomingMessage, res: ServerResponse) => {
    res.once('finish', () => {
      if (res.statusCode === 413) req.socket.end();
    });
    const declared = Number(req.headers['content-length']);
    if (Number.isFinite(declared) && declared > limit) {
      log.warn({ bytes: declared, limit }, 'request body over the limit refused');
      res.writeHead(413, { connection: 'close', 'content-type': 'text/plain' });
      res.end('request body too large\n');
      req.resume();
      return;
    }
    for (const h of handlers) h.call(server, req, res);
  });
}

/** Starts the app in the configured mode. Throws with a clear message when it cannot start. */
export async function startChatApp(config: HttpConfig | SocketConfig, log: Log): Promise<ChatApp> {
  const settings = config.chat;
  const secrets = secretsOf(config);
  const clientOptions = clientOptionsOf(config, log);
  const errText = (err: unknown): string => scrub(err instanceof Error ? err.message : String(err), secrets);

  // The bot token is checked once before anything listens (and the bot's own ids learnt, so the
  // app makes no second start-up call).
  const probe = new bolt.webApi.WebClient(config.botToken, clientOptions);
  let botUserId: string | undefined;
  let botId: string | undefined;
  try {
    const who = await probe.auth.test();
    botUserId = typeof who.user_id === 'string' ? who.user_id : undefined;
    botId = typeof who.bot_id === 'string' ? who.bot_id : undefined;
  } catch (err) {
    const e = err as { data?: { error?: string }; message?: string };
    throw new Error(`the workspace refused SLACK_BOT_TOKEN at auth.test (${scrub(e.data?.error ?? e.message ?? 'unknown error', secrets)})`);
  }

  // The store. PostgreSQL (several instances share it) must be there at start: an instance that
  // would answer from memory alone breaks the cluster's guarantees, so a malformed or unreachable
  // URL stops the start with one clear message. The SQLite file, as before, may fail: the app
  // then answers without a log.
  const owner = `${hostname()}:${process.pid}:${randomBytes(3).toString('hex')}`;
  const choice = databaseFromEnv();
  let store: AsyncStore | null = null;
  if (choice.backend === 'postgres') {
    try {
      store = await openDatabase(choice, { poolSize: 6, applicationName: `kolmo ${owner}`.slice(0, 63) });
    } catch (err) {
      throw new Error(`KOLMO_DATABASE_URL: ${errText(err)}`);
    }
  } else {
    try {
      // the app's own connection records requests, threads and delivery states: a process crash
      // loses none of them (synchronous=normal); the workers append the checks themselves with
      // the store's default, fsynced, durability
      store = await openDatabase(choice, { synchronous: 'normal' });
    } catch (err) {
      log.warn({ err: errText(err) }, 'the log is unavailable; answering without it');
      store = null;
    }
  }

  let dispatcher: Dispatcher | null = null;
  const metrics: Metrics = createMetrics({
    depth: async () => (store ? store.depth() : null),
    running: () => (dispatcher?.running ?? 0) + local.size,
  });
  // every StoreError this instance meets is counted (the engine's own, in the workers, too when
  // they reach the store through this process)
  const counted = store ? countingStore(store, metrics) : null;

  const engine: Engine =
    config.workers > 0
      ? new WorkerPool({
          size: config.workers,
          db: store === null ? null : choice.backend === 'sqlite' ? { kind: 'file', path: choice.path } : { kind: 'parent', store: counted! },
          taskTimeoutMs: config.taskTimeoutSeconds * 1000,
          onEvent: (e) => log.warn({ detail: e.detail }, e.event),
        })
      : new InlineEngine(counted);

  // the in-memory path: without a store, or while it fails
  const local = new ChannelQueue(config.queueLimit);
  const localInbox = new MemoryInbox();
  const limiter = new UserRateLimit({ ...USER_RATE_DEFAULTS, ...settings.userRate });
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();

  // every reply goes through this client: bounded retries, a 429 holds up only its own call
  const client = new BoundedClient(config.botToken, clientOptions, (method, retryAfter, attempt) =>
    log.warn({ method, retryAfter, attempt }, 'rate-limited by the workspace'),
  );

  const logger = boltLogger(log, 'bolt', secrets);
  const common = {
    token: config.botToken,
    ...(botId && botUserId ? { botId, botUserId } : {}),
    logger,
    clientOptions,
    // Kolmo keeps no conversation state: Bolt's per-request conversation store is only overhead
    convoStore: false as const,
  };

  const health = async (): Promise<{ ready: boolean; database: string; workers: string; queue: string }> => {
    let database = 'none';
    if (counted) {
      database = await Promise.race([
        counted.ping().then(
          () => 'ok',
          () => 'unavailable',
        ),
        sleep(2000).then(() => 'timeout'),
      ]);
    }
    const workers = engine.alive > 0 ? 'ok' : 'down';
    const queue = !dispatcher ? 'none' : dispatcher.healthy ? 'ok' : 'unreachable';
    const ready = (database === 'ok' || database === 'none') && workers === 'ok' && queue !== 'unreachable' && !stopping;
    return { ready, database, workers, queue };
  };
  const opsRoute = async (req: IncomingMessage, res: ServerResponse): Promise<boolean> => {
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

  const app =
    config.mode === 'http'
      ? new App({
          ...common,
          receiver: new HTTPReceiver({
            signingSecret: config.signingSecret,
            endpoints: EVENTS_PATH,
            port: config.port,
            logger,
            // the ack goes out first; the work runs after it
            processBeforeResponse: false,
            // a larger body is refused (413) before it is read
            bodyLimit: settings.bodyLimit,
            customRoutes: ['/healthz', '/metrics'].map((path) => ({
              path,
              method: ['GET'],
              handler: (req: IncomingMessage, res: ServerResponse) => {
                void opsRoute(req, res).catch(() => {
                  res.writeHead(500);
                  res.end();
                });
              },
            })),
          }),
        })
      : new App({
          ...common,
          processBeforeResponse: false,
          receiver: new SocketModeReceiver({
            appToken: config.appToken,
            logger,
            installerOptions: { clientOptions },
          }),
        });

  const deps: DeliverDeps = {
    client,
    store: counted,
    onLost: (what, err) => log.warn({ what, err: scrub((err as { data?: { error?: string } })?.data?.error ?? String(err), secrets) }, 'could not reach the asker'),
  };

  let stopping = false;
  const counts = { accepted: 0, duplicate: 0, rateLimited: 0, busy: 0, handedBack: 0, resumed: 0, local: 0 };
  const line = (r: Pick<QueuedRequest, 'channel' | 'user' | 'source'>, extra: Record<string, unknown> = {}) => ({ channel: r.channel, user: r.user, source: r.source, ...extra });
  const originOf = (r: QueuedRequest): Origin => {
    const respond = responder(r.responseUrl);
    return { source: r.source, channel: r.channel, user: r.user, ...(r.threadTs ? { threadTs: r.threadTs } : {}), ...(respond ? { respond } : {}) };
  };

  /** The engine, then the delivery; the outcome for the log line and the metrics. */
  const answer = async (
    r: QueuedRequest,
    resumed: boolean,
    resume: { progress?: Progress; onProgress?: (p: Progress) => Promise<unknown> } = {},
  ): Promise<{ outcome: Outcome | 'error' | 'closed' | 'file-unreadable'; verb: string; computeMs?: number; logNumber?: number; failures: number }> => {
    const origin = originOf(r);
    const text = r.text.trim() === '' ? 'help' : r.text;
    let verb = verbOf(text);
    // files shared with a `history` mention: downloaded by the instance that answers
    let files: { name: string; base64: string }[] | undefined;
    if (r.files?.length) {
      try {
        files = await Promise.all(r.files.map((f) => downloadFile(f, config.botToken, config.apiUrl)));
      } catch (err) {
        await tellAsker(deps, origin, [plainNotice(`Kolmo could not read the file shared with this request: ${errText(err)}. Nothing was posted.`)]).catch(() => false);
        return { outcome: 'file-unreadable', verb, failures: 0 };
      }
    }
    try {
      const result = await engine.run({
        text,
        channel: r.channel,
        user: r.user,
        now: r.now,
        budget: settings.computeBudget,
        ...(resumed ? { resumed } : {}),
        ...(files ? { files } : {}),
      });
      let logNumber: number | undefined;
      if (result.reply.kind === 'answer') {
        verb = result.reply.verb;
        logNumber = result.reply.logNumber;
      }
      const d = await deliver(deps, origin, result.reply, { png: result.png, note: result.chartNote }, resume);
      return { outcome: d.outcome, verb, computeMs: Math.round(result.ms), logNumber, failures: d.failures.length };
    } catch (err) {
      if (stopping && err instanceof EngineError && err.reason === 'closed') return { outcome: 'closed', verb, failures: 0 };
      const why =
        err instanceof EngineError && err.reason === 'timeout'
          ? `Kolmo stopped working on this request: it needed more than the ${config.taskTimeoutSeconds} s of computing one request may use. Nothing was posted. Try fewer legs or comparison parts.`
          : err instanceof EngineError && err.reason === 'overloaded'
            ? 'Kolmo is too busy to answer this request in time; nothing was posted. Try again in a minute.'
            : 'Kolmo hit an internal problem with this request; nothing was posted. Try again.';
      log.error({ ...line(r), err: errText(err) }, 'request failed');
      await tellAsker(deps, origin, [plainNotice(why)]).catch(() => false);
      return { outcome: 'error', verb, failures: 0 };
    }
  };

  /** One claimed request, from whichever instance recorded it. */
  const handle = async (claim: Claim): Promise<void> => {
    const r: ClaimedRequest = claim.request;
    const resumed = r.attempts > 1;
    const extra = { ...(resumed ? { attempt: r.attempts } : {}) };
    if (resumed) {
      counts.resumed++;
      metrics.takeovers.inc();
    }
    if (r.attempts > MAX_ATTEMPTS || Date.now() - r.receivedMs > RESUME_WINDOW_MS) {
      // a request that keeps stopping its instance, or one too old to be worth answering now
      if (!r.progress.answered) {
        await tellAsker(deps, originOf(r), [
          plainNotice(
            `Kolmo was restarted while your request from ${r.now.slice(0, 16).replace('T', ' ')} UTC was in line and could not answer it${r.attempts > MAX_ATTEMPTS ? ' (it stopped twice while working on it)' : ''}; nothing was posted. Ask again if you still need it.`,
          ),
        ]).catch(() => false);
      }
      await claim.finish();
      metrics.requests.inc({ verb: verbOf(r.text), outcome: 'expired' });
      log.info(line(r, { ...extra, outcome: 'expired', attempts: r.attempts }), 'request');
      return;
    }
    if (stopping) {
      await claim.release();
      counts.handedBack++;
      return;
    }
    const got = await answer(r, resumed, { progress: r.progress, onProgress: (p) => claim.progress(p) });
    if (got.outcome === 'closed') {
      await claim.release();
      counts.handedBack++;
      log.info(line(r, { ...extra, verb: got.verb, outcome: 'handed-back' }), 'request');
      return;
    }
    await claim.finish();
    metrics.requests.inc({ verb: got.verb, outcome: got.outcome });
    metrics.answer.observe({ verb: got.verb }, Math.max(0, Date.now() - r.receivedMs) / 1000);
    log.info(
      line(r, { ...extra, verb: got.verb, outcome: got.outcome, ms: Math.max(0, Date.now() - r.receivedMs), computeMs: got.computeMs, logNumber: got.logNumber, failures: got.failures }),
      'request',
    );
  };

  if (counted) {
    dispatcher = new Dispatcher({
      queue: counted,
      owner,
      capacity: Math.max(1, engine.size),
      handle,
      onError: (what, err) => log.warn({ err: errText(err) }, what),
    });
  }

  /** The in-memory path (no store, or the store failed at the moment the request came). */
  const answerLocally = (r: QueuedRequest, t0: number): void => {
    counts.local++;
    if (!localInbox.accept(r.key)) {
      counts.duplicate++;
      metrics.requests.inc({ verb: verbOf(r.text), outcome: 'duplicate' });
      log.info(line(r, { outcome: 'duplicate' }), 'request');
      return;
    }
    const rate = limiter.take(r.user);
    if (!rate.ok) {
      turnAway(r, { kind: 'rate', rate }, t0);
      return;
    }
    const accepted = local.offer(r.channel, async () => {
      if (stopping) {
        await tellAsker(deps, originOf(r), [plainNotice('Kolmo is restarting and could not answer this request; nothing was posted. Ask again in a minute.')]).catch(() => false);
        log.info(line(r, { outcome: 'dropped' }), 'request');
        return;
      }
      const got = await answer(r, false);
      metrics.requests.inc({ verb: got.verb, outcome: got.outcome === 'closed' ? 'dropped' : got.outcome });
      metrics.answer.observe({ verb: got.verb }, (performance.now() - t0) / 1000);
      log.info(line(r, { verb: got.verb, outcome: got.outcome, ms: Math.round(performance.now() - t0), computeMs: got.computeMs, logNumber: got.logNumber, failures: got.failures, unrecorded: true }), 'request');
    });
    if (!accepted) turnAway(r, { kind: 'busy', depth: local.size }, t0);
  };

  const turnAway = (r: QueuedRequest, why: { kind: 'rate'; rate: Extract<RateDecision, { ok: false }> } | { kind: 'busy'; depth: number }, t0: number): void => {
    const verb = verbOf(r.text);
    if (why.kind === 'rate') {
      counts.rateLimited++;
      metrics.requests.inc({ verb, outcome: 'rate-limited' });
      log.info(line(r, { verb, outcome: 'rate-limited', notified: why.rate.notify, ms: Math.round(performance.now() - t0) }), 'request');
      if (why.rate.notify) {
        void tellAsker(deps, originOf(r), [
          plainNotice(
            `You are sending Kolmo requests faster than it answers one person (${settings.userRate.burst} at once, ${settings.userRate.perMinute} a minute); ` +
              `this one and any more in the next few seconds were not answered. Try again in ${why.rate.retryInSeconds} s.`,
          ),
        ]).catch(() => false);
      }
      return;
    }
    counts.busy++;
    metrics.requests.inc({ verb, outcome: 'busy' });
    log.info(line(r, { verb, outcome: 'busy', ms: Math.round(performance.now() - t0) }), 'request');
    void tellAsker(deps, originOf(r), [plainNotice(`Kolmo is busy (${why.depth} requests in line); nothing was posted. Try again in a minute.`)]).catch(() => false);
  };

  // ---- record first, then acknowledge ------------------------------------------------------

  type Intake =
    | { kind: 'queued' }
    | { kind: 'duplicate' }
    | { kind: 'rate'; rate: Extract<RateDecision, { ok: false }> }
    | { kind: 'busy'; depth: number }
    | { kind: 'local' };
  const intake = new WeakMap<object, { r: QueuedRequest; got: Intake; t0: number }>();

  /** The request a delivery carries (a /kolmo command or an app mention), or null for anything else. */
  const requestOf = (body: Record<string, unknown>): QueuedRequest | null => {
    const now = new Date().toISOString();
    if (body.command === COMMAND && typeof body.channel_id === 'string' && typeof body.user_id === 'string') {
      const text = typeof body.text === 'string' ? body.text : '';
      const responseUrl = typeof body.response_url === 'string' && body.response_url ? body.response_url : undefined;
      const key = commandKey(typeof body.trigger_id === 'string' ? body.trigger_id : undefined, responseUrl, `${body.channel_id}\n${body.user_id}\n${text}\n${now}`);
      return { key, source: 'command', channel: body.channel_id, user: body.user_id, ...(responseUrl ? { responseUrl } : {}), text, now };
    }
    const ev = body.event as { type?: string; user?: string; channel?: string; text?: string; ts?: string; thread_ts?: string } | undefined;
    if (body.type === 'event_callback' && ev?.type === 'app_mention' && ev.user && ev.channel) {
      const key = eventKey(typeof body.event_id === 'string' ? body.event_id : undefined, `${ev.channel}\n${ev.ts}`);
      const text = stripMention(ev.text ?? '', botUserId);
      // only a `history` request reads the files attached to its message
      const files = verbOf(text) === 'history' ? fileRefsOf((ev as { files?: unknown }).files) : [];
      return { key, source: 'mention', channel: ev.channel, user: ev.user, ...(ev.thread_ts ? { threadTs: ev.thread_ts } : {}), text, now, ...(files.length ? { files } : {}) };
    }
    return null;
  };

  /** Records the request in the shared queue (the rate limit and the bound on the line first). */
  const admit = async (r: QueuedRequest): Promise<Intake> => {
    if (!counted || stopping) return { kind: 'local' };
    try {
      const rate = await counted.take(r.user, { ...USER_RATE_DEFAULTS, ...settings.userRate });
      const depth = rate.ok ? await counted.depth() : 0;
      const busy = rate.ok && depth >= config.queueLimit;
      const fresh = await counted.accept(r, !rate.ok || busy);
      if (!fresh) return { kind: 'duplicate' };
      if (!rate.ok) return { kind: 'rate', rate };
      if (busy) return { kind: 'busy', depth };
      return { kind: 'queued' };
    } catch (err) {
      if (!(err instanceof StoreError)) throw err;
      log.warn({ err: errText(err) }, 'the request could not be recorded; answering it from memory, without the log');
      return { kind: 'local' };
    }
  };

  const processEvent = app.processEvent.bind(app);
  app.processEvent = async (event) => {
    const t0 = performance.now();
    const body = event.body as Record<string, unknown>;
    const r = body && typeof body === 'object' ? requestOf(body) : null;
    if (r) intake.set(body, { r, got: await admit(r), t0 });
    return processEvent(event);
  };

  const after = (body: unknown, retry: { retryNum?: number; retryReason?: string }): void => {
    const it = body && typeof body === 'object' ? intake.get(body) : undefined;
    if (!it) return;
    const { r, got, t0 } = it;
    metrics.ack.observe((performance.now() - t0) / 1000);
    log.debug({ ...line(r), text: r.text }, 'request text');
    switch (got.kind) {
      case 'queued':
        counts.accepted++;
        dispatcher?.wake();
        return;
      case 'duplicate':
        counts.duplicate++;
        metrics.requests.inc({ verb: verbOf(r.text), outcome: 'duplicate' });
        log.info(line(r, { outcome: 'duplicate', retryNum: retry.retryNum, retryReason: retry.retryReason }), 'request');
        return;
      case 'rate':
      case 'busy':
        turnAway(r, got, t0);
        return;
      case 'local':
        answerLocally(r, t0);
        return;
    }
  };

  app.command(COMMAND, async ({ ack, body, context }) => {
    await ack();
    after(body, context as { retryNum?: number; retryReason?: string });
  });

  app.event('app_mention', async ({ body, context }) => {
    // Bolt acknowledged the event before this listener (the request was recorded before that)
    after(body, context as { retryNum?: number; retryReason?: string });
  });

  app.error(async (err) => {
    log.error({ err: errText(err), code: (err as { code?: string }).code }, 'listener error');
  });

  let port: number | undefined;
  let opsServer: Server | undefined;
  if (config.mode === 'http') {
    const server = (await app.start(config.host ? { port: config.port, host: config.host } : { port: config.port })) as unknown as Server;
    server.headersTimeout = HEADERS_TIMEOUT_MS;
    server.requestTimeout = REQUEST_TIMEOUT_MS;
    guardBodySize(server, settings.bodyLimit, log);
    port = (server.address() as AddressInfo).port;
    log.info({ mode: 'http', port, path: EVENTS_PATH, workers: engine.size, store: counted?.backend ?? 'none', owner }, 'listening');
  } else {
    await app.start();
    if (settings.opsPort !== undefined) {
      opsServer = createServer((req, res) => {
        void opsRoute(req, res).then((done) => {
          if (!done) {
            res.writeHead(404);
            res.end();
          }
        });
      });
      await new Promise<void>((r) => opsServer!.listen(settings.opsPort, settings.opsHost ?? '127.0.0.1', r));
    }
    const opsPort = opsServer ? (opsServer.address() as AddressInfo).port : undefined;
    log.info({ mode: 'socket', workers: engine.size, store: counted?.backend ?? 'none', owner, ...(opsPort !== undefined ? { opsPort } : {}) }, 'connected');
  }

  // requests recorded but not answered (by a previous run, or by instances that stopped) are
  // claimed by the dispatcher like any other; say so once
  if (counted) {
    try {
      const open = await counted.depth();
      if (open > 0) log.info({ open }, 'picked up requests left by the previous run');
      const pruned = await counted.prune(DEDUPE_WINDOW_MS);
      if (pruned > 0) log.debug({ pruned }, 'forgot delivery keys older than the re-send window');
    } catch (err) {
      log.warn({ err: errText(err) }, 'the request queue could not be read; it is retried');
    }
    dispatcher!.start();
  }

  let stopped: Promise<void> | undefined;
  return {
    mode: config.mode,
    port,
    botUserId,
    stop() {
      stopped ??= (async () => {
        stopping = true;
        log.info({ running: dispatcher?.running ?? 0, inLine: local.size }, 'stopping: no new requests; finishing answers in progress');
        await app.stop().catch(() => undefined);
        const finished = (await dispatcher?.stop(settings.shutdownGraceMs)) ?? true;
        const localDone = await local.drain(settings.shutdownGraceMs);
        // what is still computing is handed back (its worker is stopped; the queue keeps it)
        await engine.close();
        if (!finished) await dispatcher?.stop(5000);
        if (!localDone) await local.drain(5000);
        dispatcher?.close();
        let leftOpen: number | undefined;
        try {
          leftOpen = counted ? await counted.depth() : undefined;
        } catch {
          leftOpen = undefined;
        }
        loopDelay.disable();
        const ms = (ns: number) => Math.round(ns / 1e4) / 100;
        log.info(
          {
            ...counts,
            // requests left in the queue for the other instances or the next start
            handedBack: Math.max(counts.handedBack, leftOpen ?? 0),
            loopDelayMs: { p50: ms(loopDelay.percentile(50)), p99: ms(loopDelay.percentile(99)), max: ms(loopDelay.max) },
            rssMiB: Math.round(process.memoryUsage().rss / 1048576),
          },
          'stopped',
        );
        await opsServer?.close();
        await counted?.close();
      })();
      return stopped;
    },
  };
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

export type { LogStore };
