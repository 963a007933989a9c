/**
 * The workspace app (Bolt): `/kolmo <request>` and @-mentions, in HTTP mode or Socket Mode.
 *
 * The listener acknowledges at once (the platform allows 3 seconds) and queues the work: the
 * engine and the chart run in a worker pool, per-channel in order, then the reply is delivered
 * (deliver.ts). One log line per request: channel, user, verb, duration, outcome; the request
 * text only at debug level; never a secret.
 */
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import bolt from '@slack/bolt';
import type { webApi } from '@slack/bolt';
import type { HttpConfig, SocketConfig } from '../config.js';
import { boltLogger, type Log } from '../log.js';
import type { Verb } from '../reply.js';
import { openStore, defaultDbPath, type Store } from '../store/store.js';
import { plainNotice } from './blocks.js';
import { deliver, tellAsker, type DeliverDeps, type Origin, type Outcome, type Respond } from './deliver.js';
import { EngineError, InlineEngine, WorkerPool, type Engine } from './pool.js';
import { ChannelQueue } from './queue.js';

const { App, SocketModeReceiver } = bolt;
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

export interface ChatApp {
  mode: 'http' | 'socket';
  /** the port listened on (HTTP mode) */
  port?: number;
  botUserId?: string;
  stop(): Promise<void>;
}

const VERBS = new Set<Verb>(['check', 'compare', 'iv', 'touch', 'mark', 'log', 'again', 'help']);

/** The verb a request text starts with, for the log line (the engine decides what it means). */
export function verbOf(text: string): string {
  const w = text.trim().split(/\s+/, 1)[0]?.toLowerCase() ?? '';
  if (VERBS.has(w as Verb)) return w;
  return /^[+-]?\d/.test(w) ? 'check' : 'unknown';
}

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

/** Starts the app in the configured mode. Throws with a clear message when it cannot start. */
export async function startChatApp(config: HttpConfig | SocketConfig, log: Log): Promise<ChatApp> {
  const secrets = secretsOf(config);
  const clientOptions = clientOptionsOf(config, log);

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
    throw new Error(`the workspace refused SLACK_BOT_TOKEN at auth.test (${e.data?.error ?? e.message ?? 'unknown error'})`);
  }

  let dbPath: string | null = null;
  let store: Store | null = null;
  try {
    dbPath = defaultDbPath();
    store = openStore(dbPath);
  } catch (err) {
    log.warn({ err: err instanceof Error ? err.message : String(err) }, 'the log is unavailable; answering without it');
    dbPath = null;
    store = null;
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

  const logger = boltLogger(log, 'bolt', secrets);
  const common = {
    token: config.botToken,
    ...(botId && botUserId ? { botId, botUserId } : {}),
    logger,
    clientOptions,
    // the ack goes out first; the work runs after it
    processBeforeResponse: false,
  };
  const app =
    config.mode === 'http'
      ? new App({
          ...common,
          signingSecret: config.signingSecret,
          endpoints: EVENTS_PATH,
          port: config.port,
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
        })
      : new App({
          ...common,
          receiver: new SocketModeReceiver({
            appToken: config.appToken,
            logger,
            installerOptions: { clientOptions },
          }),
        });

  const deps = (client: webApi.WebClient): DeliverDeps => ({
    client,
    store,
    onLost: (what, err) => log.warn({ what, err: (err as { data?: { error?: string } })?.data?.error ?? String(err) }, 'could not reach the asker'),
  });

  const submit = (client: webApi.WebClient, origin: Origin, rawText: string, t0: number): void => {
    const text = rawText.trim() === '' ? 'help' : rawText;
    const now = new Date().toISOString();
    const line = { channel: origin.channel, user: origin.user, source: origin.source };
    log.debug({ ...line, text }, 'request text');
    const accepted = queue.offer(origin.channel, async () => {
      let outcome: Outcome | 'error' = 'error';
      let verb = verbOf(text);
      let computeMs: number | undefined;
      let logNumber: number | undefined;
      let failures = 0;
      try {
        const result = await engine.run({ text, channel: origin.channel, user: origin.user, now });
        computeMs = Math.round(result.ms);
        if (result.reply.kind === 'answer') {
          verb = result.reply.verb;
          logNumber = result.reply.logNumber;
        }
        const d = await deliver(deps(client), origin, result.reply, { png: result.png, note: result.chartNote });
        outcome = d.outcome;
        failures = d.failures.length;
      } catch (err) {
        const why =
          err instanceof EngineError && err.reason === 'timeout'
            ? 'Kolmo took too long on this request and gave up; nothing was posted. Try a simpler request or try again.'
            : 'Kolmo hit an internal problem with this request; nothing was posted. Try again.';
        log.error({ ...line, err: err instanceof Error ? err.message : String(err) }, 'request failed');
        await tellAsker(deps(client), origin, [plainNotice(why)]).catch(() => false);
      }
      log.info({ ...line, verb, outcome, ms: Math.round(performance.now() - t0), computeMs, logNumber, failures }, 'request');
    });
    if (!accepted) {
      log.info({ ...line, verb: verbOf(text), outcome: 'busy', ms: Math.round(performance.now() - t0) }, 'request');
      void tellAsker(deps(client), origin, [
        plainNotice(`Kolmo is busy (${queue.size} requests in line); nothing was posted. Try again in a minute.`),
      ]).catch(() => false);
    }
  };

  app.command(COMMAND, async ({ command, ack, respond, client }) => {
    const t0 = performance.now();
    await ack();
    const r: Respond = (m) => respond(m as never);
    submit(client, { source: 'command', channel: command.channel_id, user: command.user_id, respond: r }, command.text ?? '', t0);
  });

  // the platform re-sends an event it thinks was not received; each is answered once
  const seen = new Set<string>();
  app.event('app_mention', async ({ event, body, client, context }) => {
    const t0 = performance.now();
    const id = (body as { event_id?: string }).event_id ?? `${event.channel}:${event.ts}`;
    if (seen.has(id)) return;
    seen.add(id);
    if (seen.size > 2000) seen.delete(seen.values().next().value as string);
    const user = event.user;
    if (!user) return;
    const text = stripMention(event.text ?? '', context.botUserId ?? botUserId);
    submit(client, { source: 'mention', channel: event.channel, user, ...(event.thread_ts ? { threadTs: event.thread_ts } : {}) }, text, t0);
  });

  app.error(async (err) => {
    log.error({ err: err.message, code: (err as { code?: string }).code }, 'listener error');
  });

  let port: number | undefined;
  if (config.mode === 'http') {
    const server = (await app.start(
      (config.host ? { port: config.port, host: config.host } : { port: config.port }) as never,
    )) as unknown as Server;
    port = (server.address() as AddressInfo).port;
    log.info({ mode: 'http', port, path: EVENTS_PATH, workers: engine.size }, 'listening');
  } else {
    await app.start();
    log.info({ mode: 'socket', workers: engine.size }, 'connected');
  }

  let stopped = false;
  return {
    mode: config.mode,
    port,
    botUserId,
    async stop() {
      if (stopped) return;
      stopped = true;
      await app.stop().catch(() => undefined);
      await queue.drain(10000);
      await engine.close();
      store?.close();
    },
  };
}
