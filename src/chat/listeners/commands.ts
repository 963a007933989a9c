/** Slash commands: `/kolmo <request>` (an empty one is `help`). */
import { createHash } from 'node:crypto';
import type { RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';

export const COMMAND = '/kolmo';

/** The delivery key of a slash command: its trigger and response URL are unique per invocation. */
export function commandKey(triggerId: string | undefined, responseUrl: string | undefined, fallback: string): string {
  const id = triggerId || responseUrl ? `${triggerId ?? ''}\n${responseUrl ?? ''}` : fallback;
  return `cmd:${createHash('sha256').update(id).digest('base64url').slice(0, 32)}`;
}

export function registerCommands({ app, intake }: ListenerContext): void {
  app.command(COMMAND, async ({ ack, body, context }) => {
    // the request was recorded before Bolt handed it over (intake.recordFirst): acknowledge, then go on
    await ack();
    intake.after(body, context as RetryInfo);
  });
}
