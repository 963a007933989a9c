/** Slash commands: `/kolmo <request>` (an empty one opens the check form; `help` when it cannot). */
import { createHash } from 'node:crypto';
import type { Origin } from '../deliver.js';
import type { RetryInfo } from '../intake.js';
import { responder } from '../response-url.js';
import type { ListenerContext } from './context.js';

export const COMMAND = '/kolmo';

/** The delivery key of a slash command: its trigger and response URL are unique per invocation. */
export function commandKey(triggerId: string | undefined, responseUrl: string | undefined, fallback: string): string {
  const id = triggerId || responseUrl ? `${triggerId ?? ''}\n${responseUrl ?? ''}` : fallback;
  return `cmd:${createHash('sha256').update(id).digest('base64url').slice(0, 32)}`;
}

export function registerCommands({ app, intake, forms, log }: ListenerContext): void {
  app.command(COMMAND, async ({ command, ack, context }) => {
    const t0 = performance.now();
    const now = new Date().toISOString();
    const text = command.text ?? '';
    const key = commandKey(command.trigger_id, command.response_url, `${command.channel_id}\n${command.user_id}\n${text}\n${now}`);
    const respond = responder(command.response_url);
    const origin: Origin = { source: 'command', channel: command.channel_id, user: command.user_id, ...(respond ? { respond } : {}) };
    // the ack first (nothing may delay it), then the inbox in the same turn of the event loop —
    // as for events, which Bolt acknowledges before the listener runs
    await ack();
    if (text.trim() === '' && command.trigger_id && forms.open) {
      // `/kolmo` alone opens the check form; its trigger expires in 3 seconds, so nothing comes first
      const opened = await forms.open(command.trigger_id, { legs: 2, channel: command.channel_id });
      log.info({ channel: command.channel_id, user: command.user_id, source: 'command', verb: 'form', outcome: opened ? 'form-opened' : 'form-failed', ms: Math.round(performance.now() - t0) }, 'request');
      if (opened) return;
    }
    const fresh = intake.admit(
      { key, source: 'command', channel: origin.channel, user: origin.user, ...(command.response_url ? { responseUrl: command.response_url } : {}), text, now },
      context as RetryInfo,
    );
    if (fresh) intake.submit({ origin, text, t0, key, now });
  });
}
