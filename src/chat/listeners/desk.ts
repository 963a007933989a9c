/**
 * My desk (the app's home tab): the person's last checks across every log, the marks of the
 * channels they were asked in, and their personal defaults; a check re-run from there, the
 * check form opened from there, and the defaults edited (the person's own only).
 */
import type { LogEntry, LogStore } from '../../verbs/ask.js';
import type { Origin } from '../deliver.js';
import { parseCheckKey } from '../actions/buttons.js';
import { DEFAULTS_CALLBACK, defaultsView, readDefaults } from '../desk/defaults.js';
import { DESK_CHECKS, DESK_EDIT_DEFAULTS, DESK_MARK_CHANNELS, DESK_OPEN_FORM, DESK_RERUN, myDeskView, type DeskCheck } from '../desk/view.js';
import type { ListenerContext } from './context.js';
import { openForm } from './form.js';
import { ackOnce, apiError, interactionKey, marksOf, notice, openView, privateLog, typedLine } from './shared.js';

type UserDefaults = Awaited<ReturnType<LogStore['getDefaults']>>;

export function registerDesk(ctx: ListenerContext): void {
  const { app, store, log, intake } = ctx;
  const client = ctx.delivery.client;

  const publishDesk = async (user: string): Promise<void> => {
    if (!store) return;
    let entries: LogEntry[] = [];
    try {
      entries = await store.recentOfUser(user, DESK_CHECKS);
    } catch (err) {
      log.warn({ err: String(err) }, 'my desk: the log could not be read');
    }
    const checks: DeskCheck[] = entries.map((e) => {
      const priv = e.channel.startsWith('im:');
      return {
        channel: priv ? user : e.channel,
        log: e.channel,
        number: e.number,
        verb: e.verb,
        at: e.at,
        summary: e.summary,
        permalink: e.permalink,
        private: priv,
      };
    });
    const channels = [...new Set(entries.map((e) => e.channel).filter((c) => !c.startsWith('im:')))].slice(0, DESK_MARK_CHANNELS);
    const marks = await Promise.all(channels.map(async (channel) => ({ channel, marks: await marksOf(store, channel) })));
    let defaults: UserDefaults = {};
    try {
      defaults = await store.getDefaults(user);
    } catch {
      defaults = {};
    }
    try {
      await client.views.publish({ user_id: user, view: myDeskView({ checks, marks, defaults, now: new Date() }) });
    } catch (err) {
      log.warn({ err: apiError(err) }, 'could not publish my desk');
    }
  };

  app.event('app_home_opened', async ({ event }) => {
    const e = event as { user?: string; tab?: string };
    if (e.tab !== undefined && e.tab !== 'home') return;
    if (typeof e.user === 'string') await publishDesk(e.user);
  });

  app.action(DESK_OPEN_FORM, async ({ ack, body }) => {
    await ack();
    await openForm(ctx, String((body as { trigger_id?: string }).trigger_id ?? ''), { legs: 2, pick: true });
  });

  app.action(DESK_RERUN, async ({ ack, body }) => {
    const acked = ackOnce(ack);
    try {
      await rerun(body, acked);
    } finally {
      await acked();
    }
  });

  /** A check of the person's re-run from my desk: recorded in the shared queue before the press is acknowledged. */
  const rerun = async (body: unknown, acked: () => Promise<void>): Promise<void> => {
    const t0 = performance.now();
    const b = body as { user?: { id?: string }; trigger_id?: string; actions?: Array<{ value?: unknown }> };
    const user = b.user?.id;
    const raw = b.actions?.[0]?.value;
    if (typeof user !== 'string' || typeof raw !== 'string') return;
    const m = /^(im:[A-Z0-9]{2,32}|[CG][A-Z0-9]{2,32}):(n\d{1,9})$/.exec(raw);
    const number = m ? parseCheckKey(m[2]) : undefined;
    const dmOrigin: Origin = { source: 'action', channel: user, user, flat: true };
    // the lookup key names a log and a number; only the presser's own checks are re-run from my desk
    const logKey = m?.[1];
    let e: LogEntry | undefined;
    let unread = false;
    try {
      e = logKey && number !== undefined && (!logKey.startsWith('im:') || logKey === privateLog(user)) ? await store?.get(logKey, number) : undefined;
    } catch (err) {
      unread = true;
      log.warn({ err: String(err) }, 'my desk: the log could not be read');
    }
    if (!e || e.deletedAt || e.user !== user) {
      await acked();
      await notice(ctx, dmOrigin, unread ? 'Kolmo could not read the log just now, so nothing was re-run; press it again in a minute.' : 'That check is not one of yours any more (it may have been deleted).');
      return;
    }
    const key = interactionKey('rerun', b.trigger_id, `${raw}\n${user}`);
    const priv = e.channel.startsWith('im:');
    const origin: Origin = priv ? dmOrigin : { source: 'action', channel: e.channel, user, ...(e.threadTs ? { threadTs: e.threadTs } : {}) };
    const now = new Date().toISOString();
    await intake.submit({
      origin: priv ? { ...origin, log: e.channel } : origin,
      text: e.text,
      t0,
      key,
      now,
      variedFrom: e.number,
      preface: typedLine(`#${e.number} again, from my desk`, e.text),
    });
  };

  app.action(DESK_EDIT_DEFAULTS, async ({ ack, body }) => {
    await ack();
    const b = body as { user?: { id?: string }; trigger_id?: string };
    const user = b.user?.id;
    if (typeof user !== 'string') return;
    let d: UserDefaults = {};
    try {
      d = (await store?.getDefaults(user)) ?? {};
    } catch {
      d = {};
    }
    await openView(ctx, String(b.trigger_id ?? ''), defaultsView(d), 'defaults');
  });

  app.view(DEFAULTS_CALLBACK, async ({ ack, body, view }) => {
    const user = body.user.id;
    const r = readDefaults(view.state?.values ?? {});
    if (!r.ok) {
      await ack({ response_action: 'errors', errors: r.errors });
      return;
    }
    if (!store) {
      await ack({ response_action: 'errors', errors: { rate: 'The log is unavailable: defaults cannot be stored now.' } });
      return;
    }
    try {
      await store.putDefaults(user, r.defaults, new Date().toISOString());
    } catch (err) {
      await ack({ response_action: 'errors', errors: { rate: `Not stored: ${err instanceof Error ? err.message : String(err)}`.slice(0, 150) } });
      return;
    }
    await ack({ response_action: 'clear' });
    await publishDesk(user);
  });
}
