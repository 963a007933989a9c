/**
 * The buttons under an answer: the variations (spot ±5%, vol ±5 points, drift at the rate,
 * re-run on today's mark), edit in the check form, delete (the asker's only) and post to a
 * channel (private checks). A button names its check by number; the check is looked up in the
 * log of the conversation the press came from.
 */
import type { LogEntry } from '../../verbs/ask.js';
import type { Origin } from '../deliver.js';
import { DELETE_ACTION, EDIT_ACTION, POST_ACTION, parseCheckKey, postToChannelView, VARY_ACTIONS } from '../actions/buttons.js';
import { variationText, type Variation } from '../actions/variations.js';
import type { FormMeta } from '../form/view.js';
import type { ListenerContext } from './context.js';
import { openForm } from './form.js';
import { ackOnce, apiError, interactionKey, logOf, notice, openView, privateLog, typedLine } from './shared.js';

const WHAT: Record<Variation, (n: number) => string> = {
  spot_down: (n) => `Spot 5% lower than #${n}`,
  spot_up: (n) => `Spot 5% higher than #${n}`,
  vol_down: (n) => `Vol 5 points lower than #${n}`,
  vol_up: (n) => `Vol 5 points higher than #${n}`,
  drift_rate: (n) => `#${n} with the drift at the rate`,
  rerun_mark: (n) => `#${n} again on today’s mark`,
};

interface Press {
  user: string;
  channel: string;
  triggerId: string;
  value: unknown;
  messageTs?: string;
  threadTs?: string;
}

function pressOf(body: unknown): Press | undefined {
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
}

function originFor(p: Press, threadTs?: string): Origin {
  const dm = /^D/.test(p.channel);
  return {
    source: 'action',
    channel: p.channel,
    user: p.user,
    ...(dm ? { log: privateLog(p.user), flat: true } : {}),
    ...(threadTs ? { threadTs } : {}),
  };
}

export function registerActions(ctx: ListenerContext): void {
  const { app, store, log, intake } = ctx;
  const client = ctx.delivery.client;

  /** The check a button names, in the log of the conversation it was pressed in (`unread`: the log could not be read). */
  const entryFor = async (channel: string, user: string, value: unknown): Promise<{ log: string; number: number; entry?: LogEntry; unread?: true } | undefined> => {
    const number = parseCheckKey(value);
    if (number === undefined) return undefined;
    const logKey = logOf(channel, user);
    let entry: LogEntry | undefined;
    try {
      entry = await store?.get(logKey, number);
    } catch (err) {
      log.warn({ err: String(err) }, 'a button: the log could not be read');
      return { log: logKey, number, unread: true };
    }
    return { log: logKey, number, ...(entry && !entry.deletedAt ? { entry } : {}) };
  };

  /** The delivery key of a press: its trigger (unique per press), else what the press names. */
  const keyOf = (kind: string, p: Press): string => interactionKey(kind, p.triggerId, `${p.channel}\n${p.user}\n${p.messageTs}\n${String(p.value)}`);
  /** A press that asks for no answer: false when it was acted on before (a replayed payload). */
  const fresh = (kind: string, p: Press): Promise<boolean> => intake.once({ key: keyOf(kind, p), source: 'action', channel: p.channel, user: p.user }, {});

  const missing = (p: Press, found: { number: number; unread?: true } | undefined) =>
    notice(
      ctx,
      originFor(p, p.threadTs),
      found === undefined
        ? 'Kolmo could not tell which check this button belongs to.'
        : found.unread
          ? `Kolmo could not read this conversation’s log just now, so nothing was done for check #${found.number}; press the button again in a minute.`
          : `Check #${found.number} is not in this conversation’s log (it may have been deleted).`,
    );

  /** The logged check a button under it was pressed for; undefined (the asker told why) when it is gone. */
  const pressedEntry = async (body: unknown, acked: () => Promise<void>): Promise<{ p: Press; e: LogEntry; logKey: string } | undefined> => {
    const p = pressOf(body);
    if (!p) return undefined;
    const found = await entryFor(p.channel, p.user, p.value);
    if (!found?.entry) {
      await acked();
      await missing(p, found);
      return undefined;
    }
    return { p, e: found.entry, logKey: found.log };
  };

  for (const kind of Object.keys(VARY_ACTIONS) as Variation[]) {
    app.action(VARY_ACTIONS[kind], async ({ ack, body }) => {
      const t0 = performance.now();
      const acked = ackOnce(ack);
      try {
        // record first: the variation is in the shared queue before the press is acknowledged
        const pressed = await pressedEntry(body, acked);
        if (!pressed) return;
        const { p, e } = pressed;
        const now = new Date().toISOString();
        const v = variationText(e, kind, now.slice(0, 10));
        const threadTs = e.threadTs ?? p.threadTs ?? p.messageTs;
        if (!v.ok) {
          await acked();
          if (await fresh('vary', p)) await notice(ctx, originFor(p, threadTs), `Kolmo could not vary check #${e.number}: ${v.reason}.`);
          return;
        }
        await intake.submit({
          origin: originFor(p, /^D/.test(p.channel) ? undefined : threadTs),
          text: v.text,
          t0,
          key: keyOf('vary', p),
          now,
          variedFrom: e.number,
          preface: typedLine(WHAT[kind](e.number), v.text),
        });
      } finally {
        await acked();
      }
    });
  }

  app.action(EDIT_ACTION, async ({ ack, body }) => {
    await ack();
    const pressed = await pressedEntry(body, async () => undefined);
    if (!pressed) return;
    const { p, e } = pressed;
    const meta: FormMeta = { legs: 2, of: e.number, channel: p.channel, ...(e.threadTs && !/^D/.test(p.channel) ? { thread: e.threadTs } : {}) };
    if (!(await openForm(ctx, p.triggerId, meta, e))) await notice(ctx, originFor(p, p.threadTs), 'Kolmo could not open the check form (the button press expired). Press it again.');
  });

  app.action(DELETE_ACTION, async ({ ack, body }) => {
    await ack();
    const pressed = await pressedEntry(body, async () => undefined);
    if (!pressed) return;
    const { p, e, logKey } = pressed;
    const origin = originFor(p, e.threadTs ?? p.threadTs);
    if (e.user !== p.user) {
      log.info({ channel: p.channel, user: p.user, number: e.number, outcome: 'refused' }, 'delete');
      return notice(ctx, origin, `Only <@${e.user}>, who asked check #${e.number}, can delete it.`);
    }
    if (!(await fresh('delete', p))) return;
    const posted = e.posted;
    let left = 0;
    if (posted) {
      for (const ts of [...posted.ts].reverse()) {
        try {
          await client.chat.delete({ channel: posted.channel, ts });
        } catch (err) {
          if (apiError(err) !== 'message_not_found') left++;
        }
      }
      for (const file of posted.files) {
        try {
          await client.files.delete({ file });
        } catch (err) {
          if (apiError(err) !== 'file_not_found') left++;
        }
      }
    }
    let done = false;
    try {
      done = (await store?.tombstone(logKey, e.number, new Date().toISOString())) ?? false;
    } catch (err) {
      log.warn({ err: String(err) }, 'the log could not record a deletion');
    }
    log.info({ channel: p.channel, user: p.user, number: e.number, outcome: done ? 'deleted' : 'not-recorded', left }, 'delete');
    await notice(
      ctx,
      { ...origin, threadTs: undefined },
      done
        ? `Check #${e.number} is deleted: its messages and chart are gone and the log keeps only its number.${left ? ` (${left} message${left === 1 ? '' : 's'} could not be removed.)` : ''}`
        : `Kolmo could not record the deletion of check #${e.number} in the log; try again.`,
    );
  });

  app.action(POST_ACTION, async ({ ack, body }) => {
    await ack();
    const p = pressOf(body);
    if (!p) return;
    const found = await entryFor(p.channel, p.user, p.value);
    if (!found?.entry || !found.log.startsWith('im:')) return missing(p, found);
    if (!(await openView(ctx, p.triggerId, postToChannelView(found.number), 'post to a channel'))) {
      await notice(ctx, originFor(p), 'Kolmo could not open the channel picker (the button press expired). Press it again.');
    }
  });
}
