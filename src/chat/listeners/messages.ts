/** Direct messages to the app: answered in that conversation, logged in the person's private log. */
import type { Origin } from '../deliver.js';
import type { RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';
import { interactionKey, privateLog } from './shared.js';

export function registerMessages({ app, intake }: ListenerContext): void {
  app.event('message', async ({ event, body, context }) => {
    const t0 = performance.now();
    const e = event as { channel_type?: string; subtype?: string; bot_id?: string; user?: string; channel?: string; text?: string; ts?: string; thread_ts?: string };
    if (e.channel_type !== 'im' || e.subtype !== undefined || e.bot_id !== undefined) return;
    if (typeof e.user !== 'string' || typeof e.channel !== 'string' || e.user === context.botUserId) return;
    const now = new Date().toISOString();
    const id = (body as { event_id?: string }).event_id;
    const key = id ? `ev:${id.slice(0, 100)}` : interactionKey('dm', undefined, `${e.channel}\n${e.ts}`);
    const text = (e.text ?? '').trim();
    const origin: Origin = { source: 'dm', channel: e.channel, user: e.user, log: privateLog(e.user), flat: true, ...(e.thread_ts ? { threadTs: e.thread_ts } : {}) };
    if (!intake.admit({ key, source: 'mention', channel: e.channel, user: e.user }, context as RetryInfo)) return;
    intake.submit({ origin, text, t0, key, now });
  });
}
