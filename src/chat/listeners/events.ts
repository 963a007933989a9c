/** Events: an @-mention of the app, in a channel or inside a thread. */
import { createHash } from 'node:crypto';
import type { Origin } from '../deliver.js';
import { fileRefsOf } from '../files.js';
import { verbOf, type RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';

export function eventKey(eventId: string | undefined, fallback: string): string {
  return eventId ? `ev:${eventId.slice(0, 100)}` : `ev:${createHash('sha256').update(fallback).digest('base64url').slice(0, 32)}`;
}

/** Removes mentions of the app itself from a mention's text. */
export function stripMention(text: string, botUserId: string | undefined): string {
  const re = botUserId ? new RegExp(`<@${botUserId}(\\|[^>]*)?>`, 'g') : /^\s*<@[A-Z0-9]+(\|[^>]*)?>/;
  return text.replace(re, ' ').replace(/\s+/g, ' ').trim();
}

export function registerEvents({ app, intake, botUserId }: ListenerContext): void {
  app.event('app_mention', async ({ event, body, context }) => {
    const t0 = performance.now();
    const now = new Date().toISOString();
    const user = event.user;
    if (!user) return;
    const key = eventKey((body as { event_id?: string }).event_id, `${event.channel}\n${event.ts}`);
    const text = stripMention(event.text ?? '', context.botUserId ?? botUserId);
    const origin: Origin = { source: 'mention', channel: event.channel, user, ...(event.thread_ts ? { threadTs: event.thread_ts } : {}) };
    // only a `history` request reads the files attached to its message
    const fileRefs = verbOf(text) === 'history' ? fileRefsOf((event as { files?: unknown }).files) : [];
    const fresh = intake.admit(
      { key, source: 'mention', channel: origin.channel, user, ...(origin.threadTs ? { threadTs: origin.threadTs } : {}), text, now },
      context as RetryInfo,
    );
    if (fresh) intake.submit({ origin, text, t0, key, now, fileRefs });
  });
}
