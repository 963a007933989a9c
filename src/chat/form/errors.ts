/**
 * A rejection of a composed request → an error on the form field that wrote the bad token, for
 * `response_action: "errors"` (the form stays open with everything the person entered).
 *
 * The caret position (`Rejection.at`) is looked up in the composer's spans. A position past every
 * span (a missing term: "spot is needed", "the horizon is after the expiry of leg 2") is placed by
 * the words of the message; what names no field goes on the first leg's quantity, with the whole
 * message, so nothing is lost.
 */
import type { Rejection } from '../../reply.js';
import { legField, type FieldId, type Span } from './compose.js';

/** The platform shows a field error in a line or two; longer text is cut at a word. */
export const FIELD_ERROR_MAX = 150;

/**
 * The reason of a formatted rejection (src/request/parse.ts formatError: "could not read", the
 * quoted request, the caret line, the reason, "Example: …"): the lines between caret and example.
 */
export function reasonOf(message: string): string {
  const lines = message.split('\n');
  const caret = lines.findIndex((l) => /^\s*\^+\s*$/.test(l));
  let reason: string[];
  if (caret >= 0) {
    const stop = lines.findIndex((l, i) => i > caret && l.startsWith('Example:'));
    reason = lines.slice(caret + 1, stop > caret ? stop : undefined);
  } else {
    reason = lines.filter((l) => !l.startsWith('Example:'));
  }
  const text = reason.join(' ').replace(/\s+/g, ' ').trim() || message.replace(/\s+/g, ' ').trim();
  return shorten(text, FIELD_ERROR_MAX);
}

export function shorten(s: string, max: number): string {
  if (s.length <= max) return s;
  const cut = s.lastIndexOf(' ', max - 1);
  return `${s.slice(0, cut > max / 2 ? cut : max - 1)}…`;
}

/** Words of a reason → the field they are about, in order of precedence. */
const WORDS: Array<[RegExp, FieldId]> = [
  [/\btargets? and stops?\b/i, 'target'],
  [/\btarget\b/i, 'target'],
  [/\bstop\b/i, 'stop'],
  [/\bhorizon\b/i, 'horizon'],
  [/\bspot\b/i, 'spot'],
  [/\bjump/i, 'jump_rate'],
  [/\buncertainty\b|±/i, 'drift_se'],
  [/\bdrift\b/i, 'drift'],
  [/\bvol\b/i, 'vol'],
  [/\byield\b/i, 'yield'],
  [/\brate\b/i, 'rate'],
  [/\basof\b/i, 'asof'],
  [/\bmult\b|multiplier/i, 'mult'],
  [/\bmark\b|\bon [A-Z]/, 'symbol'],
];

/**
 * The field a rejection belongs to. `present` lists the fields the form shows (a field that is
 * not on the form cannot carry an error).
 */
export function fieldOf(r: Pick<Rejection, 'at' | 'message'>, spans: readonly Span[], present: ReadonlySet<FieldId>): FieldId {
  const hit = spans.find((s) => r.at >= s.from && r.at < s.to && present.has(s.field));
  if (hit) return hit.field;
  const reason = reasonOf(r.message);
  const leg = /\bleg (\d+)\b/i.exec(reason);
  if (leg) {
    const f = legField(Number(leg[1]) - 1, /expir/i.test(reason) ? 'expiry' : /strike/i.test(reason) ? 'strike' : 'qty');
    if (present.has(f)) return f;
  }
  for (const [re, f] of WORDS) if (re.test(reason) && present.has(f)) return f;
  return legField(0, 'qty');
}

/** The `errors` object of a view_submission response for a rejection. */
export function formErrorsOf(r: Pick<Rejection, 'at' | 'message'>, spans: readonly Span[], present: ReadonlySet<FieldId>): Partial<Record<FieldId, string>> {
  return { [fieldOf(r, spans, present)]: reasonOf(r.message) };
}
