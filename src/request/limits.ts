/**
 * Sane limits for requests. Anything outside them is almost surely a typo, and the numerical core
 * is only promised valid input (docs/design.md §5), so the request layer rejects it with a caret under
 * the token. Recorded in DEVELOPERS.md; change them here only.
 */
export const LIMITS = {
  /** characters in one request (a workspace slash command carries a few thousand at most) */
  textLength: 2000,
  /** legs in one check */
  legs: 50,
  /** total variance of ln S over a leg's life or the horizon (diffusion + jumps): s.d. ≤ 10 */
  maxLogVariance: 100,
  /** parts of one comparison (the comparison chart draws six) */
  compareParts: 6,
  /** |qty| of an option leg, in contracts */
  qtyContracts: 100_000,
  /** |qty| of a shares leg, in shares */
  qtyShares: 100_000_000,
  /** largest spot, strike, entry, touch level or option price (money per share) */
  price: 10_000_000,
  /** smallest and largest iv / vol (decimals per √year): 1% … 500% */
  volMin: 0.01,
  volMax: 5,
  /** rate and yield (continuously compounded decimals): −10% … 100% */
  rateMin: -0.1,
  rateMax: 1,
  /** drift (expected total return per year): −200% … 200% */
  driftMin: -2,
  driftMax: 2,
  /** the drift's uncertainty (`drift 9% ± 6%`): 0% … 200% */
  driftSeMax: 2,
  /** contract multiplier, a whole number */
  multMin: 1,
  multMax: 1_000_000,
  /** Merton jumps: intensity per year (0, 100]; log-jump mean −100% … 100%; s.d. 0 … 200% */
  jumpIntensityMax: 100,
  jumpMeanMin: -1,
  jumpMeanMax: 1,
  jumpSdMax: 2,
  /** a span (`30d`, `6w`, `3m`, `1y`) may reach this many years */
  spanYears: 100,
  /** `log N`: default and largest N */
  logDefault: 10,
  logMax: 100,
  /** `again N`: largest N */
  againMax: 1_000_000_000,
  /** longest symbol */
  symbolLength: 15,
  /** (resolver) an expiry or horizon at most this many years after asof */
  expiryYears: 30,
  /** (resolver) strike / spot must lie in [1/strikeToSpot, strikeToSpot] */
  strikeToSpot: 100,
  /** a target or stop in money: |level| at most this (Σ |qty| × mult × price is below 1e17) */
  exitMoneyMax: 1e15,
  /** a target or stop in % of the position's |cost|: at most 10,000% */
  exitPctMax: 100,
} as const;

/** Largest span per unit (from LIMITS.spanYears). */
export const SPAN_MAX: Record<'d' | 'w' | 'm' | 'y', number> = {
  d: LIMITS.spanYears * 366,
  w: LIMITS.spanYears * 53,
  m: LIMITS.spanYears * 12,
  y: LIMITS.spanYears,
};
