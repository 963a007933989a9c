/**
 * From a typed request to the core's input: defaults filled, dates turned into years, market
 * terms taken from a mark where the request is silent, and the checks that need more than one
 * term (horizon against expiries, expiry against asof, strike against spot) made here, with the
 * caret on the offending term (docs/design.md §2–3).
 *
 * Decisions (recorded in DEVELOPERS.md):
 * - asof: default today; `asof today` is the same.
 * - rate and yield: default 0 (continuously compounded), each with a note; a mark supplies them
 *   first when the request says `on SYMBOL`.
 * - spot: required (from the request or the mark).
 * - expiry: the leg's own, else `exp`; required for every option leg. Spans count from asof:
 *   `Nd` days, `Nw` weeks, `Nm` calendar months (day clamped to the month's end), `Ny` years.
 *   An expiry must be after asof and at most LIMITS.expiryYears years after it.
 * - iv: the leg's own, else the position's `iv`, else the mark's iv; required for every option leg.
 * - vol (view): `vol`, else the position's `iv` (or the mark's), else the iv of the option leg
 *   nearest the money (smallest |ln K/S|, first such leg on ties); a note says which.
 * - drift: default the rate, with the note that the outcome is then the risk-neutral one.
 * - horizon: default the earliest option expiry; must be after asof and on or before the
 *   earliest option expiry. A shares-only check has no expiry to default to, so it must name a
 *   horizon.
 * - mult 100, style european by default; strike/spot within [1/100, 100].
 * - time = calendar days / 365.
 */

export type { MarkTerms, ResolveContext } from './resolve/context.js';
export { resolveCheck, type ResolvedCheck } from './resolve/check.js';
export { resolveIv, resolveTouch, type ResolvedIv, type ResolvedTouch } from './resolve/iv-touch.js';
