/**
 * The platform plumbing of the workspace app: the Web API client's retry policy and timeouts,
 * the bot's identity, the Bolt app over HTTP or Socket Mode, and the HTTP server's guards.
 * Nothing here knows what a request means; listeners/ and intake.ts do.
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import bolt from '@slack/bolt';
import type { App as BoltApp, webApi } from '@slack/bolt';
import type { ChatSettings, HttpConfig, SocketConfig } from '../config.js';
import { boltLogger, scrub, type Log } from '../log.js';

const { App, HTTPReceiver, SocketModeReceiver } = bolt;
type WebClientOptions = webApi.WebClientOptions;
export type { BoltApp };

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

export type WorkspaceConfig = HttpConfig | SocketConfig;

export function secretsOf(config: WorkspaceConfig): string[] {
  return [config.botToken, ...(config.mode === 'http' ? [config.signingSecret] : [config.appToken])];
}

export function clientOptionsOf(config: WorkspaceConfig, log: Log): WebClientOptions {
  return {
    ...(config.apiUrl ? { slackApiUrl: config.apiUrl } : {}),
    retryConfig: { ...RETRY_CONFIG },
    timeout: API_TIMEOUT_MS,
    rejectRateLimitedCalls: false,
    logger: boltLogger(log, 'web-api', secretsOf(config)),
  };
}

export interface BotIdentity {
  botUserId?: string;
  botId?: string;
}

/**
 * The bot token is checked once before anything listens (and the bot's own ids learnt, so the
 * app makes no second start-up call). Throws with a clear message when the workspace refuses it.
 */
export async function identifyBot(config: WorkspaceConfig, clientOptions: WebClientOptions): Promise<BotIdentity> {
  const probe = new bolt.webApi.WebClient(config.botToken, clientOptions);
  try {
    const who = await probe.auth.test();
    return {
      botUserId: typeof who.user_id === 'string' ? who.user_id : undefined,
      botId: typeof who.bot_id === 'string' ? who.bot_id : undefined,
    };
  } catch (err) {
    const e = err as { data?: { error?: string }; message?: string };
    throw new Error(`the workspace refused SLACK_BOT_TOKEN at auth.test (${scrub(e.data?.error ?? e.message ?? 'unknown error', secretsOf(config))})`);
  }
}

/** The Bolt app in the configured mode (not yet started). */
/** Serves /healthz and /metrics; false for any other path. */
export type OpsRoute = (req: IncomingMessage, res: ServerResponse) => Promise<boolean>;

export function createBoltApp(config: WorkspaceConfig, settings: ChatSettings, clientOptions: WebClientOptions, bot: BotIdentity, log: Log, ops: OpsRoute): BoltApp {
  const logger = boltLogger(log, 'bolt', secretsOf(config));
  const common = {
    token: config.botToken,
    ...(bot.botId && bot.botUserId ? { botId: bot.botId, botUserId: bot.botUserId } : {}),
    logger,
    clientOptions,
    // Kolmo keeps no conversation state: Bolt's per-request conversation store is only overhead
    convoStore: false as const,
  };
  if (config.mode === 'http') {
    return new App({
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
        // readiness and metrics beside the events endpoint
        customRoutes: ['/healthz', '/metrics'].map((path) => ({
          path,
          method: ['GET'],
          handler: (req: IncomingMessage, res: ServerResponse) => {
            void ops(req, res).catch(() => {
              res.writeHead(500);
              res.end();
            });
          },
        })),
      }),
    });
  }
  return new App({
    ...common,
    processBeforeResponse: false,
    receiver: new SocketModeReceiver({
      appToken: config.appToken,
      logger,
      installerOptions: { clientOptions },
    }),
  });
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

/** Starts listening (HTTP) or connecting (Socket Mode); the port listened on in HTTP mode. */
/**
 * Starts the app: HTTP mode listens on PORT (with /healthz and /metrics); Socket Mode connects,
 * and serves /healthz and /metrics on KOLMO_OPS_PORT when it is set. `about` joins the start line.
 */
export async function startListening(
  app: BoltApp,
  config: WorkspaceConfig,
  settings: ChatSettings,
  log: Log,
  workers: number,
  ops: OpsRoute,
  about: Record<string, unknown> = {},
): Promise<{ port?: number; opsServer?: Server }> {
  if (config.mode === 'http') {
    const server = (await app.start(config.host ? { port: config.port, host: config.host } : { port: config.port })) as unknown as Server;
    server.headersTimeout = HEADERS_TIMEOUT_MS;
    server.requestTimeout = REQUEST_TIMEOUT_MS;
    guardBodySize(server, settings.bodyLimit, log);
    const port = (server.address() as AddressInfo).port;
    log.info({ mode: 'http', port, path: EVENTS_PATH, workers, ...about }, 'listening');
    return { port };
  }
  await app.start();
  let opsServer: Server | undefined;
  if (settings.opsPort !== undefined) {
    const s = createServer((req, res) => {
      void ops(req, res).then(
        (done) => {
          if (!done) {
            res.writeHead(404);
            res.end();
          }
        },
        () => {
          res.writeHead(500);
          res.end();
        },
      );
    });
    await new Promise<void>((r) => s.listen(settings.opsPort, settings.opsHost ?? '127.0.0.1', r));
    opsServer = s;
  }
  const opsPort = opsServer ? (opsServer.address() as AddressInfo).port : undefined;
  log.info({ mode: 'socket', workers, ...about, ...(opsPort !== undefined ? { opsPort } : {}) }, 'connected');
  return { opsServer };
}
