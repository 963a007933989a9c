/**
 * Settings from the environment, validated at the edge with zod.
 *
 * The mode is chosen from which tokens are present:
 *   SLACK_APP_TOKEN set                        → Socket Mode (needs SLACK_BOT_TOKEN too)
 *   SLACK_BOT_TOKEN + SLACK_SIGNING_SECRET     → HTTP mode on PORT (default 3000), path /slack/events
 *   neither                                    → the local console
 *
 * Every missing or malformed setting gives one message naming the variable and what is expected.
 * A message never contains the value of a secret (tokens, signing secret).
 */
import { availableParallelism } from 'node:os';
import { z } from 'zod';

export type LogLevel = 'fatal' | 'error' | 'warn' | 'info' | 'debug' | 'trace' | 'silent';

interface Common {
  logLevel: LogLevel;
  /** Web API base URL ending in '/', or undefined for the platform's own */
  apiUrl: string | undefined;
}

export interface WorkspaceCommon extends Common {
  botToken: string;
  /** worker threads computing answers and charts; 0 = compute on the main thread */
  workers: number;
  /** requests waiting or running before new ones are turned away as busy */
  queueLimit: number;
  /** seconds a single answer may take in a worker before it is abandoned */
  taskTimeoutSeconds: number;
}

export interface SocketConfig extends WorkspaceCommon {
  mode: 'socket';
  appToken: string;
}

export interface HttpConfig extends WorkspaceCommon {
  mode: 'http';
  signingSecret: string;
  port: number;
  /** interface to listen on; undefined = all interfaces */
  host: string | undefined;
}

export interface ConsoleConfig extends Common {
  mode: 'console';
}

export type Config = SocketConfig | HttpConfig | ConsoleConfig;

export type ConfigResult = { ok: true; config: Config } | { ok: false; errors: string[] };

type Env = Record<string, string | undefined>;

const present = (v: string | undefined): v is string => v !== undefined && v.trim() !== '';

const intIn = (lo: number, hi: number) =>
  z
    .string()
    .trim()
    .regex(/^\d+$/, 'expected a whole number')
    .transform((s) => Number(s))
    .pipe(z.number().int().min(lo, `expected at least ${lo}`).max(hi, `expected at most ${hi}`));

const LEVELS = ['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'] as const;

/** Secrets: their values are never quoted back, only what shape was expected. */
const secretChecks: Record<string, { prefix?: string; minLength: number; what: string }> = {
  SLACK_APP_TOKEN: { prefix: 'xapp-', minLength: 10, what: 'an app-level token starting with "xapp-" (Basic Information → App-Level Tokens, scope connections:write)' },
  SLACK_BOT_TOKEN: { prefix: 'xoxb-', minLength: 10, what: 'a bot token starting with "xoxb-" (OAuth & Permissions → Bot User OAuth Token)' },
  SLACK_SIGNING_SECRET: { minLength: 8, what: 'the signing secret (Basic Information → App Credentials), at least 8 characters without spaces' },
};

function checkSecret(name: string, env: Env, errors: string[]): string | undefined {
  const v = env[name];
  const rule = secretChecks[name];
  if (!present(v)) {
    errors.push(`${name} is missing: expected ${rule.what}.`);
    return undefined;
  }
  const schema = z
    .string()
    .min(rule.minLength)
    .regex(/^\S+$/)
    .refine((s) => rule.prefix === undefined || s.startsWith(rule.prefix));
  if (!schema.safeParse(v).success) {
    errors.push(`${name} is malformed (value not shown): expected ${rule.what}.`);
    return undefined;
  }
  return v;
}

function checkPlain<T>(name: string, env: Env, schema: z.ZodType<T>, fallback: T, what: string, errors: string[]): T {
  const v = env[name];
  if (!present(v)) return fallback;
  const r = schema.safeParse(v);
  if (!r.success) {
    const why = r.error.issues[0]?.message ?? 'invalid';
    errors.push(`${name}=${JSON.stringify(v.length > 60 ? v.slice(0, 60) + '…' : v)} is malformed (${why}): expected ${what}.`);
    return fallback;
  }
  return r.data;
}

const apiUrlSchema = z
  .string()
  .trim()
  .refine((s) => {
    try {
      const u = new URL(s);
      return (u.protocol === 'http:' || u.protocol === 'https:') && u.username === '' && u.password === '';
    } catch {
      return false;
    }
  }, 'not an http(s) URL without credentials')
  .transform((s) => (s.endsWith('/') ? s : s + '/'));

/** Reads and validates the settings. Never throws; never quotes a secret. */
export function loadConfig(env: Env = process.env): ConfigResult {
  const errors: string[] = [];
  const logLevel = checkPlain<LogLevel>(
    'LOG_LEVEL',
    env,
    z.string().trim().toLowerCase().pipe(z.enum(LEVELS)),
    'info',
    `one of ${LEVELS.join(', ')}`,
    errors,
  );
  const apiUrl = checkPlain<string | undefined>(
    'KOLMO_API_URL',
    env,
    apiUrlSchema,
    undefined,
    'the Web API base URL, e.g. https://proxy.internal/api/',
    errors,
  );

  const hasApp = present(env.SLACK_APP_TOKEN);
  const hasBot = present(env.SLACK_BOT_TOKEN);
  const hasSecret = present(env.SLACK_SIGNING_SECRET);

  if (!hasApp && !hasBot && !hasSecret) {
    if (errors.length > 0) return { ok: false, errors };
    return { ok: true, config: { mode: 'console', logLevel, apiUrl } };
  }

  const cores = Math.max(1, availableParallelism());
  const workers = checkPlain('KOLMO_WORKERS', env, intIn(0, 64), cores, 'a whole number of worker threads from 0 to 64 (0 = no workers)', errors);
  const queueLimit = checkPlain('KOLMO_QUEUE_LIMIT', env, intIn(1, 100000), 500, 'a whole number from 1 to 100000', errors);
  const taskTimeoutSeconds = checkPlain('KOLMO_TASK_TIMEOUT', env, intIn(1, 3600), 60, 'seconds from 1 to 3600', errors);
  const botToken = checkSecret('SLACK_BOT_TOKEN', env, errors);

  if (hasApp) {
    const appToken = checkSecret('SLACK_APP_TOKEN', env, errors);
    if (errors.length > 0 || appToken === undefined || botToken === undefined) return { ok: false, errors };
    return { ok: true, config: { mode: 'socket', logLevel, apiUrl, botToken, appToken, workers, queueLimit, taskTimeoutSeconds } };
  }

  const signingSecret = checkSecret('SLACK_SIGNING_SECRET', env, errors);
  const port = checkPlain('PORT', env, intIn(0, 65535), 3000, 'a TCP port from 0 to 65535', errors);
  const host = checkPlain<string | undefined>(
    'HOST',
    env,
    z.string().trim().regex(/^[A-Za-z0-9.:\-\[\]]+$/, 'not a host name or address'),
    undefined,
    'an interface address such as 127.0.0.1',
    errors,
  );
  if (errors.length > 0 || signingSecret === undefined || botToken === undefined) {
    if (!hasBot || !hasSecret) {
      errors.push('For HTTP mode set SLACK_BOT_TOKEN and SLACK_SIGNING_SECRET; for Socket Mode set SLACK_APP_TOKEN and SLACK_BOT_TOKEN; set none of them for the local console.');
    }
    return { ok: false, errors };
  }
  return { ok: true, config: { mode: 'http', logLevel, apiUrl, botToken, signingSecret, port, host, workers, queueLimit, taskTimeoutSeconds } };
}

/** The names of settings whose values must never be logged. */
export const SECRET_SETTINGS = Object.keys(secretChecks);
