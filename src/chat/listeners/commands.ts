/** Slash commands: `/kolmo <request>` (an empty one opens the check form; `help` when it cannot). */
import { createHash } from 'node:crypto';
import type { RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';

export const COMMAND = '/kolmo';

/** The delivery key of a slash command: its trigger and response URL are unique per invocation. */
export function commandKey(triggerId: string | undefined, responseUrl: string | undefined, fallback: string): string {
  const id = triggerId || responseUrl ? `${triggerId ?? ''}\n${responseUrl ?? ''}` : fallback;
  return `cmd:${createHash('sha256').update(id).digest('base64url').slice(0, 32)}`;
}

export function registerCommands({ app, intake, forms, log }: ListenerContext): void {
  app.command(COMMAND, async ({ command, ack, body, context }) => {
    const t0 = performance.now();
    // a request with text was recorded before Bolt handed it over (intake.recordFirst)
    await ack();
    const text = command.text ?? '';
    if (text.trim() === '' && command.trigger_id) {
      // `/kolmo` alone opens the check form; its trigger expires in 3 seconds, so nothing comes first
      const opened = forms.open ? await forms.open(command.trigger_id, { legs: 2, channel: command.channel_id }) : false;
      log.info({ channel: command.channel_id, user: command.user_id, source: 'command', verb: 'form', outcome: opened ? 'form-opened' : 'form-failed', ms: Math.round(performance.now() - t0) }, 'request');
      if (opened) return;
      // no form: `help`, answered from memory
      const now = new Date().toISOString();
      const key = commandKey(command.trigger_id, command.response_url, `${command.channel_id}\n${command.user_id}\n${now}`);
      await intake.submit({
        origin: { source: 'command', channel: command.channel_id, user: command.user_id },
        ...(command.response_url ? { responseUrl: command.response_url } : {}),
        text,
        t0,
        key,
        now,
      });
      return;
    }
    intake.after(body, context as RetryInfo);
  });
}
