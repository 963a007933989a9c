/**
 * Settings of the workspace app beyond src/config.ts, read from the environment the same way:
 * a malformed value stops the app with one line naming the variable (never a secret's value).
 *
 *   KOLMO_USER_BURST        requests one user may send at once              (default 20)
 *   KOLMO_USER_PER_MINUTE   sustained requests per user per minute          (default 30)
 *   KOLMO_BODY_LIMIT        largest HTTP request body in bytes              (default 262144)
 *   KOLMO_COMPUTE_BUDGET    compute units one request may need (budget.ts)  (default 6000)
 *   KOLMO_SHUTDOWN_GRACE    seconds SIGTERM waits for answers in progress   (default 10)
 *   KOLMO_OPS_PORT          Socket Mode: port of /healthz and /metrics      (default none; in
 *                           HTTP mode they are served on PORT beside /slack/events)
 *   KOLMO_OPS_HOST          the address KOLMO_OPS_PORT listens on           (default 127.0.0.1)
 */
import { USER_RATE_DEFAULTS, type UserRateOptions } from './ratelimit.js';
import { COMPUTE_BUDGET_DEFAULT } from '../verbs/ask.js';

export interface ChatSettings {
  userRate: UserRateOptions;
  /** bytes; a larger body is refused with 413 before it is read */
  bodyLimit: number;
  computeBudget: number;
  shutdownGraceMs: number;
  /** Socket Mode: the port /healthz and /metrics are served on (HTTP mode serves them on PORT) */
  opsPort?: number;
  /** the address the ops port listens on (default 127.0.0.1; KOLMO_OPS_HOST) */
  opsHost?: string;
}

export const BODY_LIMIT_DEFAULT = 256 * 1024;
export const SHUTDOWN_GRACE_DEFAULT_S = 10;

export const CHAT_DEFAULTS: ChatSettings = {
  userRate: USER_RATE_DEFAULTS,
  bodyLimit: BODY_LIMIT_DEFAULT,
  computeBudget: COMPUTE_BUDGET_DEFAULT,
  shutdownGraceMs: SHUTDOWN_GRACE_DEFAULT_S * 1000,
};

type Env = Record<string, string | undefined>;

function int(env: Env, name: string, def: number, lo: number, hi: number, errors: string[]): number {
  const v = env[name];
  if (v === undefined || v.trim() === '') return def;
  const t = v.trim();
  if (!/^\d+$/.test(t) || Number(t) < lo || Number(t) > hi) {
    errors.push(`${name}=${JSON.stringify(t.length > 40 ? t.slice(0, 40) + '…' : t)} is malformed: expected a whole number from ${lo} to ${hi}.`);
    return def;
  }
  return Number(t);
}

export function chatSettings(env: Env = process.env): { ok: true; settings: ChatSettings } | { ok: false; errors: string[] } {
  const errors: string[] = [];
  const burst = int(env, 'KOLMO_USER_BURST', USER_RATE_DEFAULTS.burst, 1, 100000, errors);
  const perMinute = int(env, 'KOLMO_USER_PER_MINUTE', USER_RATE_DEFAULTS.perMinute, 1, 1000000, errors);
  const bodyLimit = int(env, 'KOLMO_BODY_LIMIT', BODY_LIMIT_DEFAULT, 4096, 16 * 1024 * 1024, errors);
  const computeBudget = int(env, 'KOLMO_COMPUTE_BUDGET', COMPUTE_BUDGET_DEFAULT, 1, 10_000_000, errors);
  const grace = int(env, 'KOLMO_SHUTDOWN_GRACE', SHUTDOWN_GRACE_DEFAULT_S, 0, 600, errors);
  const opsPort = env.KOLMO_OPS_PORT?.trim() ? int(env, 'KOLMO_OPS_PORT', 0, 0, 65535, errors) : undefined;
  if (errors.length > 0) return { ok: false, errors };
  return {
    ok: true,
    settings: {
      userRate: { ...USER_RATE_DEFAULTS, burst, perMinute },
      bodyLimit,
      computeBudget,
      shutdownGraceMs: grace * 1000,
      ...(opsPort !== undefined ? { opsPort } : {}),
      ...(env.KOLMO_OPS_HOST?.trim() ? { opsHost: env.KOLMO_OPS_HOST.trim() } : {}),
    },
  };
}
