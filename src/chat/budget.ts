/**
 * The compute budget of one request, checked before the engine runs.
 *
 * The request layer bounds each input on its own (LIMITS: 2000 characters, 50 legs, 8 comparison
 * parts, finite sane numbers), but their product can still be large once early exercise and
 * jumps are in play: every option leg of every part is valued twice (the view and its
 * risk-neutral twin) and, before its expiry, revalued across the horizon's spot range. The cost
 * is estimated in units of about one European option leg at the horizon; early exercise (a
 * Crank-Nicolson solve per leg and a value curve) costs about EARLY_EXERCISE_FACTOR units and
 * jumps (a Poisson mixture of Black-Scholes-Merton values) about JUMPS_FACTOR. A request above the
 * budget gets a clear rejection before any work is done; the per-request deadline of the worker
 * pool (KOLMO_TASK_TIMEOUT) stays as the hard stop behind it.
 *
 * Measured on this project's 2-core machine (unloaded): a European leg ≈ 1–3 ms within a 50-leg
 * check; American Greeks ≈ 20 ms and a value curve ≈ 10 ms per leg.
 */
import { formatError, parse } from '../request/parse.js';
import type { CheckRequest } from '../request/types.js';
import type { Rejection } from '../reply.js';

export const COMPUTE_BUDGET_DEFAULT = 4000;
export const EARLY_EXERCISE_FACTOR = 40;
export const JUMPS_FACTOR = 4;

/** Estimated units of one check: option legs × 2 (view and risk-neutral) × model factors. */
export function checkCost(c: CheckRequest): number {
  const options = c.legs.filter((l) => l.kind !== 'shares').length;
  const american = c.terms.style === 'american' ? EARLY_EXERCISE_FACTOR : 1;
  const jumps = c.terms.jumps && c.terms.jumps.intensity > 0 ? JUMPS_FACTOR : 1;
  return Math.max(1, options * 2 * american * jumps);
}

/**
 * Units the request would need, where they can be known from its text alone (a check or a
 * comparison); 0 for verbs whose work is small or bounded elsewhere (help, log, mark, iv, touch,
 * `again`, which repeats a check that was within the budget when it was asked) and for text that
 * does not parse (the engine rejects it with its own message).
 */
export function requestCost(text: string): { units: number; at: number; what: string } {
  const p = parse(text);
  if (!p.ok) return { units: 0, at: 0, what: '' };
  const r = p.request;
  if (r.verb === 'check') {
    const at = r.termsAt.style ?? r.termsAt.jumps ?? 0;
    return { units: checkCost(r), at, what: 'check' };
  }
  if (r.verb === 'compare' && r.checks) {
    const units = r.checks.reduce((s, c) => s + checkCost(c), 0);
    return { units, at: 0, what: 'comparison' };
  }
  return { units: 0, at: 0, what: '' };
}

/** A rejection when the request is over the budget, else null. */
export function overBudget(text: string, budget: number): Rejection | null {
  const c = requestCost(text);
  if (c.units <= budget) return null;
  const message = formatError(text, {
    message:
      `this ${c.what} needs about ${c.units.toLocaleString('en-US')} units of computing and Kolmo allows ${budget.toLocaleString('en-US')} per request ` +
      `(a unit is about one European option leg; early exercise costs about ${EARLY_EXERCISE_FACTOR}, jumps about ${JUMPS_FACTOR}): ` +
      'split it into smaller checks, compare fewer parts, or leave out `style american` or `jumps`',
    at: c.at,
    length: c.at > 0 ? 5 : Math.max(1, text.trimStart().split(/\s+/, 1)[0]?.length ?? 1),
    example: 'check +1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% drift 8% style american',
  });
  return { kind: 'rejected', message, at: c.at };
}
