/**
 * `npm start`: picks the mode from the environment (src/config.ts) and runs it.
 *   SLACK_APP_TOKEN                         → the workspace app in Socket Mode
 *   SLACK_BOT_TOKEN + SLACK_SIGNING_SECRET  → the workspace app over HTTP on PORT, at /slack/events
 *   neither                                 → the local console (src/cli.ts)
 * A missing or malformed setting stops it with one line per problem (never a secret's value).
 */
import './runtime.js';
import { realpathSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { loadConfig } from './config.js';
import { createLog } from './log.js';
import { startChatApp, type ChatApp } from './chat/app.js';

/** Exit code for a configuration problem (EX_CONFIG). */
export const EXIT_CONFIG = 78;

export async function main(env: Record<string, string | undefined> = process.env): Promise<number | 'running'> {
  const r = loadConfig(env);
  if (!r.ok) {
    process.stderr.write('kolmo: cannot start; fix these settings:\n');
    for (const e of r.errors) process.stderr.write(`  - ${e}\n`);
    return EXIT_CONFIG;
  }
  const config = r.config;
  if (config.mode === 'console') {
    const { runConsole } = await import('./cli.js');
    return runConsole();
  }

  const log = createLog({ level: config.logLevel, secrets: [config.botToken, config.mode === 'http' ? config.signingSecret : config.appToken] });
  process.on('unhandledRejection', (reason) => {
    log.error({ err: reason instanceof Error ? reason.message : String(reason) }, 'unhandled rejection');
  });
  let app: ChatApp;
  try {
    app = await startChatApp(config, log);
  } catch (err) {
    log.fatal({ err: err instanceof Error ? err.message : String(err) }, 'could not start');
    process.stderr.write(`kolmo: could not start: ${err instanceof Error ? err.message : String(err)}\n`);
    return 1;
  }
  // SIGTERM/SIGINT: stop listening, let answers in progress finish within the grace period, hand
  // back the rest (the request queue keeps them for another instance or the next start), flush and close the log. A second
  // signal, or the grace period and 10 s more, ends the process at once.
  const grace = config.chat.shutdownGraceMs;
  const shutdown = (signal: string) => {
    log.info({ signal }, 'stopping');
    const force = setTimeout(() => process.exit(1), grace + 10000);
    force.unref();
    const again = () => process.exit(1);
    process.once('SIGINT', again);
    process.once('SIGTERM', again);
    app.stop().then(
      () => process.exit(0),
      () => process.exit(1),
    );
  };
  process.once('SIGINT', () => shutdown('SIGINT'));
  process.once('SIGTERM', () => shutdown('SIGTERM'));
  return 'running';
}

function isEntry(): boolean {
  const arg = process.argv[1];
  if (!arg) return false;
  try {
    return realpathSync(arg) === realpathSync(fileURLToPath(import.meta.url));
  } catch {
    return false;
  }
}

if (isEntry()) {
  main().then(
    (code) => {
      if (code !== 'running') process.exitCode = code;
    },
    (err) => {
      process.stderr.write(`kolmo: ${err instanceof Error ? err.message : String(err)}\n`);
      process.exitCode = 1;
    },
  );
}
