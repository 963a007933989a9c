/**
 * Shared records of the numerical core. Plain data only: every core function takes these (or
 * plain numbers) and returns new records. Units follow docs/design.md §3:
 * time in years (calendar days / 365), rates and yields continuously compounded decimals
 * (0.045, not 4.5), volatilities as decimals per sqrt(year).
 */

export type OptionKind = 'call' | 'put';
export type LegKind = OptionKind | 'shares';
export type ExerciseStyle = 'european' | 'american';

/**
 * One option and its market, as the option pricers take it (bsm.ts, merton.ts, american/,
 * binomial.ts). In a loop, a record written inline in the call costs nothing where V8 inlines
 * the pricer; around a pricer too large to inline, build one before the loop and set the fields
 * that move (DEVELOPERS.md, "Shape of the core").
 */
export interface OptionInputs {
  kind: OptionKind;
  /** spot, money per share, > 0 */
  S: number;
  /** strike, money per share, > 0 */
  K: number;
  /** years to expiry (calendar days / 365), ≥ 0; 0 is expired */
  T: number;
  /** continuously compounded rate, decimal */
  r: number;
  /** continuous dividend yield, decimal */
  q: number;
  /** volatility per √year, decimal (the diffusion's when jumps are added) */
  sigma: number;
}

/** An option and its market without the spot: what a valuer across spots fixes (bsmAcross, americanValueCurve). */
export type OptionTerms = Omit<OptionInputs, 'S'>;

/** An option and its market without a vol: what an implied-vol solver takes beside the price. */
export type IvInputs = Omit<OptionInputs, 'sigma'>;

/**
 * A level and the walk towards it, as the touch and ends-beyond functions take it (touch.ts,
 * predictive.ts, touch-jumps.ts): dS/S = (drift − q) dt + σ dW.
 */
export interface TouchInputs {
  /** spot, > 0 */
  S: number;
  /** the level, > 0 (either side of the spot) */
  level: number;
  /** years to the date, ≥ 0 */
  T: number;
  /** expected total return per year, decimal (the rate for the risk-neutral walk) */
  drift: number;
  /** continuous dividend yield, decimal */
  q: number;
  /** volatility per √year, decimal */
  sigma: number;
  /**
   * the drift's uncertainty τ (μ ~ N(drift, τ²), fixed over the path): read by the predictive
   * forms and touchProbJumps; the known-drift closed forms (touch.ts) leave it out
   */
  driftSe?: number;
}

/** Merton (1976) jumps: Poisson intensity per year; mean and s.d. of the log jump size. */
export interface Jumps {
  intensity: number;
  mean: number;
  sd: number;
}

/** The market: spot, continuously compounded rate and dividend yield. */
export interface Market {
  spot: number;
  rate: number;
  yield: number;
}

/**
 * A walk of the spot: dS/S = (drift − yield) dt + vol dW (+ compensated jumps).
 * `drift` is the expected total return (dividends included): the rate for the
 * risk-neutral walk, the user's μ for the view.
 */
export interface Walk {
  drift: number;
  vol: number;
  jumps?: Jumps;
  /**
   * the drift's uncertainty τ (`drift 9% ± 6%`): μ ~ N(drift, τ²), fixed over the path; the
   * horizon law is then the predictive law (predictive.ts). Absent or 0: the drift is taken as known.
   */
  driftSe?: number;
}

/**
 * A mark's figures as every layer reads them (`mark SYMBOL spot … iv …`): the market terms it
 * recorded and the view it may carry. The store adds who recorded it and the channel.
 */
export interface MarkFigures {
  symbol: string;
  spot?: number;
  iv?: number;
  yield?: number;
  rate?: number;
  /** the view a mark may carry (`mark … drift 9% ± 6% vol 28%`, or `history … save`) */
  vol?: number;
  drift?: number;
  driftSe?: number;
  /** ISO time the mark was recorded */
  at: string;
}

/** Per-share value and Greeks of one option (units: docs/design.md §3). */
export interface Greeks {
  value: number;
  /** per 1.00 of spot */
  delta: number;
  /** per 1.00 of spot */
  gamma: number;
  /** per vol point (0.01) */
  vega: number;
  /** per calendar day: analytic time derivative / 365 */
  theta: number;
  /** per 1% of rate */
  rho: number;
}

/** One leg as the core sees it. */
export interface LegInput {
  /** signed: contracts for options, shares for stock */
  qty: number;
  kind: LegKind;
  /** strike (0 for shares) */
  strike: number;
  /** years from asof to expiry (0 for shares) */
  years: number;
  /** the leg's implied vol (diffusion vol when jumps are on); 0 for shares */
  iv: number;
  /** entry price per share; null = entered at its fair value */
  entry: number | null;
}

export interface CheckInput {
  market: Market;
  legs: LegInput[];
  /** contract multiplier for option legs (shares use 1) */
  mult: number;
  style: ExerciseStyle;
  /** years from asof to the horizon; ≤ the earliest option expiry */
  horizonYears: number;
  /** the user's view; the at-rate twin uses drift = rate and the same vol and jumps */
  view: Walk;
  /**
   * σ_m, the vol of the walk that prices the options (the market column: drift = rate, this vol,
   * the view's jumps). Default: the iv of the option leg nearest the money (smallest |ln K/S|),
   * else the view's vol.
   */
  marketVol?: number;
}

export interface LegResult extends Greeks {
  probItmRiskNeutral: number;
  probItmView: number;
}

/** The position's cost and the legs' value and Greeks summed (each leg's × qty × multiplier). */
export interface PositionTotals extends Record<keyof Greeks, number> {
  cost: number;
}

/**
 * The expected P&L under the view split into parts that add up to it (money, DESIGN.md §4):
 * entry prices against fair value, carry of fair value at the rate, early exercise given up by
 * holding American legs to the horizon, the legs' own ivs against the one market vol, the view's
 * vol against the market vol, and the view's drift against the rate (the view edge).
 */
export interface Attribution {
  entryVsFair: number;
  carry: number;
  earlyExercise: number;
  legIv: number;
  vol: number;
  drift: number;
}

/** The outcome's figures under the walk that prices the options (the market column). */
export interface MarketOutcome {
  probProfit: number;
  expectedPnl: number;
  pnlQuantiles: Outcome['pnlQuantiles'];
  tailMean05: number;
}

export interface Outcome {
  /** P(P&L > 0) under the view */
  probProfit: number;
  expectedPnl: number;
  /** expected P&L under drift = rate with the view's vol (and jumps) */
  expectedPnlAtRate: number;
  /** expectedPnl − expectedPnlAtRate */
  viewEdge: number;
  /** parts of expectedPnl that add up to it exactly (DESIGN.md §4) */
  attribution: Attribution;
  /** lower quantiles inf{x : F(x) ≥ p} of the P&L under the view */
  pnlQuantiles: { p05: number; p25: number; p50: number; p75: number; p95: number };
  /** average P&L of the worst 5% of outcomes (expected shortfall at 5%, atoms handled) */
  tailMean05: number;
  /** spots at the horizon where P&L crosses zero, ascending */
  breakevens: number[];
  /** sup of P&L over spot at the horizon; null when unbounded */
  maxGain: number | null;
  /** inf of P&L over spot at the horizon (signed: a loss is negative); null when unbounded */
  maxLoss: number | null;
}

/** Sampled curves for the chart (the chart never recomputes finance). */
export interface Curves {
  /** spot at the horizon, ascending */
  spot: number[];
  /** view density of the spot at the horizon at each `spot` */
  densityView: number[];
  /** density of the market walk (drift = rate, the market vol, the view's jumps) at each `spot` */
  densityMarket: number[];
  /** P&L at the horizon (money) at each `spot` */
  pnl: number[];
  /** P&L distribution under the view: bin centres (money) and density per unit of money */
  pnlDensity: { x: number[]; density: number[]; atoms: { x: number; prob: number }[] };
}

export interface CheckCore {
  legs: LegResult[];
  position: PositionTotals;
  outcome: Outcome;
  curves: Curves;
  /** which model produced which figure, and other assumptions worth stating (the report words them) */
  notes: CheckNote[];
  /** the outcome under the market walk (drift = rate, the market vol, the view's jumps) */
  outcomeMarket?: MarketOutcome;
  /** σ_m used for the market column */
  marketVol: number;
}

/**
 * What a check states about how its figures were made, as codes (the report turns them into
 * words, src/report/notes.ts):
 * - `values-bsm`, `values-merton`, `values-american` (`jumps`: with Merton jumps, a PIDE): the
 *   model of the leg values;
 * - `outcome-exact`: every option leg expires at the horizon (closed forms);
 * - `outcome-integration`: Gauss-Legendre integration, live legs revalued with their own iv;
 * - `shares-legs`: shares are in the money with probability 1 and their P&L leaves dividends out;
 * - `not-finite`: some figures could not be computed and were replaced by 0.
 */
export type CheckNote =
  | { code: 'values-bsm' }
  | { code: 'values-merton' }
  | { code: 'values-american'; jumps: boolean }
  | { code: 'outcome-exact' }
  | { code: 'outcome-integration' }
  | { code: 'shares-legs' }
  | { code: 'not-finite' };
