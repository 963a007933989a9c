/**
 * The check form: opened by the global shortcut, the empty `/kolmo`, "edit in the form" under an
 * answer and my desk; legs added and removed in place; a submission checked field by field
 * (rejections land on their field) and then asked like a typed request. Also the channel picker
 * of "post to channel", which posts a private check into a channel.
 */
import type { LogEntry } from '../../verbs/ask.js';
import type { Origin } from '../deliver.js';
import { POST_CALLBACK } from '../actions/buttons.js';
import { composeRequest, type FormValues } from '../form/compose.js';
import { formErrorsOf } from '../form/errors.js';
import { prefillFromRequest } from '../form/prefill.js';
import { quickCheck } from '../form/validate.js';
import { ADD_LEG, REMOVE_LEG, checkFormView, decodeMeta, fieldsShown, FORM_CALLBACK, readForm, type FormMeta, type StateValues } from '../form/view.js';
import type { ListenerContext } from './context.js';
import { apiError, interactionKey, logOf, marksOf, notice, openView, privateLog, termsIn, typedLine } from './shared.js';

export const SHORTCUT_CALLBACK = 'kolmo_open_form';

/** Opens the check form: empty, or pre-filled from a logged check. */
export async function openForm(ctx: ListenerContext, triggerId: string, meta: FormMeta, from?: LogEntry): Promise<boolean> {
  const logKey = meta.channel ? logOf(meta.channel, '') : undefined;
  const symbols = logKey && !logKey.startsWith('im:') ? (await marksOf(ctx.store, logKey)).map((m) => m.symbol) : [];
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
  return openView(ctx, triggerId, checkFormView({ meta: { ...meta, legs }, ...(values ? { values } : {}), symbols, ...(note ? { note } : {}) }), 'check form');
}

export function registerForm(ctx: ListenerContext): void {
  const { app, store, log, intake } = ctx;
  const client = ctx.delivery.client;

  app.shortcut(SHORTCUT_CALLBACK, async ({ ack, body }) => {
    await ack();
    const b = body as { trigger_id?: string };
    await openForm(ctx, String(b.trigger_id ?? ''), { legs: 2, pick: true });
  });

  const resize = async (body: Record<string, unknown>, legs: number) => {
    const view = (body as { view?: { id?: string; hash?: string; private_metadata?: string; state?: { values?: StateValues } } }).view;
    if (!view?.id) return;
    const meta = decodeMeta(view.private_metadata);
    const { values } = readForm(view.state?.values ?? {}, meta.legs);
    values.legs = values.legs.slice(0, legs);
    const symbols = meta.channel && !/^D/.test(meta.channel) ? (await marksOf(store, meta.channel)).map((m) => m.symbol) : [];
    try {
      await client.views.update({ view_id: view.id, ...(view.hash ? { hash: view.hash } : {}), view: checkFormView({ meta: { ...meta, legs }, values, symbols }) });
    } catch (err) {
      log.warn({ err: apiError(err) }, 'could not update the check form');
    }
  };
  const legsOf = (body: Record<string, unknown>): number => {
    const v = Number((body as { actions?: Array<{ value?: unknown }> }).actions?.[0]?.value);
    return Number.isInteger(v) && v >= 1 && v <= 6 ? v : 2;
  };
  for (const action of [ADD_LEG, REMOVE_LEG]) {
    app.action(action, async ({ ack, body }) => {
      await ack();
      const b = body as unknown as Record<string, unknown>;
      await resize(b, legsOf(b));
    });
  }

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
    const marks = dm ? [] : await marksOf(store, logKey);
    const refused = quickCheck(composed.text, { now, mark: (sym) => termsIn(marks, sym), budget: ctx.budget });
    if (refused) {
      const present = fieldsShown(meta.legs, marks.length > 0);
      await ack({ response_action: 'errors', errors: formErrorsOf(refused, composed.spans, present) as Record<string, string> });
      return;
    }
    const key = interactionKey('form', (body as { trigger_id?: string }).trigger_id, `${view.id}\n${view.hash ?? ''}`);
    const origin: Origin = dm
      ? { source: 'form', channel: target ?? user, user, log: logKey, flat: true }
      : { source: 'form', channel: target!, user, ...(meta.thread ? { threadTs: meta.thread } : {}) };
    const lead = meta.of ? `Check #${meta.of}, edited in the check form` : 'From the check form';
    // record first (the shared queue), then close the form
    await intake.submit({
      origin,
      text: composed.text,
      t0,
      key,
      now: now.toISOString(),
      ...(meta.of && !dm ? { variedFrom: meta.of } : {}),
      preface: typedLine(lead, composed.text),
    });
    await ack({ response_action: 'clear' });
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
    let e: LogEntry | undefined;
    let unread = false;
    try {
      e = of === undefined ? undefined : await store?.get(privateLog(user), of);
    } catch (err) {
      unread = true;
      log.warn({ err: String(err) }, 'post to a channel: the log could not be read');
    }
    const dmOrigin: Origin = { source: 'form', channel: user, user, flat: true };
    if (!e || e.deletedAt) {
      await ack({ response_action: 'clear' });
      await notice(ctx, dmOrigin, unread ? `Kolmo could not read your private log just now, so check #${of ?? '?'} was not posted; try again in a minute.` : `Check #${of ?? '?'} is not in your private log.`);
      return;
    }
    const now = new Date().toISOString();
    // the same request as logged, its day kept
    const day = typeof e.summary.asof === 'string' ? e.summary.asof : undefined;
    const text = day && day !== now.slice(0, 10) && !/\basof\b/i.test(e.text) ? `${e.text} asof ${day}` : e.text;
    const key = interactionKey('post', (body as { trigger_id?: string }).trigger_id, `${view.id}\n${postTo}\n${of}`);
    // record first (the shared queue), then close the picker
    await intake.submit({
      origin: { source: 'form', channel: postTo, user, tellIn: user },
      text,
      t0,
      key,
      now,
      preface: typedLine(`Posted by its asker from their private check #${e.number}`, text),
    });
    await ack({ response_action: 'clear' });
  });

  ctx.forms.open = (triggerId, meta) => openForm(ctx, triggerId, meta);
}
