/**
 * The interactive side of the workspace app: the buttons under answers, the check form, my desk
 * (the home tab), personal defaults, direct messages and "post to a channel".
 *
 * Every payload arrives signed on the same endpoint as commands and events and is verified the
 * same way by the receiver. What a payload says is trusted only as a lookup key:
 * - a button names a check by number (`n17`); the log it is looked up in is the conversation the
 *   press came from (a channel's own log, or the presser's private log in their messages with the
 *   app), so a press can only reach a check of that conversation;
 * - the person is the payload's signed user; delete, and personal defaults, are the asker's only;
 * - a replayed payload (same trigger) is acknowledged and not acted on again (the inbox).
 * Every listener acknowledges first (the platform allows 3 seconds; a trigger to open a view
 * expires in 3 seconds too), then does its work.
 */
import { createHash } from 'node:crypto';
import type { ModalView } from '@slack/types';
import { termsOfMark, type LogEntry, type MarkTerms, type Store } from '../verbs/ask.js';
import { plainNotice } from './blocks.js';
import { tellAsker, type Origin } from './deliver.js';
import type { RetryInfo } from './intake.js';
import type { ListenerContext } from './listeners/context.js';
import { DELETE_ACTION, EDIT_ACTION, POST_ACTION, POST_CALLBACK, parseCheckKey, postToChannelView, VARY_ACTIONS } from './actions/buttons.js';
import { variationText, type Variation } from './actions/variations.js';
import { composeRequest, type FormValues } from './form/compose.js';
import { formErrorsOf } from './form/errors.js';
import { prefillFromRequest } from './form/prefill.js';
import { quickCheck } from './form/validate.js';
import { ADD_LEG, REMOVE_LEG, checkFormView, decodeMeta, fieldsShown, FORM_CALLBACK, readForm, type FormMeta, type StateValues } from './form/view.js';
import { DEFAULTS_CALLBACK, defaultsView, readDefaults } from './desk/defaults.js';
import { DESK_CHECKS, DESK_EDIT_DEFAULTS, DESK_MARK_CHANNELS, DESK_OPEN_FORM, DESK_RERUN, myDeskView, type DeskCheck } from './desk/view.js';


export const SHORTCUT_CALLBACK = 'kolmo_open_form';

/** The log a conversation's checks are numbered in: a channel's own, or the person's private log. */
export function logOf(channel: string, user: string): string {
  return /^D/.test(channel) ? privateLog(user) : channel;
}

export function privateLog(user: string): string {
  return `im:${user}`;
}

/** The delivery key of an interaction: its trigger is unique per press or submission. */
export function interactionKey(kind: string, triggerId: string | undefined, fallback: string): string {
  return `${kind}:${createHash('sha256').update(triggerId || fallback).digest('base64url').slice(0, 32)}`;
}

function markTermsOf(store: Store | null, log: string, symbol: string): MarkTerms | undefined {
  try {
    const m = store?.getMark(log, symbol);
    return m ? termsOfMark(m) : undefined;
  } catch {
    return undefined;
  }
}

function symbolsOf(store: Store | null, log: string): string[] {
  try {
    return store?.listMarks(log).map((m) => m.symbol) ?? [];
  } catch {
    return [];
  }
}

const WHAT: Record<Variation, (n: number) => string> = {
  spot_down: (n) => `Spot 5% lower than #${n}`,
  spot_up: (n) => `Spot 5% higher than #${n}`,
  vol_down: (n) => `Vol 5 points lower than #${n}`,
  vol_up: (n) => `Vol 5 points higher than #${n}`,
  drift_rate: (n) => `#${n} with the drift at the rate`,
  rerun_mark: (n) => `#${n} again on today’s mark`,
};

/** One line saying what produced a check and the request typed out, so it can be typed next time. */
export function typedLine(lead: string, text: string): string {
  return `${lead}. Typed, it is: /kolmo ${text}`;
}

export function registerInteractive(ctx: ListenerContext): void {
  const { app, store, log, intake } = ctx;
  const client = ctx.delivery.client;
  const env = {
    deps: ctx.delivery,
    budget: ctx.budget,
    admit: (e: { key: string; channel: string; user: string; source: string; text?: string; now?: string }, retry: RetryInfo) => intake.admit(e, retry),
    submit: (origin: Origin, text: string, t0: number, key: string, now: string, _resumed = false, extra: { variedFrom?: number; preface?: string } = {}) =>
      intake.submit({ origin, text, t0, key, now, ...extra }),
  };

  const notice = async (origin: Origin, text: string) => {
    await tellAsker(env.deps, origin, [plainNotice(text)]).catch(() => false);
  };

  const openView = async (triggerId: string, view: ModalView, what: string): Promise<boolean> => {
    try {
      await client.views.open({ trigger_id: triggerId, view });
      return true;
    } catch (err) {
      log.warn({ what, err: (err as { data?: { error?: string } }).data?.error ?? String(err) }, 'could not open a view');
      return false;
    }
  };

  /** Opens the check form: empty, or pre-filled from a logged check. */
  const openForm = async (triggerId: string, meta: FormMeta, from?: LogEntry): Promise<boolean> => {
    const logKey = meta.channel ? logOf(meta.channel, '') : undefined;
    const symbols = logKey && !logKey.startsWith('im:') ? symbolsOf(store, logKey) : [];
    let values: FormValues | undefined;
    let note: string | undefined;
    if (from) {
      const day = typeof from.summary.asof === 'string' ? from.summary.asof : from.at.slice(0, 10);
      const p = prefillFromRequest(from.text, day);
      if (p) {
        values = p.values;
        if (p.dropped.length) note = `Not in the form, so not carried over: ${p.dropped.join('; ')}.`;
      } else note = `Check #${from.number} is not one the form can hold; the form opens empty.`;
    }
    const legs = Math.max(meta.legs, values?.legs.length ?? 0);
    return openView(triggerId, checkFormView({ meta: { ...meta, legs }, ...(values ? { values } : {}), symbols, ...(note ? { note } : {}) }), 'check form');
  };

  // ------------------------------------------------------------------------------------------
  // the buttons under an answer

  const entryFor = (channel: string, user: string, value: unknown): { log: string; number: number; entry?: LogEntry } | undefined => {
    const number = parseCheckKey(value);
    if (number === undefined) return undefined;
    const logKey = logOf(channel, user);
    let entry: LogEntry | undefined;
    try {
      entry = store?.get(logKey, number);
    } catch {
      entry = undefined;
    }
    return { log: logKey, number, ...(entry && !entry.deletedAt ? { entry } : {}) };
  };

  interface Press {
    user: string;
    channel: string;
    triggerId: string;
    value: unknown;
    messageTs?: string;
    threadTs?: string;
  }

  const pressOf = (body: Record<string, unknown>): Press | undefined => {
    const b = body as {
      user?: { id?: string };
      channel?: { id?: string };
      container?: { channel_id?: string; message_ts?: string; thread_ts?: string };
      trigger_id?: string;
      actions?: Array<{ value?: unknown }>;
      message?: { ts?: string; thread_ts?: string };
    };
    const user = b.user?.id;
    const channel = b.channel?.id ?? b.container?.channel_id;
    if (typeof user !== 'string' || typeof channel !== 'string' || !/^[A-Z0-9]{2,32}$/.test(channel)) return undefined;
    return {
      user,
      channel,
      triggerId: String(b.trigger_id ?? ''),
      value: b.actions?.[0]?.value,
      messageTs: b.container?.message_ts ?? b.message?.ts,
      threadTs: b.container?.thread_ts ?? b.message?.thread_ts,
    };
  };

  const originFor = (p: Press, threadTs?: string): Origin => {
    const dm = /^D/.test(p.channel);
    return {
      source: 'action',
      channel: p.channel,
      user: p.user,
      ...(dm ? { log: privateLog(p.user), flat: true } : {}),
      ...(threadTs ? { threadTs } : {}),
    };
  };

  const fresh = (kind: string, p: Press, text: string, threadTs?: string): { key: string; ok: boolean } => {
    const key = interactionKey(kind, p.triggerId, `${p.channel}\n${p.user}\n${p.messageTs}\n${String(p.value)}`);
    const ok = env.admit(
      { key, source: 'mention', channel: p.channel, user: p.user, ...(threadTs ? { threadTs } : {}), text, now: new Date().toISOString() },
      {},
    );
    return { key, ok };
  };

  const missing = (p: Press, number: number | undefined) =>
    notice(originFor(p, p.threadTs), number === undefined ? 'Kolmo could not tell which check this button belongs to.' : `Check #${number} is not in this conversation’s log (it may have been deleted).`);

  /** The logged check a button under it was pressed for; undefined (the asker told why) when it is gone. */
  const pressedEntry = async (body: unknown): Promise<{ p: Press; e: LogEntry; logKey: string } | undefined> => {
    const p = pressOf(body as Record<string, unknown>);
    if (!p) return undefined;
    const found = entryFor(p.channel, p.user, p.value);
    if (!found?.entry) {
      await missing(p, found?.number);
      return undefined;
    }
    return { p, e: found.entry, logKey: found.log };
  };

  for (const kind of Object.keys(VARY_ACTIONS) as Variation[]) {
    app.action(VARY_ACTIONS[kind], async ({ ack, body }) => {
      await ack();
      const t0 = performance.now();
      const p = pressOf(body as unknown as Record<string, unknown>);
      if (!p) return;
      const found = entryFor(p.channel, p.user, p.value);
      if (!found?.entry) return missing(p, found?.number);
      const e = found.entry;
      const now = new Date().toISOString();
      const v = variationText(e, kind, now.slice(0, 10));
      const threadTs = e.threadTs ?? p.threadTs ?? p.messageTs;
      if (!v.ok) {
        const { ok } = fresh('vary', p, '', threadTs);
        if (ok) await notice(originFor(p, threadTs), `Kolmo could not vary check #${e.number}: ${v.reason}.`);
        return;
      }
      const { key, ok } = fresh('vary', p, v.text, threadTs);
      if (!ok) return;
      env.submit(originFor(p, /^D/.test(p.channel) ? undefined : threadTs), v.text, t0, key, now, false, {
        variedFrom: e.number,
        preface: typedLine(WHAT[kind](e.number), v.text),
      });
    });
  }

  app.action(EDIT_ACTION, async ({ ack, body }) => {
    await ack();
    const pressed = await pressedEntry(body);
    if (!pressed) return;
    const { p, e } = pressed;
    const meta: FormMeta = { legs: 2, of: e.number, channel: p.channel, ...(e.threadTs && !/^D/.test(p.channel) ? { thread: e.threadTs } : {}) };
    if (!(await openForm(p.triggerId, meta, e))) await notice(originFor(p, p.threadTs), 'Kolmo could not open the check form (the button press expired). Press it again.');
  });

  app.action(DELETE_ACTION, async ({ ack, body }) => {
    await ack();
    const pressed = await pressedEntry(body);
    if (!pressed) return;
    const { p, e, logKey } = pressed;
    const origin = originFor(p, e.threadTs ?? p.threadTs);
    if (e.user !== p.user) {
      log.info({ channel: p.channel, user: p.user, number: e.number, outcome: 'refused' }, 'delete');
      return notice(origin, `Only <@${e.user}>, who asked check #${e.number}, can delete it.`);
    }
    const { ok } = fresh('delete', p, '', e.threadTs ?? undefined);
    if (!ok) return;
    const posted = e.posted;
    let left = 0;
    if (posted) {
      for (const ts of [...posted.ts].reverse()) {
        try {
          await client.chat.delete({ channel: posted.channel, ts });
        } catch (err) {
          if ((err as { data?: { error?: string } }).data?.error !== 'message_not_found') left++;
        }
      }
      for (const file of posted.files) {
        try {
          await client.files.delete({ file });
        } catch (err) {
          if ((err as { data?: { error?: string } }).data?.error !== 'file_not_found') left++;
        }
      }
    }
    let done = false;
    try {
      done = store?.tombstone(logKey, e.number, new Date().toISOString()) ?? false;
    } catch (err) {
      log.warn({ err: String(err) }, 'the log could not record a deletion');
    }
    log.info({ channel: p.channel, user: p.user, number: e.number, outcome: done ? 'deleted' : 'not-recorded', left }, 'delete');
    await notice(
      { ...origin, threadTs: undefined },
      done
        ? `Check #${e.number} is deleted: its messages and chart are gone and the log keeps only its number.${left ? ` (${left} message${left === 1 ? '' : 's'} could not be removed.)` : ''}`
        : `Kolmo could not record the deletion of check #${e.number} in the log; try again.`,
    );
  });

  app.action(POST_ACTION, async ({ ack, body }) => {
    await ack();
    const p = pressOf(body as unknown as Record<string, unknown>);
    if (!p) return;
    const found = entryFor(p.channel, p.user, p.value);
    if (!found?.entry || !found.log.startsWith('im:')) return missing(p, found?.number);
    if (!(await openView(p.triggerId, postToChannelView(found.number), 'post to a channel'))) {
      await notice(originFor(p), 'Kolmo could not open the channel picker (the button press expired). Press it again.');
    }
  });

  // ------------------------------------------------------------------------------------------
  // the check form

  app.shortcut(SHORTCUT_CALLBACK, async ({ ack, body }) => {
    await ack();
    const b = body as { trigger_id?: string };
    await openForm(String(b.trigger_id ?? ''), { legs: 2, pick: true });
  });

  const resize = async (body: Record<string, unknown>, legs: number) => {
    const view = (body as { view?: { id?: string; hash?: string; private_metadata?: string; state?: { values?: StateValues } } }).view;
    if (!view?.id) return;
    const meta = decodeMeta(view.private_metadata);
    const { values } = readForm(view.state?.values ?? {}, meta.legs);
    values.legs = values.legs.slice(0, legs);
    const symbols = meta.channel && !/^D/.test(meta.channel) ? symbolsOf(store, meta.channel) : [];
    try {
      await client.views.update({ view_id: view.id, ...(view.hash ? { hash: view.hash } : {}), view: checkFormView({ meta: { ...meta, legs }, values, symbols }) });
    } catch (err) {
      log.warn({ err: (err as { data?: { error?: string } }).data?.error ?? String(err) }, 'could not update the check form');
    }
  };
  const legsOf = (body: Record<string, unknown>): number => {
    const v = Number((body as { actions?: Array<{ value?: unknown }> }).actions?.[0]?.value);
    return Number.isInteger(v) && v >= 1 && v <= 6 ? v : 2;
  };
  app.action(ADD_LEG, async ({ ack, body }) => {
    await ack();
    await resize(body as unknown as Record<string, unknown>, legsOf(body as unknown as Record<string, unknown>));
  });
  app.action(REMOVE_LEG, async ({ ack, body }) => {
    await ack();
    await resize(body as unknown as Record<string, unknown>, legsOf(body as unknown as Record<string, unknown>));
  });

  app.view(FORM_CALLBACK, async ({ ack, body, view }) => {
    const t0 = performance.now();
    const user = body.user.id;
    const meta = decodeMeta(view.private_metadata);
    const { values, postTo } = readForm((view.state?.values ?? {}) as unknown as StateValues, meta.legs);
    const composed = composeRequest(values);
    if (!composed.ok) {
      await ack({ response_action: 'errors', errors: composed.errors as Record<string, string> });
      return;
    }
    // where the check goes: the conversation the form was opened from, the channel picked, or the
    // person's own messages with the app (private)
    const target = meta.pick ? postTo : meta.channel;
    const dm = target === undefined || /^D/.test(target);
    const logKey = dm ? privateLog(user) : target!;
    const now = new Date();
    const refused = quickCheck(composed.text, { now, mark: (sym) => (dm ? undefined : markTermsOf(store, logKey, sym)), budget: env.budget });
    if (refused) {
      const present = fieldsShown(meta.legs, !dm && symbolsOf(store, logKey).length > 0);
      await ack({ response_action: 'errors', errors: formErrorsOf(refused, composed.spans, present) as Record<string, string> });
      return;
    }
    await ack({ response_action: 'clear' });
    const key = interactionKey('form', (body as { trigger_id?: string }).trigger_id, `${view.id}\n${view.hash ?? ''}`);
    const origin: Origin = dm
      ? { source: 'form', channel: target ?? user, user, log: logKey, flat: true }
      : { source: 'form', channel: target!, user, ...(meta.thread ? { threadTs: meta.thread } : {}) };
    const fresh = env.admit({ key, source: 'mention', channel: origin.channel, user, ...(meta.thread ? { threadTs: meta.thread } : {}), text: composed.text, now: now.toISOString() }, {});
    if (!fresh) return;
    const lead = meta.of ? `Check #${meta.of}, edited in the check form` : 'From the check form';
    env.submit(origin, composed.text, t0, key, now.toISOString(), false, {
      ...(meta.of && !dm ? { variedFrom: meta.of } : {}),
      preface: typedLine(lead, composed.text),
    });
  });

  app.view(POST_CALLBACK, async ({ ack, body, view }) => {
    const t0 = performance.now();
    const user = body.user.id;
    let of: number | undefined;
    try {
      const o = JSON.parse(view.private_metadata ?? '') as { of?: unknown };
      of = typeof o.of === 'number' && Number.isInteger(o.of) && o.of > 0 ? o.of : undefined;
    } catch {
      of = undefined;
    }
    const { postTo } = readForm((view.state?.values ?? {}) as unknown as StateValues, 0);
    if (!postTo || /^D/.test(postTo)) {
      await ack({ response_action: 'errors', errors: { post_to: 'Pick a channel.' } });
      return;
    }
    // only the presser's own private log: the number is a lookup key in it, nothing more
    const e = of === undefined ? undefined : store?.get(privateLog(user), of);
    await ack({ response_action: 'clear' });
    const dmOrigin: Origin = { source: 'form', channel: user, user, flat: true };
    if (!e || e.deletedAt) {
      await notice(dmOrigin, `Check #${of ?? '?'} is not in your private log.`);
      return;
    }
    const now = new Date().toISOString();
    // the same request as logged, its day kept
    const day = typeof e.summary.asof === 'string' ? e.summary.asof : undefined;
    const text = day && day !== now.slice(0, 10) && !/\basof\b/i.test(e.text) ? `${e.text} asof ${day}` : e.text;
    const key = interactionKey('post', (body as { trigger_id?: string }).trigger_id, `${view.id}\n${postTo}\n${of}`);
    const fresh = env.admit({ key, source: 'mention', channel: postTo, user, text, now }, {});
    if (!fresh) return;
    env.submit({ source: 'form', channel: postTo, user, tellIn: user }, text, t0, key, now, false, {
      preface: typedLine(`Posted by its asker from their private check #${e.number}`, text),
    });
  });

  // ------------------------------------------------------------------------------------------
  // my desk

  const publishDesk = async (user: string): Promise<void> => {
    if (!store) return;
    let entries: LogEntry[] = [];
    try {
      entries = store.recentOfUser(user, DESK_CHECKS);
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
    const marks = channels.map((channel) => {
      let ms: ReturnType<Store['listMarks']> = [];
      try {
        ms = store.listMarks(channel);
      } catch {
        ms = [];
      }
      return { channel, marks: ms };
    });
    let defaults = {};
    try {
      defaults = store.getDefaults(user);
    } catch {
      defaults = {};
    }
    try {
      await client.views.publish({ user_id: user, view: myDeskView({ checks, marks, defaults, now: new Date() }) });
    } catch (err) {
      log.warn({ err: (err as { data?: { error?: string } }).data?.error ?? String(err) }, 'could not publish my desk');
    }
  };

  app.event('app_home_opened', async ({ event }) => {
    const e = event as { user?: string; tab?: string };
    if (e.tab !== undefined && e.tab !== 'home') return;
    if (typeof e.user === 'string') await publishDesk(e.user);
  });

  app.action(DESK_OPEN_FORM, async ({ ack, body }) => {
    await ack();
    await openForm(String((body as { trigger_id?: string }).trigger_id ?? ''), { legs: 2, pick: true });
  });

  app.action(DESK_RERUN, async ({ ack, body }) => {
    await ack();
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
    const e = logKey && number !== undefined && (!logKey.startsWith('im:') || logKey === privateLog(user)) ? store?.get(logKey, number) : undefined;
    if (!e || e.deletedAt || e.user !== user) {
      await notice(dmOrigin, 'That check is not one of yours any more (it may have been deleted).');
      return;
    }
    const key = interactionKey('rerun', b.trigger_id, `${raw}\n${user}`);
    const priv = e.channel.startsWith('im:');
    const origin: Origin = priv ? dmOrigin : { source: 'action', channel: e.channel, user, ...(e.threadTs ? { threadTs: e.threadTs } : {}) };
    const now = new Date().toISOString();
    if (!env.admit({ key, source: 'mention', channel: origin.channel, user, ...(origin.threadTs ? { threadTs: origin.threadTs } : {}), text: e.text, now }, {})) return;
    env.submit(priv ? { ...origin, log: e.channel } : origin, e.text, t0, key, now, false, { variedFrom: e.number, preface: typedLine(`#${e.number} again, from my desk`, e.text) });
  });

  app.action(DESK_EDIT_DEFAULTS, async ({ ack, body }) => {
    await ack();
    const b = body as { user?: { id?: string }; trigger_id?: string };
    const user = b.user?.id;
    if (typeof user !== 'string') return;
    let d = {};
    try {
      d = store?.getDefaults(user) ?? {};
    } catch {
      d = {};
    }
    await openView(String(b.trigger_id ?? ''), defaultsView(d), 'defaults');
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
      store.putDefaults(user, r.defaults, new Date().toISOString());
    } catch (err) {
      await ack({ response_action: 'errors', errors: { rate: `Not stored: ${err instanceof Error ? err.message : String(err)}`.slice(0, 150) } });
      return;
    }
    await ack({ response_action: 'clear' });
    await publishDesk(user);
  });

  // ------------------------------------------------------------------------------------------
  // direct messages: answered in that conversation, logged in the person's private log

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
    if (!env.admit({ key, source: 'mention', channel: e.channel, user: e.user, ...(e.thread_ts ? { threadTs: e.thread_ts } : {}), text, now }, context as { retryNum?: number; retryReason?: string })) return;
    env.submit(origin, text, t0, key, now);
  });

  ctx.forms.open = (triggerId, meta) => openForm(triggerId, meta);
}
