/**
 * The check form (docs/design.md §1): a modal that builds a check for people who do not type the
 * grammar. Pure builders: values → modal view, and the submitted state → values.
 *
 * Every input's block id is its field id (./compose.ts FieldId) and its action id is `v`, so a
 * rejection maps back onto the field by block id (`response_action: "errors"`). Up to six legs:
 * the form opens with as many as it is given (at least one, two for an empty form) and "Add a
 * leg" / "Remove the last leg" rebuild it with views.update; the platform keeps what was typed in
 * inputs whose block ids stay.
 *
 * Platform limits (Block Kit reference): a modal holds at most 100 blocks; title, submit and close
 * texts at most 24 characters; private_metadata at most 3000 characters; a static select at most
 * 100 options. Six legs come to about 60 blocks.
 */
import type { types } from '@slack/bolt';
import { FORM_LEGS_MAX, LEG_FIELDS, legField, type FieldId, type FormValues, type LegType, type LegValues } from './compose.js';

type KnownBlock = types.KnownBlock;
type ModalView = types.ModalView;
type InputBlockElement = types.InputBlockElement;

export const FORM_CALLBACK = 'kolmo_check_form';
export const ACTION_ID = 'v';
export const ADD_LEG = 'kolmo_form_add_leg';
export const REMOVE_LEG = 'kolmo_form_remove_leg';
export const MODAL_BLOCKS_MAX = 100;
export const METADATA_MAX = 3000;
const SYMBOL_OPTIONS_MAX = 100;

/** What the form carries between opening and submission (private_metadata). */
export interface FormMeta {
  /** where the check goes: a channel id; absent: the person's own messages with the app (private) */
  channel?: string;
  /** the thread it goes into (the edit action: the edited check's thread) */
  thread?: string;
  /** the check this form edits (its number in the channel's log) */
  of?: number;
  /** legs shown */
  legs: number;
  /** the form was opened without a channel (global shortcut, my desk): it asks where to post */
  pick?: boolean;
}

export function encodeMeta(m: FormMeta): string {
  const s = JSON.stringify({ v: 1, ...m });
  return s.length <= METADATA_MAX ? s : JSON.stringify({ v: 1, legs: m.legs });
}

/** Reads private_metadata; anything malformed gives an empty form's metadata (never throws). */
export function decodeMeta(s: string | undefined): FormMeta {
  try {
    const o = JSON.parse(s ?? '') as Record<string, unknown>;
    const legs = Number(o.legs);
    const m: FormMeta = { legs: Number.isInteger(legs) && legs >= 1 && legs <= FORM_LEGS_MAX ? legs : 2 };
    if (typeof o.channel === 'string' && /^[A-Z0-9]{2,32}$/.test(o.channel)) m.channel = o.channel;
    if (typeof o.thread === 'string' && /^\d{1,12}\.\d{1,8}$/.test(o.thread)) m.thread = o.thread;
    if (typeof o.of === 'number' && Number.isInteger(o.of) && o.of > 0) m.of = o.of;
    if (o.pick === true) m.pick = true;
    return m;
  } catch {
    return { legs: 2 };
  }
}

const plainText = (text: string) => ({ type: 'plain_text' as const, text, emoji: false });
const md = (text: string) => ({ type: 'mrkdwn' as const, text });

function input(field: FieldId | 'post_to', label: string, element: InputBlockElement, opts: { optional?: boolean; hint?: string } = {}): KnownBlock {
  return {
    type: 'input',
    block_id: field,
    label: plainText(label),
    element,
    optional: opts.optional ?? true,
    ...(opts.hint ? { hint: plainText(opts.hint) } : {}),
  };
}

function numberInput(value: string | undefined, opts: { decimal?: boolean; placeholder?: string } = {}): InputBlockElement {
  return {
    type: 'number_input',
    action_id: ACTION_ID,
    is_decimal_allowed: opts.decimal ?? true,
    ...(value !== undefined && value.trim() !== '' ? { initial_value: value.trim() } : {}),
    ...(opts.placeholder ? { placeholder: plainText(opts.placeholder) } : {}),
  };
}

/** A short text input (a level with an optional `%`: a number input cannot hold the sign). */
function textInput(value: string | undefined, placeholder: string): InputBlockElement {
  return {
    type: 'plain_text_input',
    action_id: ACTION_ID,
    max_length: 20,
    ...(value !== undefined && value.trim() !== '' ? { initial_value: value.trim() } : {}),
    placeholder: plainText(placeholder),
  };
}

function datePicker(value: string | undefined, placeholder: string): InputBlockElement {
  return {
    type: 'datepicker',
    action_id: ACTION_ID,
    ...(value && /^\d{4}-\d{2}-\d{2}$/.test(value) ? { initial_date: value } : {}),
    placeholder: plainText(placeholder),
  };
}

function option(text: string, value: string) {
  return { text: plainText(text), value };
}

const TYPE_OPTIONS = [option('call', 'call'), option('put', 'put'), option('shares', 'shares')];
const STYLE_OPTIONS = [option('european (exercise at expiry)', 'european'), option('american (exercise any day)', 'american')];

function legBlocks(i: number, l: LegValues): KnownBlock[] {
  const type = l.type ?? 'call';
  return [
    { type: 'section', text: md(`*Leg ${i + 1}*`) },
    input(legField(i, 'qty'), 'Quantity', numberInput(l.qty, { decimal: false, placeholder: '2 buys, -2 sells' }), {
      optional: i > 0,
      hint: 'contracts for calls and puts, shares for shares',
    }),
    input(legField(i, 'type'), 'Type', {
      type: 'static_select',
      action_id: ACTION_ID,
      options: TYPE_OPTIONS,
      initial_option: TYPE_OPTIONS.find((o) => o.value === type)!,
    }),
    input(legField(i, 'strike'), 'Strike', numberInput(l.strike, { placeholder: '105' })),
    input(legField(i, 'expiry'), 'Expiry', datePicker(l.expiry, 'the option’s expiry date')),
    input(legField(i, 'entry'), 'Entry price per share', numberInput(l.entry, { placeholder: 'blank: entered at fair value' })),
    input(legField(i, 'iv'), 'This leg’s iv (%)', numberInput(l.iv, { placeholder: 'blank: the market iv below' })),
  ];
}

export interface FormOptions {
  meta: FormMeta;
  values?: FormValues;
  /** symbols of the channel's marks */
  symbols?: readonly string[];
  /** a line above the fields (e.g. what a pre-filled form could not carry over) */
  note?: string;
}

/** The fields the form with this many legs shows (for mapping errors onto fields that exist). */
export function fieldsShown(legs: number, withSymbol: boolean): Set<FieldId> {
  const out = new Set<FieldId>(['spot', 'rate', 'yield', 'iv', 'asof', 'drift', 'drift_se', 'vol', 'horizon', 'style', 'mult', 'jump_rate', 'jump_mean', 'jump_sd', 'target', 'stop']);
  if (withSymbol) out.add('symbol');
  for (let i = 0; i < legs; i++) for (const f of LEG_FIELDS) out.add(legField(i, f));
  return out;
}

/** The check form as a modal view (views.open / views.update). */
export function checkFormView(o: FormOptions): ModalView {
  const v: FormValues = o.values ?? { legs: [] };
  const legs = Math.min(FORM_LEGS_MAX, Math.max(1, o.meta.legs, v.legs.length));
  const symbols = [...new Set([...(o.symbols ?? []), ...(v.symbol ? [v.symbol.toUpperCase()] : [])])].slice(0, SYMBOL_OPTIONS_MAX);
  const blocks: KnownBlock[] = [
    {
      type: 'context',
      elements: [
        md(
          'Kolmo writes these fields as a request and checks it; the answer quotes the request, so you can type it next time. ' +
            'Percentages are written as numbers (28 means 28%). Blank fields take the usual defaults.',
        ),
      ],
    },
  ];
  if (o.note) blocks.push({ type: 'context', elements: [md(o.note)] });
  if (o.meta.pick) {
    blocks.push(
      input('post_to', 'Post it to', {
        type: 'conversations_select',
        action_id: ACTION_ID,
        filter: { include: ['public', 'private'], exclude_bot_users: true },
        ...(o.meta.channel ? { initial_conversation: o.meta.channel } : {}),
        placeholder: plainText('blank: only you see it, in your messages with Kolmo'),
      }),
    );
  }
  if (symbols.length > 0) {
    const opts = symbols.map((s) => option(s, s));
    const initial = v.symbol ? opts.find((x) => x.value === v.symbol!.toUpperCase()) : undefined;
    blocks.push(
      input('symbol', 'Symbol (market terms from this channel’s mark)', {
        type: 'static_select',
        action_id: ACTION_ID,
        options: opts,
        ...(initial ? { initial_option: initial } : {}),
        placeholder: plainText('none: give spot below'),
      }),
    );
  }
  for (let i = 0; i < legs; i++) blocks.push(...legBlocks(i, v.legs[i] ?? {}));
  const buttons: types.Button[] = [];
  if (legs < FORM_LEGS_MAX) buttons.push({ type: 'button', action_id: ADD_LEG, text: plainText('Add a leg'), value: String(legs + 1) });
  if (legs > 1) buttons.push({ type: 'button', action_id: REMOVE_LEG, text: plainText('Remove the last leg'), value: String(legs - 1) });
  if (buttons.length) blocks.push({ type: 'actions', block_id: 'legs', elements: buttons });
  blocks.push(
    { type: 'divider' },
    { type: 'section', text: md('*Market*') },
    input('spot', 'Spot', numberInput(v.spot, { placeholder: symbols.length ? 'blank: the mark’s spot' : '100' }), { optional: true }),
    input('rate', 'Rate (%)', numberInput(v.rate, { placeholder: '4.5' })),
    input('yield', 'Yield (%)', numberInput(v.yield, { placeholder: '1' })),
    input('iv', 'iv (%) for legs without their own', numberInput(v.iv, { placeholder: '28' })),
    input('asof', 'As of', datePicker(v.asof, 'blank: today')),
    { type: 'divider' },
    { type: 'section', text: md('*View* — your assumption about the stock') },
    input('drift', 'Drift (% a year, expected total return)', numberInput(v.drift, { placeholder: 'blank: the rate' })),
    input('drift_se', 'Uncertainty of the drift (± %, one standard error)', numberInput(v.driftSe, { placeholder: 'blank: drift taken as known' })),
    input('vol', 'Vol (% a year)', numberInput(v.vol, { placeholder: 'blank: the iv' })),
    input('horizon', 'Horizon (the date outcomes are measured)', datePicker(v.horizon, 'blank: the earliest expiry')),
    input('style', 'Exercise', {
      type: 'static_select',
      action_id: ACTION_ID,
      options: STYLE_OPTIONS,
      initial_option: STYLE_OPTIONS.find((x) => x.value === (v.style ?? 'european'))!,
    }),
    input('mult', 'Contract multiplier', numberInput(v.mult, { decimal: false, placeholder: 'blank: 100 (or your default)' })),
    { type: 'section', text: md('*Jumps* (optional, Merton): all three or none') },
    input('jump_rate', 'Jumps a year', numberInput(v.jumpRate, { placeholder: '0.5' })),
    input('jump_mean', 'Mean jump (%)', numberInput(v.jumpMean, { placeholder: '-8' })),
    input('jump_sd', 'Spread of the jump (%)', numberInput(v.jumpSd, { placeholder: '12' })),
    { type: 'section', text: md('*Target and stop* (optional): P&L of the whole position in money, or with % of its cost') },
    input('target', 'Target', textInput(v.target, '+400 or 50%'), { hint: 'close at this profit' }),
    input('stop', 'Stop', textInput(v.stop, '-300 or 100%'), { hint: 'close at this loss' }),
  );
  return {
    type: 'modal',
    callback_id: FORM_CALLBACK,
    title: plainText(o.meta.of ? `Edit check #${o.meta.of}`.slice(0, 24) : 'Check a position'),
    submit: plainText('Check'),
    close: plainText('Cancel'),
    private_metadata: encodeMeta({ ...o.meta, legs }),
    blocks,
  };
}

/** One input's state as the platform sends it in view.state.values[block_id][action_id]. */
export interface InputState {
  type?: string;
  value?: string | null;
  selected_date?: string | null;
  selected_option?: { value?: string } | null;
  selected_conversation?: string | null;
}

export type StateValues = Record<string, Record<string, InputState>>;

function read(state: StateValues, field: string): string | undefined {
  const s = state[field]?.[ACTION_ID];
  if (!s) return undefined;
  const raw = s.value ?? s.selected_date ?? s.selected_option?.value ?? s.selected_conversation ?? undefined;
  if (typeof raw !== 'string') return undefined;
  // an input is never trusted beyond its own field: no line breaks, nothing long
  const t = raw.replace(/\s+/g, ' ').trim().slice(0, 100);
  return t === '' ? undefined : t;
}

/** The submitted state → form values (only fields the form has; unknown values dropped). */
export function readForm(state: StateValues, legs: number): { values: FormValues; postTo?: string } {
  const v: FormValues = { legs: [] };
  for (let i = 0; i < Math.min(legs, FORM_LEGS_MAX); i++) {
    const l: LegValues = {};
    const type = read(state, legField(i, 'type'));
    if (type === 'call' || type === 'put' || type === 'shares') l.type = type as LegType;
    for (const f of ['qty', 'strike', 'expiry', 'entry', 'iv'] as const) {
      const x = read(state, legField(i, f));
      if (x !== undefined) l[f] = x;
    }
    v.legs.push(l);
  }
  const sym = read(state, 'symbol');
  if (sym && /^[A-Za-z][A-Za-z0-9.-]{0,19}$/.test(sym)) v.symbol = sym.toUpperCase();
  const simple: Array<[keyof FormValues, string]> = [
    ['spot', 'spot'],
    ['rate', 'rate'],
    ['yield', 'yield'],
    ['iv', 'iv'],
    ['asof', 'asof'],
    ['drift', 'drift'],
    ['driftSe', 'drift_se'],
    ['vol', 'vol'],
    ['horizon', 'horizon'],
    ['mult', 'mult'],
    ['jumpRate', 'jump_rate'],
    ['jumpMean', 'jump_mean'],
    ['jumpSd', 'jump_sd'],
    ['target', 'target'],
    ['stop', 'stop'],
  ];
  for (const [k, f] of simple) {
    const x = read(state, f);
    if (x !== undefined) (v as unknown as Record<string, string>)[k] = x;
  }
  if (read(state, 'style') === 'american') v.style = 'american';
  const postTo = read(state, 'post_to');
  return { values: v, ...(postTo && /^[A-Z0-9]{2,32}$/.test(postTo) ? { postTo } : {}) };
}
