/**
 * Volatility and drift estimated from a price history (a list of closes, with or without dates).
 *
 * With log returns uᵢ = ln(Sᵢ/Sᵢ₋₁), i = 1…m (m = n − 1 for n closes), their sample s.d. s and a
 * span of T years:
 *   σ̂ = s·√(m/T)                    (variance per year of elapsed time)
 *   s.e.(σ̂) ≈ σ̂/√(2m)              (the usual large-sample error, e.g. Hull, Options, Futures, and
 *                                     Other Derivatives, estimating volatility from historical data)
 *   ν̂ = Σuᵢ/T = ln(Sₙ/S₀)/T         (the drift of the log price)
 *   μ̂ = ν̂ + σ̂²/2 + q               (expected total return: the price drift, the lognormal
 *                                     correction, and the yield when one is written)
 *   s.e.(μ̂) = σ̂/√T                 (Var(Σu)/T² = σ²T/T²; depends on the span, not on how often)
 *
 * T is measured in calendar days between the first and last close / 365, as every time in Kolmo,
 * so σ̂ is the vol per calendar year that the rest of the engine expects. The trading-day figure,
 * s·√252 (252 trading days a year, common practice), is computed beside it as a check: for daily
 * closes on trading days the two agree within a few per cent. Closes without dates are taken as
 * consecutive trading days, so T = m/252 and the two figures coincide.
 *
 * Pure: no I/O. `checkCloses` names the first bad close (with a code the request layer turns into
 * a caret); `estimateHistory` expects closes that passed it and never throws.
 */

import { DAY_MS } from './units.js';

/** One close; `date` is an ISO day (YYYY-MM-DD) or absent for every close. */
export interface Close {
  date?: string;
  close: number;
}

export const HISTORY_LIMITS = {
  /** fewer closes than this are refused */
  minCloses: 10,
  /** a longer span is refused (older data says little about today's vol) */
  maxYears: 20,
  /** trading days a year (common practice) */
  tradingDays: 252,
  /** below this span the drift warning is given */
  shortYears: 1,
  /** below this many returns the vol warning is given */
  fewReturns: 60,
  /** a gap between dated closes longer than this many calendar days is reported */
  gapDays: 7,
  /** a single log return larger than this (in absolute value) is reported */
  bigMove: 0.25,
} as const;

export type HistoryProblemCode = 'price' | 'date' | 'mixed' | 'order' | 'repeat' | 'few' | 'span';

export interface HistoryProblem {
  code: HistoryProblemCode;
  /** index of the offending close (for `few`: the number of closes) */
  index: number;
  message: string;
}

export interface HistoryEstimate {
  /** number of closes */
  n: number;
  /** number of log returns (n − 1) */
  returns: number;
  dated: boolean;
  /** first and last dates (null without dates) */
  first: string | null;
  last: string | null;
  /** span in years: calendar days / 365, or returns / 252 without dates */
  years: number;
  /** span in trading years, returns / 252 */
  tradingYears: number;
  /** returns per year of span (252 for undated closes) */
  returnsPerYear: number;
  /** σ̂ per calendar year and its standard error */
  vol: number;
  volSe: number;
  /** the trading-day check: s·√252 */
  volTradingDays: number;
  /** ν̂: drift of the log price per year */
  priceDrift: number;
  /** μ̂ = ν̂ + σ̂²/2 + yield: expected total return per year, and its standard error σ̂/√T */
  drift: number;
  driftSe: number;
  /** μ̂ with the trading-day clock (ν̂ and σ̂ over returns/252 years) */
  driftTradingDays: number;
  /** the yield added to μ̂ (0 when none is written) */
  yield: number;
  /** Σu, Σu², and the sample s.d. of the log returns (per return) */
  sumU: number;
  sumU2: number;
  sdReturn: number;
  /** the log returns, for the chart */
  logReturns: number[];
  warnings: string[];
}

const ISO_DAY = /^(\d{4})-(\d{2})-(\d{2})$/;

/** Day number (days since 1970-01-01) of an ISO day, or null when it is not a real date. */
export function dayNumber(iso: string): number | null {
  const m = ISO_DAY.exec(iso);
  if (!m) return null;
  const y = Number(m[1]);
  const mo = Number(m[2]);
  const d = Number(m[3]);
  const t = Date.UTC(y, mo - 1, d);
  const back = new Date(t);
  if (back.getUTCFullYear() !== y || back.getUTCMonth() !== mo - 1 || back.getUTCDate() !== d) return null;
  return Math.round(t / DAY_MS);
}

/** The first problem with a list of closes, or null when it can be estimated. */
export function checkCloses(closes: readonly Close[]): HistoryProblem | null {
  const L = HISTORY_LIMITS;
  const dated = closes.length > 0 && closes[0].date !== undefined;
  let prevDay: number | null = null;
  for (let i = 0; i < closes.length; i++) {
    const c = closes[i];
    if (typeof c.close !== 'number' || !Number.isFinite(c.close) || !(c.close > 0)) {
      return { code: 'price', index: i, message: `close ${i + 1} is not a positive price` };
    }
    if ((c.date !== undefined) !== dated) {
      return { code: 'mixed', index: i, message: 'either every close carries a date or none does' };
    }
    if (c.date !== undefined) {
      const day = dayNumber(c.date);
      if (day === null) return { code: 'date', index: i, message: `${c.date} is not a date (YYYY-MM-DD)` };
      if (prevDay !== null && day === prevDay) return { code: 'repeat', index: i, message: `${c.date} appears twice` };
      if (prevDay !== null && day < prevDay) return { code: 'order', index: i, message: `${c.date} comes before the close above it: closes go oldest first` };
      prevDay = day;
    }
  }
  if (closes.length < L.minCloses) {
    return { code: 'few', index: closes.length, message: `${closes.length} close${closes.length === 1 ? '' : 's'}: at least ${L.minCloses} are needed` };
  }
  const years = dated
    ? (dayNumber(closes[closes.length - 1].date!)! - dayNumber(closes[0].date!)!) / 365
    : (closes.length - 1) / L.tradingDays;
  if (years > L.maxYears) {
    // name the first close that reaches beyond the limit, counting back from the newest
    let k = 0;
    if (dated) {
      const end = dayNumber(closes[closes.length - 1].date!)!;
      while (k < closes.length && (end - dayNumber(closes[k].date!)!) / 365 > L.maxYears) k++;
      k = Math.max(0, k - 1);
    }
    return { code: 'span', index: k, message: `${years.toFixed(1)} years of closes: at most ${L.maxYears} are taken` };
  }
  return null;
}

function pct(x: number): string {
  return `${(100 * x).toFixed(1)}%`;
}

/**
 * σ̂, μ̂ and their standard errors from closes that passed `checkCloses`, oldest first.
 * `yieldRate` (continuous, decimal) is added to μ̂ when given.
 */
export function estimateHistory(closes: readonly Close[], yieldRate = 0): HistoryEstimate {
  const L = HISTORY_LIMITS;
  const n = closes.length;
  const m = Math.max(0, n - 1);
  const dated = n > 0 && closes[0].date !== undefined;
  const days = dated ? closes.map((c) => dayNumber(c.date!) ?? 0) : [];
  const u: number[] = [];
  let sumU = 0;
  let sumU2 = 0;
  for (let i = 1; i < n; i++) {
    const r = Math.log(closes[i].close / closes[i - 1].close);
    u.push(r);
    sumU += r;
    sumU2 += r * r;
  }
  const tradingYears = m / L.tradingDays;
  const calYears = dated && n > 1 ? (days[n - 1] - days[0]) / 365 : tradingYears;
  const years = calYears > 0 ? calYears : tradingYears > 0 ? tradingYears : 1 / L.tradingDays;
  // sample s.d. by the two-pass formula (Σ(u − ū)²), steadier than Σu² − (Σu)²/m
  const mean = m > 0 ? sumU / m : 0;
  let ss = 0;
  for (const r of u) ss += (r - mean) * (r - mean);
  const sdReturn = m > 1 ? Math.sqrt(ss / (m - 1)) : 0;
  const returnsPerYear = m > 0 ? m / years : L.tradingDays;
  const vol = sdReturn * Math.sqrt(returnsPerYear);
  const volSe = m > 0 ? vol / Math.sqrt(2 * m) : 0;
  const volTradingDays = sdReturn * Math.sqrt(L.tradingDays);
  const q = Number.isFinite(yieldRate) ? yieldRate : 0;
  const priceDrift = sumU / years;
  const drift = priceDrift + 0.5 * vol * vol + q;
  const driftSe = vol / Math.sqrt(years);
  const tdYears = tradingYears > 0 ? tradingYears : 1 / L.tradingDays;
  const driftTradingDays = sumU / tdYears + 0.5 * volTradingDays * volTradingDays + q;

  const warnings: string[] = [];
  if (years < L.shortYears) {
    warnings.push(
      `short history (${years.toFixed(2)} years): the drift's standard error is ±${pct(driftSe)}; ` +
        'a drift estimated from less than a year of closes says little',
    );
  }
  if (m < L.fewReturns) warnings.push(`only ${m} returns: the vol's standard error is ±${pct(volSe)}`);
  if (dated && m > 0) {
    let gap = 0;
    let at = 0;
    for (let i = 1; i < n; i++) {
      const g = days[i] - days[i - 1];
      if (g > gap) {
        gap = g;
        at = i;
      }
    }
    if (gap > L.gapDays) warnings.push(`a gap of ${gap} days between ${closes[at - 1].date} and ${closes[at].date}`);
    if (Math.abs(returnsPerYear / L.tradingDays - 1) > 0.15) {
      warnings.push(
        `about ${Math.round(returnsPerYear)} closes a year, not ${L.tradingDays}: the trading-day figure ` +
          'assumes daily closes on trading days and does not apply',
      );
    }
  }
  let big = -1;
  for (let i = 0; i < u.length; i++) if (Math.abs(u[i]) > L.bigMove && (big < 0 || Math.abs(u[i]) > Math.abs(u[big]))) big = i;
  if (big >= 0) {
    const where = dated ? `on ${closes[big + 1].date}` : `at close ${big + 2}`;
    warnings.push(`a move of ${pct(Math.expm1(u[big]))} ${where}: check for a split or a bad print`);
  }

  return {
    n,
    returns: m,
    dated,
    first: dated ? closes[0].date! : null,
    last: dated ? closes[n - 1].date! : null,
    years,
    tradingYears,
    returnsPerYear,
    vol,
    volSe,
    volTradingDays,
    priceDrift,
    drift,
    driftSe,
    driftTradingDays,
    yield: q,
    sumU,
    sumU2,
    sdReturn,
    logReturns: u,
    warnings,
  };
}

/**
 * The stored history with new closes appended (`history SYMBOL …` keeps what it was given).
 * Dated: the stored closes dated before the first new one, then the new ones (a re-sent stretch
 * replaces the stored one instead of repeating it). Undated: the new closes after the stored ones.
 * A dated list and an undated one cannot be joined: null.
 */
export function appendCloses(stored: readonly Close[], added: readonly Close[]): Close[] | null {
  if (stored.length === 0) return [...added];
  if (added.length === 0) return [...stored];
  const sd = stored[0].date !== undefined;
  const ad = added[0].date !== undefined;
  if (sd !== ad) return null;
  if (!ad) return [...stored, ...added];
  const first = added[0].date!;
  return [...stored.filter((c) => c.date! < first), ...added];
}
