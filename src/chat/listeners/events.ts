/** Events: an @-mention of the app, in a channel or inside a thread. */
import { createHash } from 'node:crypto';
import type { RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';

export function eventKey(eventId: string | undefined, fallback: string): string {
  return eventId ? `ev:${eventId.slice(0, 100)}` : `ev:${createHash('sha256').update(fallback).digest('base64url').slice(0, 32)}`;
}

/** Removes mentions of the app itself from a mention's text. */
export function stripMention(text: string, botUserId: string | undefined): string {
  const re = botUserId ? new RegExp(`<@${botUserId}(\\|[^>]*)?>`, 'g') : /^\s*<@[A-Z0-9]+(\|[^>]*)?>/;
  return text.replace(re, ' ').replace(/\s+/g, ' ').trim();
}

export function registerEvents({ app, intake }: ListenerContext): void {
  app.event('app_mention', async ({ body, context }) => {
    // Bolt acknowledged the event before this listener; it was recorded before that (intake.recordFirst)
    intake.after(body, context as RetryInfo);
  });
}
