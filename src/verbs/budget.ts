/**
 * The compute budget of one request, checked before the engine runs.
 *
 * The request layer bounds each input on its own (LIMITS: 2000 characters, 50 legs, 6 comparison
 * parts, finite sane numbers), but their product can still be large: every option leg of every
 * part is valued under the view and its risk-neutral twin and, before its expiry, revalued across
 * the horizon's spot distribution; with Merton jumps each value is a Poisson series whose length
 * grows with intensity × time, and a horizon before expiry multiplies the two series. The cost is
 * estimated in units of about one millisecond of one core of this project's 2-core machine:
 *
 *   European option leg                      1
 *   early exercise (Crank-Nicolson)          EARLY_EXERCISE_UNITS per leg
 *   Merton jumps (rate λ, log-jump s.d. δ), leg of T years
 *                                            JUMP_BASE + JUMP_PER_TERM·λT
 *     and a horizon before its expiry        + (1 + JUMP_SD_WEIGHT·δ²)·(JUMP_HORIZON_BASE + JUMP_HORIZON_PER_TERM·λT)
 *   a target or a stop (exit chances)        EXITS_BASE + EXITS_PER_LEG per leg (finite differences)
 *     with a drift uncertainty               + EXITS_DRIFT_UNITS
 *     with jumps (Monte Carlo)               EXITS_JUMP_BASE + EXITS_JUMP_PER_LEG·(1 + 0.2·λT·(1 + JUMP_SD_WEIGHT·δ²)) per leg
 *
 * fitted to timings of the seam (./ask.ts) on 50-leg checks (European 45–66 ms; early exercise 0.5–0.7 s;
 * jumps at 5/yr 1.4 s, at 50/yr with a horizon 4.1 s) and on one leg with jumps of s.d. 200%:
 * 20/yr over 4 years 2.0 s, 100/yr over 1 year 3.9 s, 100/yr over 30 years 0.25 s at expiry and
 * 51 s with the horizon 13 years out — the case this budget exists for. Exit chances, timed on
 * this machine while other work ran: 4 legs 40–70 ms, 50 legs 150 ms by finite differences; with
 * jumps 0.14 s (1 leg, 0.5/yr), 0.4 s (4 legs), 1.3 s (4 legs, 50/yr over a year), 2.6 s (4 legs,
 * 20/yr over 4 years, s.d. 50%). The estimate errs high.
 * A request above the budget gets a clear rejection before any work is done; the worker pool's
 * per-request deadline (KOLMO_TASK_TIMEOUT) stays as the hard stop behind it.
 */
import { hasJumps } from '../core/jumps.js';
import { DAY_MS } from '../core/units.js';
import { formatError } from '../request/parse.js';
import type { CheckRequest, ExpirySpec } from '../request/types.js';
import type { Rejection } from '../reply.js';
import type { Cost } from './verb.js';

export { COMPUTE_BUDGET_DEFAULT } from '../config.js';
export const EARLY_EXERCISE_UNITS = 14;
export const JUMP_BASE = 30;
export const JUMP_PER_TERM = 0.1;
export const JUMP_HORIZON_BASE = 30;
export const JUMP_HORIZON_PER_TERM = 0.2;
export const JUMP_SD_WEIGHT = 20;
/** a check with a drift uncertainty runs the engine twice: measured 1.0× (European) to 1.6× (American, two legs) the time; 2 bounds both */
export const DRIFT_UNCERTAINTY_FACTOR = 2;
export const EXITS_BASE = 40;
export const EXITS_PER_LEG = 3;
export const EXITS_JUMP_BASE = 400;
export const EXITS_JUMP_PER_LEG = 10;
/** a drift uncertainty: the view's exit figures are solved at 24 drifts (src/core/models.ts) */
export const EXITS_DRIFT_UNITS = 150;


/** Years from `asof` (ISO day) to an expiry as written; NaN when it cannot be read. */
function yearsTo(spec: ExpirySpec | undefined, asofMs: number): number {
  if (!spec) return NaN;
  if ('date' in spec) return (Date.parse(`${spec.date}T00:00:00Z`) - asofMs) / DAY_MS / 365;
  if ('minutes' in spec) return spec.minutes / (365 * 24 * 60);
  const per = { d: 1 / 365, w: 7 / 365, m: 1 / 12, y: 1 }[spec.unit];
  return spec.span * per;
}

/** Estimated units of one check (see the table above). */
export function checkCost(c: CheckRequest, now: Date = new Date()): number {
  const asofIso = c.terms.asof && c.terms.asof !== 'today' ? c.terms.asof : now.toISOString().slice(0, 10);
  const asofMs = Date.parse(`${asofIso}T00:00:00Z`);
  const options = c.legs.filter((l) => l.kind !== 'shares');
  const years = options.map((l) => {
    const y = yearsTo(l.expiry ?? c.terms.exp, asofMs);
    return Number.isFinite(y) && y > 0 ? Math.min(y, 100) : 1;
  });
  const earliest = years.length ? Math.min(...years) : 0;
  const h0 = yearsTo(c.terms.horizon, asofMs);
  const horizon = Number.isFinite(h0) && h0 > 0 ? Math.min(h0, earliest) : earliest;
  const lambda = hasJumps(c.terms.jumps) ? c.terms.jumps.intensity : 0;
  const sd = c.terms.jumps ? Math.abs(c.terms.jumps.sd) : 0;
  const american = c.terms.style === 'american';
  let units = 0;
  for (const T of years) {
    let u = american ? EARLY_EXERCISE_UNITS : 1;
    if (lambda > 0) {
      u += JUMP_BASE + JUMP_PER_TERM * lambda * T;
      if (horizon < T) u += (1 + JUMP_SD_WEIGHT * sd * sd) * (JUMP_HORIZON_BASE + JUMP_HORIZON_PER_TERM * lambda * T);
    }
    units += u;
  }
  // a drift uncertainty runs the outcome once more with the drift known (for the line that sets
  // the two side by side): the legs are revalued again, so the cost doubles
  if (c.terms.driftSe !== undefined && c.terms.driftSe > 0) units *= DRIFT_UNCERTAINTY_FACTOR;
  if (c.terms.target || c.terms.stop) {
    const n = Math.max(1, c.legs.length);
    if (lambda > 0) {
      const T = years.length ? Math.max(...years) : Math.max(horizon, 0);
      units += EXITS_JUMP_BASE + EXITS_JUMP_PER_LEG * n * (1 + 0.2 * lambda * T * (1 + JUMP_SD_WEIGHT * sd * sd));
    } else {
      units += EXITS_BASE + EXITS_PER_LEG * n;
      if (c.terms.driftSe !== undefined && c.terms.driftSe > 0) units += EXITS_DRIFT_UNITS;
    }
  }
  return Math.max(1, Math.ceil(units));
}

/** A rejection when the cost is over the budget, else null. */
export function budgetRejection(text: string, c: Cost | null, budget: number): Rejection | null {
  if (!c || c.units <= budget) return null;
  const message = formatError(text, {
    message:
      `this ${c.what} needs about ${c.units.toLocaleString('en-US')} units of computing and Kolmo allows ${budget.toLocaleString('en-US')} per request ` +
      `(a unit is about a millisecond: an option leg costs 1, with early exercise ${EARLY_EXERCISE_UNITS}; jumps cost more the higher their rate and the longer the time, ` +
      'most of all with a horizon well before expiry): split it into smaller checks, compare fewer parts, lower the jump rate, or bring the horizon nearer the expiry',
    at: c.at,
    length: c.at > 0 ? 5 : Math.max(1, text.trimStart().split(/\s+/, 1)[0]?.length ?? 1),
    example: 'check +1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% drift 8% jumps 2/yr -8% 12%',
  });
  return { kind: 'rejected', message, at: c.at };
}
