/**
 * The workspace app (Bolt): `/kolmo <request>` and @-mentions, in HTTP mode or Socket Mode.
 *
 * A request's way through the app:
 *   1. it is acknowledged at once (the platform allows 3 seconds);
 *   2. the inbox (inbox.ts) records it under its delivery key — a key seen before is a re-sent
 *      delivery, acknowledged but not answered again;
 *   3. the asker's rate limit (ratelimit.ts) and the bound on requests in line (queue.ts) may turn
 *      it away, with a polite ephemeral notice;
 *   4. per channel in arrival order, the engine and the chart run in a worker process (pool.ts)
 *      within the compute budget (budget.ts), then the reply is delivered (deliver.ts) through a
 *      client whose retries are bounded (client.ts);
 *   5. the inbox marks it finished.
 * On SIGTERM the app stops listening, gives answers in progress a grace period, and hands back
 * what is left: it stays in the inbox and the next start answers it.
 *
 * One log line per request: channel, user, verb, duration, outcome; the request text only at
 * debug level; never a secret (error texts are scrubbed of token shapes and the secrets' values).
 */
import { createHash } from 'node:crypto';
import type { IncomingMessage, Server, ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import bolt from '@slack/bolt';
import type { webApi } from '@slack/bolt';
import type { HttpConfig, SocketConfig } from '../config.js';
import { boltLogger, scrub, type Log } from '../log.js';
import { openStore, defaultDbPath, verbOfText, type Store } from '../verbs/ask.js';
import { plainNotice } from './blocks.js';
import { BoundedClient } from './client.js';
import { deliver, tellAsker, type DeliverDeps, type Origin, type Outcome, type Respond } from './deliver.js';
import { memoryInbox, openInbox, type Inbox, type InboxEntry } from './inbox.js';
import { EngineError, InlineEngine, WorkerPool, type Engine } from './pool.js';
import { ChannelQueue } from './queue.js';
import { USER_RATE_DEFAULTS, UserRateLimit } from './ratelimit.js';
import { downloadFile, fileRefsOf, type FileRef } from './files.js';

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
            customRoutes: [
              {
                path: '/healthz',
                method: ['GET'],
                handler: (_req, res) => {
                  res.writeHead(200, { 'content-type': 'text/plain' });
                  res.end('ok\n');
                },
              },
            ],
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
    store,
    onLost: (what, err) => log.warn({ what, err: scrub((err as { data?: { error?: string } })?.data?.error ?? String(err), secrets) }, 'could not reach the asker'),
  };

  let stopping = false;
  const counts = { accepted: 0, duplicate: 0, rateLimited: 0, busy: 0, handedBack: 0, resumed: 0 };

  /**
   * Left for the next start: the request stays open in a persistent inbox. Without one the asker
   * is told now (nothing would ever answer it otherwise).
   */
  const handBack = async (origin: Origin, key: string): Promise<'handed-back' | 'dropped'> => {
    counts.handedBack++;
    if (inbox.persistent) return 'handed-back';
    await tellAsker(deps, origin, [plainNotice('Kolmo is restarting and could not answer this request; nothing was posted. Ask again in a minute.')]).catch(() => false);
    inbox.finish(key);
    return 'dropped';
  };

  const submit = (origin: Origin, rawText: string, t0: number, key: string, now: string, resumed = false, fileRefs: FileRef[] = []): void => {
    const text = rawText.trim() === '' ? 'help' : rawText;
    const line = { channel: origin.channel, user: origin.user, source: origin.source, ...(resumed ? { resumed: true } : {}) };
    log.debug({ ...line, text }, 'request text');
    if (!resumed) {
      const rate = limiter.take(origin.user);
      if (!rate.ok) {
        counts.rateLimited++;
        inbox.finish(key);
        log.info({ ...line, verb: verbOf(text), outcome: 'rate-limited', notified: rate.notify, ms: Math.round(performance.now() - t0) }, 'request');
        if (rate.notify) {
          void tellAsker(deps, origin, [
            plainNotice(
              `You are sending Kolmo requests faster than it answers one person (${settings.userRate.burst} at once, ${settings.userRate.perMinute} a minute); ` +
                `this one and any more in the next few seconds were not answered. Try again in ${rate.retryInSeconds} s.`,
            ),
          ]).catch(() => false);
        }
        return;
      }
    }
    const accepted = queue.offer(origin.channel, async () => {
      if (stopping) {
        const r = await handBack(origin, key);
        log.info({ ...line, verb: verbOf(text), outcome: r, ms: Math.round(performance.now() - t0) }, 'request');
        return;
      }
      let outcome: Outcome | 'error' | 'handed-back' | 'dropped' = 'error';
      let verb = verbOf(text);
      let computeMs: number | undefined;
      let logNumber: number | undefined;
      let failures = 0;
      try {
        // files shared with a `history` mention: downloaded here, in the channel's turn
        let files: { name: string; base64: string }[] | undefined;
        if (fileRefs.length > 0) {
          try {
            files = await Promise.all(fileRefs.map((f) => downloadFile(f, config.botToken, config.apiUrl)));
          } catch (err) {
            const why = scrub(err instanceof Error ? err.message : String(err), secrets);
            log.info({ ...line, verb, outcome: 'file-unreadable', ms: Math.round(performance.now() - t0) }, 'request');
            await tellAsker(deps, origin, [plainNotice(`Kolmo could not read the file shared with this request: ${why}. Nothing was posted.`)]).catch(() => false);
            inbox.finish(key);
            return;
          }
        }
        const result = await engine.run({
          text,
          channel: origin.channel,
          user: origin.user,
          now,
          budget: settings.computeBudget,
          ...(resumed ? { resumed } : {}),
          ...(files ? { files } : {}),
        });
        computeMs = Math.round(result.ms);
        if (result.reply.kind === 'answer') {
          verb = result.reply.verb;
          logNumber = result.reply.logNumber;
        }
        const d = await deliver(deps, origin, result.reply, { png: result.png, note: result.chartNote });
        outcome = d.outcome;
        failures = d.failures.length;
        inbox.finish(key);
      } catch (err) {
        if (stopping && err instanceof EngineError && err.reason === 'closed') {
          outcome = await handBack(origin, key);
        } else {
          const why =
            err instanceof EngineError && err.reason === 'timeout'
              ? `Kolmo stopped working on this request: it needed more than the ${config.taskTimeoutSeconds} s of computing one request may use. Nothing was posted. Try fewer legs or comparison parts.`
              : err instanceof EngineError && err.reason === 'overloaded'
                ? 'Kolmo is too busy to answer this request in time; nothing was posted. Try again in a minute.'
                : 'Kolmo hit an internal problem with this request; nothing was posted. Try again.';
          log.error({ ...line, err: errText(err) }, 'request failed');
          await tellAsker(deps, origin, [plainNotice(why)]).catch(() => false);
          inbox.finish(key);
        }
      }
      log.info({ ...line, verb, outcome, ms: Math.round(performance.now() - t0), computeMs, logNumber, failures }, 'request');
    });
    if (!accepted) {
      counts.busy++;
      inbox.finish(key);
      log.info({ ...line, verb: verbOf(text), outcome: 'busy', ms: Math.round(performance.now() - t0) }, 'request');
      void tellAsker(deps, origin, [
        plainNotice(`Kolmo is busy (${queue.size} requests in line); nothing was posted. Try again in a minute.`),
      ]).catch(() => false);
    }
  };

  /** Records a delivery in the inbox; false when it is a re-sent one (already answered or in line). */
  const admit = (e: Omit<InboxEntry, 'attempts'>, retry: { retryNum?: number; retryReason?: string }): boolean => {
    let fresh: boolean;
    try {
      fresh = inbox.accept(e);
    } catch (err) {
      // an inbox that cannot be written must not cost the answer
      log.warn({ err: errText(err) }, 'the inbox could not record a request');
      fresh = true;
    }
    if (fresh) counts.accepted++;
    else {
      counts.duplicate++;
      log.info(
        { channel: e.channel, user: e.user, source: e.source, outcome: 'duplicate', retryNum: retry.retryNum, retryReason: retry.retryReason },
        'request',
      );
    }
    return fresh;
  };

  app.command(COMMAND, async ({ command, ack, context }) => {
    const t0 = performance.now();
    const now = new Date().toISOString();
    const text = command.text ?? '';
    const key = commandKey(command.trigger_id, command.response_url, `${command.channel_id}\n${command.user_id}\n${text}\n${now}`);
    const origin: Origin = {
      source: 'command',
      channel: command.channel_id,
      user: command.user_id,
      ...(responder(command.response_url) ? { respond: responder(command.response_url) } : {}),
    };
    // the ack first (nothing may delay it), then the inbox in the same turn of the event loop —
    // as for events, which Bolt acknowledges before the listener runs
    await ack();
    const fresh = admit(
      { key, source: 'command', channel: origin.channel, user: origin.user, ...(command.response_url ? { responseUrl: command.response_url } : {}), text, now },
      context as { retryNum?: number; retryReason?: string },
    );
    if (fresh) submit(origin, text, t0, key, now);
  });

  app.event('app_mention', async ({ event, body, context }) => {
    const t0 = performance.now();
    const now = new Date().toISOString();
    const user = event.user;
    if (!user) return;
    const key = eventKey((body as { event_id?: string }).event_id, `${event.channel}\n${event.ts}`);
    const text = stripMention(event.text ?? '', context.botUserId ?? botUserId);
    const origin: Origin = { source: 'mention', channel: event.channel, user, ...(event.thread_ts ? { threadTs: event.thread_ts } : {}) };
    // only a `history` request reads the files attached to its message
    const fileRefs = verbOf(text) === 'history' ? fileRefsOf((event as { files?: unknown }).files) : [];
    const fresh = admit(
      { key, source: 'mention', channel: origin.channel, user, ...(origin.threadTs ? { threadTs: origin.threadTs } : {}), text, now },
      context as { retryNum?: number; retryReason?: string },
    );
    if (fresh) submit(origin, text, t0, key, now, false, fileRefs);
  });

  app.error(async (err) => {
    log.error({ err: errText(err), code: (err as { code?: string }).code }, 'listener error');
  });

  let port: number | undefined;
  if (config.mode === 'http') {
    const server = (await app.start(config.host ? { port: config.port, host: config.host } : { port: config.port })) as unknown as Server;
    server.headersTimeout = HEADERS_TIMEOUT_MS;
    server.requestTimeout = REQUEST_TIMEOUT_MS;
    guardBodySize(server, settings.bodyLimit, log);
    port = (server.address() as AddressInfo).port;
    log.info({ mode: 'http', port, path: EVENTS_PATH, workers: engine.size }, 'listening');
  } else {
    await app.start();
    log.info({ mode: 'socket', workers: engine.size }, 'connected');
  }

  // requests a previous process acknowledged but did not answer
  try {
    const { resume, expired } = inbox.takePending();
    for (const e of expired) {
      const origin: Origin = { source: e.source, channel: e.channel, user: e.user, ...(e.threadTs ? { threadTs: e.threadTs } : {}) };
      inbox.finish(e.key);
      log.info({ channel: e.channel, user: e.user, source: e.source, outcome: 'expired', attempts: e.attempts }, 'request');
      void tellAsker(deps, origin, [
        plainNotice(
          `Kolmo was restarted while your request from ${e.now.slice(0, 16).replace('T', ' ')} UTC was in line and could not answer it${e.attempts > 2 ? ' (it stopped twice while working on it)' : ''}; nothing was posted. Ask again if you still need it.`,
        ),
      ]).catch(() => false);
    }
    for (const e of resume) {
      counts.resumed++;
      const respond = responder(e.responseUrl);
      const origin: Origin = { source: e.source, channel: e.channel, user: e.user, ...(e.threadTs ? { threadTs: e.threadTs } : {}), ...(respond ? { respond } : {}) };
      submit(origin, e.text, performance.now(), e.key, e.now, true);
    }
    if (resume.length + expired.length > 0) log.info({ resumed: resume.length, expired: expired.length }, 'picked up requests left by the previous run');
  } catch (err) {
    log.warn({ err: errText(err) }, 'the inbox could not be read; unanswered requests of the previous run are not resumed');
  }

  let stopped: Promise<void> | undefined;
  return {
    mode: config.mode,
    port,
    botUserId,
    stop() {
      stopped ??= (async () => {
        stopping = true;
        log.info({ inLine: queue.size }, 'stopping: no new requests; finishing answers in progress');
        await app.stop().catch(() => undefined);
        const finished = await queue.drain(settings.shutdownGraceMs);
        // what is still computing is handed back (its worker is stopped; the inbox keeps it)
        await engine.close();
        if (!finished) await queue.drain(5000);
        loopDelay.disable();
        const ms = (ns: number) => Math.round(ns / 1e4) / 100;
        log.info(
          {
            ...counts,
            loopDelayMs: { p50: ms(loopDelay.percentile(50)), p99: ms(loopDelay.percentile(99)), max: ms(loopDelay.max) },
            rssMiB: Math.round(process.memoryUsage().rss / 1048576),
          },
          'stopped',
        );
        inbox.close();
        store?.close();
      })();
      return stopped;
    },
  };
}
