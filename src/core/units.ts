/** Units shared by every layer (docs/design.md §3): time is calendar days / 365. */

/** Milliseconds in a calendar day. */
export const DAY_MS = 86_400_000;
/** Calendar days in a year of the time convention (and the divisor of theta per day). */
export const DAYS_PER_YEAR = 365;
