/**
 * The quick part of answering a composed request, run while the form is still open: reading it
 * (the grammar), resolving it against the channel's mark (dates, defaults, the horizon against the
 * expiries) and its cost against the compute budget. All of it is fast and pure; a refusal here
 * goes back onto the form's field (`response_action: "errors"`) instead of a message after the
 * form has closed. The engine itself runs after the form closes, through the usual path.
 */
import { COMPUTE_BUDGET_DEFAULT, formatError, overBudget, parse, resolveCheck, type MarkTerms } from '../../verbs/ask.js';
import type { Rejection } from '../../reply.js';

export interface QuickContext {
  now: Date;
  /** the mark of a symbol in the conversation the check goes to */
  mark?: (symbol: string) => MarkTerms | undefined;
  budget?: number;
}

/** A refusal the form can show on a field, or null when the request may go to the engine. */
export function quickCheck(text: string, ctx: QuickContext): Pick<Rejection, 'at' | 'message'> | null {
  const p = parse(text);
  if (!p.ok) return { at: p.error.at, message: formatError(text, p.error) };
  if (p.request.verb !== 'check') return { at: 0, message: 'the check form builds checks only' };
  const req = p.request;
  const today = ctx.now.toISOString().slice(0, 10);
  let mark: MarkTerms | undefined;
  if (req.terms.on) {
    mark = ctx.mark?.(req.terms.on);
    if (!mark) {
      const at = req.termsAt.on ?? 0;
      return { at, message: formatError(text, { at, length: 2, message: `no mark for ${req.terms.on} in this conversation: pick another symbol, or none and give spot`, example: text }) };
    }
  }
  const r = resolveCheck(req, { today, now: ctx.now.toISOString(), text, ...(mark ? { mark } : {}) });
  if (!r.ok) return { at: r.error.at, message: formatError(text, r.error) };
  const cost = overBudget(text, ctx.budget ?? COMPUTE_BUDGET_DEFAULT, { now: ctx.now });
  if (cost) return cost;
  return null;
}
