/**
 * A person's own defaults (rate, yield, contract multiplier, default horizon), edited in a modal
 * from my desk and applied to that person's requests.
 *
 * Pure: the modal, reading it back with errors per field, and applying the defaults to a request's
 * text. A default applies only where the request (and the mark it names) leaves the term out:
 * what is written always wins, then the channel's mark, then the person's default, then Kolmo's.
 * The horizon default is a span from the check's day (e.g. 30d) and applies only when it falls on
 * or before the earliest option expiry (otherwise the usual default, the earliest expiry, stays).
 */
import type { types } from '@slack/bolt';
import { LIMITS, SPAN_MAX, parse, personalDefaultsOf, resolveSpec, type CheckRequest, type PersonalDefault, type Request } from '../../verbs/ask.js';
import { pctText } from '../actions/variations.js';

export interface PersonalDefaults {
  /** decimals, like the core (0.045) */
  rate?: number;
  yield?: number;
  mult?: number;
  /** a span from the check's day: 30d, 6w, 3m, 1y */
  horizon?: string;
}

export const DEFAULTS_CALLBACK = 'kolmo_defaults';

const plainText = (text: string) => ({ type: 'plain_text' as const, text, emoji: false });

/** The defaults in words ("rate 4.5%, mult 10"), or "none". */
export function defaultsWords(d: PersonalDefaults): string {
  const w: string[] = [];
  if (d.rate !== undefined) w.push(`rate ${pctText(d.rate)}`);
  if (d.yield !== undefined) w.push(`yield ${pctText(d.yield)}`);
  if (d.mult !== undefined) w.push(`mult ${d.mult}`);
  if (d.horizon !== undefined) w.push(`horizon ${d.horizon}`);
  return w.length ? w.join(', ') : 'none';
}

function numberInput(field: string, label: string, value: string | undefined, decimal: boolean, placeholder: string): types.KnownBlock {
  return {
    type: 'input',
    block_id: field,
    optional: true,
    label: plainText(label),
    element: {
      type: 'number_input',
      action_id: 'v',
      is_decimal_allowed: decimal,
      ...(value !== undefined ? { initial_value: value } : {}),
      placeholder: plainText(placeholder),
    },
  };
}

export function defaultsView(d: PersonalDefaults): types.ModalView {
  const pct = (x: number | undefined) => (x === undefined ? undefined : String(Number((x * 100).toFixed(4))));
  return {
    type: 'modal',
    callback_id: DEFAULTS_CALLBACK,
    title: plainText('My defaults'),
    submit: plainText('Save'),
    close: plainText('Cancel'),
    blocks: [
      {
        type: 'context',
        elements: [
          {
            type: 'mrkdwn',
            text: 'Used in your own requests where they leave a term out (a term you write, or a mark’s, always wins); each answer says when one was used. Clear a field to drop that default.',
          },
        ],
      },
      numberInput('rate', 'Rate (%)', pct(d.rate), true, '4.5'),
      numberInput('yield', 'Yield (%)', pct(d.yield), true, '1'),
      numberInput('mult', 'Contract multiplier', d.mult === undefined ? undefined : String(d.mult), false, '100'),
      {
        type: 'input',
        block_id: 'horizon',
        optional: true,
        label: plainText('Default horizon (from the check’s day)'),
        hint: plainText('a span: 30d, 6w, 3m or 1y; used when it is on or before the earliest expiry'),
        element: {
          type: 'plain_text_input',
          action_id: 'v',
          max_length: 6,
          ...(d.horizon ? { initial_value: d.horizon } : {}),
          placeholder: plainText('30d'),
        },
      },
    ],
  };
}

type State = Record<string, Record<string, { value?: string | null }>>;

/** The modal's state → defaults, or errors by field. */
export function readDefaults(state: State): { ok: true; defaults: PersonalDefaults } | { ok: false; errors: Record<string, string> } {
  const get = (f: string) => {
    const v = state[f]?.v?.value;
    return typeof v === 'string' && v.trim() !== '' ? v.trim() : undefined;
  };
  const errors: Record<string, string> = {};
  const d: PersonalDefaults = {};
  const pctField = (f: 'rate' | 'yield') => {
    const s = get(f);
    if (s === undefined) return;
    const n = Number(s);
    if (!/^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/.test(s) || !Number.isFinite(n)) errors[f] = 'A percentage as a number, e.g. 4.5.';
    else if (n / 100 < LIMITS.rateMin || n / 100 > LIMITS.rateMax) errors[f] = `Between ${LIMITS.rateMin * 100} and ${LIMITS.rateMax * 100}.`;
    else d[f] = Number((n / 100).toPrecision(12));
  };
  pctField('rate');
  pctField('yield');
  const m = get('mult');
  if (m !== undefined) {
    const n = Number(m);
    if (!/^\d+$/.test(m) || n < LIMITS.multMin || n > LIMITS.multMax) errors.mult = `A whole number from ${LIMITS.multMin} to ${LIMITS.multMax.toLocaleString('en-US')}.`;
    else d.mult = n;
  }
  const h = get('horizon');
  if (h !== undefined) {
    const s = /^(\d+)([dwmy])$/i.exec(h);
    if (!s) errors.horizon = 'A span: 30d, 6w, 3m or 1y.';
    else {
      const unit = s[2].toLowerCase() as 'd' | 'w' | 'm' | 'y';
      const n = Number(s[1]);
      if (n < 1 || n > SPAN_MAX[unit]) errors.horizon = `From 1${unit} to ${SPAN_MAX[unit]}${unit}.`;
      else d.horizon = `${n}${unit}`;
    }
  }
  return Object.keys(errors).length ? { ok: false, errors } : { ok: true, defaults: d };
}

export interface Applied {
  /** the request with the defaults written in (what actually runs, and what the answer quotes) */
  text: string;
  /** the defaults used, in words ("your default rate 4.5%") */
  used: string[];
}

/**
 * Where the request leaves a term out, writes the person's default. `markHas` tells which terms
 * the request's mark (`on SYMBOL`) supplies; those are left to the mark. A request takes the
 * defaults its verb declares (`personalDefaults` in src/verbs: checks and comparisons, in their
 * first part, which the others inherit, all four; iv and touch rate and yield); other requests
 * are returned unchanged.
 */
export function applyDefaults(
  text: string,
  d: PersonalDefaults,
  today: string,
  markHas: (symbol: string) => ReadonlySet<string> = () => new Set(),
): Applied {
  const none = { text, used: [] };
  if (d.rate === undefined && d.yield === undefined && d.mult === undefined && d.horizon === undefined) return none;
  const p = parse(text);
  if (!p.ok) return none;
  const r: Request = p.request;
  // what the verb declares it takes (its `personalDefaults`); a comparison takes them in its first
  // part, which the others inherit
  const allowed = new Set<string>(personalDefaultsOf(r.verb));
  const first = r.verb === 'compare' ? r.checks?.[0] : r;
  if (allowed.size === 0 || !first || !('terms' in first)) return none;
  const terms: Pick<CheckRequest['terms'], 'on' | 'asof' | 'exp' | PersonalDefault> = first.terms;
  const fromMark = terms.on ? markHas(terms.on) : new Set<string>();
  const add: string[] = [];
  const used: string[] = [];
  const want = (name: PersonalDefault, value: string) => {
    if (!allowed.has(name) || terms[name] !== undefined || fromMark.has(name)) return;
    add.push(`${name} ${value}`);
    used.push(`your default ${name} ${value}`);
  };
  if (d.rate !== undefined) want('rate', pctText(d.rate));
  if (d.yield !== undefined) want('yield', pctText(d.yield));
  if (d.mult !== undefined) want('mult', String(d.mult));
  if (d.horizon !== undefined && allowed.has('horizon')) {
    const asof = terms.asof && terms.asof !== 'today' ? terms.asof : today;
    const expiries = ('legs' in first ? first.legs : [])
      .filter((l) => l.kind !== 'shares')
      .map((l) => l.expiry ?? terms.exp)
      .filter((e): e is NonNullable<typeof e> => e !== undefined)
      .map((e) => resolveSpec(e, asof));
    const m = /^(\d+)([dwmy])$/.exec(d.horizon);
    const h = m ? resolveSpec({ span: Number(m[1]), unit: m[2] as 'd' | 'w' | 'm' | 'y' }, asof) : undefined;
    const earliest = expiries.sort()[0];
    if (h && (earliest === undefined || h <= earliest)) want('horizon', d.horizon);
  }
  if (add.length === 0) return none;
  let out: string;
  if (r.verb === 'compare') {
    const first = r.parts[0];
    const end = first.at + first.text.length;
    out = `${text.slice(0, end)} ${add.join(' ')}${text.slice(end)}`;
  } else out = `${text.trim()} ${add.join(' ')}`;
  // a default must never turn a request that reads into one that does not (e.g. a horizon after
  // an expiry): each is tried, and one that spoils the request is left out
  const again = parse(out);
  if (again.ok) return { text: out, used };
  if (add.length > 1) {
    const kept: string[] = [];
    const keptUsed: string[] = [];
    add.forEach((piece, i) => {
      const trial = r.verb === 'compare' ? null : `${text.trim()} ${[...kept, piece].join(' ')}`;
      if (trial && parse(trial).ok) {
        kept.push(piece);
        keptUsed.push(used[i]);
      }
    });
    if (kept.length) return { text: `${text.trim()} ${kept.join(' ')}`, used: keptUsed };
  }
  return none;
}
