/**
 * Structured logs (pino, one JSON object per line on stdout).
 *
 * Secrets never reach a log line: object fields with secret-looking names are redacted by pino,
 * and every string handed to the adapter given to the platform libraries is scrubbed of token
 * shapes (xoxb-…, xapp-…) and of the exact secret values this process was started with.
 */
import pino from 'pino';
type PinoLogger = pino.Logger;
import type { Logger as BoltLogger, LogLevel as BoltLogLevel } from '@slack/bolt';
import type { LogLevel } from './config.js';

export type Log = PinoLogger;

const REDACT_PATHS = [
  'token',
  '*.token',
  'botToken',
  'appToken',
  'signingSecret',
  'authorization',
  '*.authorization',
  'headers.authorization',
  'headers.Authorization',
  'env.SLACK_BOT_TOKEN',
  'env.SLACK_APP_TOKEN',
  'env.SLACK_SIGNING_SECRET',
];

const TOKEN_SHAPE = /\b(xox[abposr]|xapp)-[A-Za-z0-9-]+/g;

/** Replaces token shapes and the given secret values in a string by a fixed mark. */
export function scrub(s: string, secrets: readonly string[] = []): string {
  let out = s.replace(TOKEN_SHAPE, '$1-[redacted]');
  for (const secret of secrets) {
    if (secret.length >= 4) out = out.split(secret).join('[redacted]');
  }
  return out;
}

export interface LogOptions {
  level?: LogLevel;
  /** secret values to mask wherever they might appear in a string */
  secrets?: readonly string[];
  /** where lines go (default: stdout) */
  destination?: NodeJS.WritableStream;
}

export function createLog(opts: LogOptions = {}): Log {
  const secrets = (opts.secrets ?? []).filter((s) => s.length >= 4);
  return pino(
    {
      name: 'kolmo',
      level: opts.level ?? 'info',
      base: { pid: process.pid },
      redact: { paths: REDACT_PATHS, censor: '[redacted]' },
      hooks: {
        // scrub string arguments (messages) of every call
        logMethod(args, method) {
          const clean = args.map((a) => (typeof a === 'string' ? scrub(a, secrets) : a)) as typeof args;
          return method.apply(this, clean);
        },
      },
      formatters: {
        level: (label) => ({ level: label }),
      },
    },
    opts.destination ? (opts.destination as unknown as pino.DestinationStream) : pino.destination({ fd: 1, sync: true }),
  );
}

/** An adapter so the platform libraries log through pino (scrubbed, under `lib`). */
export function boltLogger(log: Log, name = 'slack', secrets: readonly string[] = []): BoltLogger {
  let child = log.child({ lib: name });
  const levelOf = (): BoltLogLevel => {
    const l = log.level;
    return (l === 'debug' || l === 'trace' ? 'debug' : l === 'info' ? 'info' : l === 'warn' ? 'warn' : 'error') as BoltLogLevel;
  };
  const text = (msg: unknown[]): string =>
    scrub(
      msg
        .map((m) => {
          if (typeof m === 'string') return m;
          if (m instanceof Error) return `${m.name}: ${m.message}`;
          try {
            return JSON.stringify(m);
          } catch {
            return String(m);
          }
        })
        .join(' '),
      secrets,
    );
  return {
    debug: (...msg: unknown[]) => child.debug(text(msg)),
    info: (...msg: unknown[]) => child.info(text(msg)),
    warn: (...msg: unknown[]) => child.warn(text(msg)),
    error: (...msg: unknown[]) => child.error(text(msg)),
    // the level is the process's (LOG_LEVEL); the libraries' own setting is ignored
    setLevel: () => {},
    getLevel: levelOf,
    setName: (n: string) => {
      child = log.child({ lib: n });
    },
  };
}
