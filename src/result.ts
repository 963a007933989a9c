/**
 * The machine-readable result of a check (docs/design.md §4), assembled from the resolved request and
 * the core's figures. The text answer, the headline, the log summary and the chart all read this.
 */
import type { CheckCore, Curves, ExerciseStyle, Greeks, Jumps, LegKind, MarketOutcome, Outcome, PositionTotals } from './core/types.js';

/** One leg of the JSON: its terms, then its per-share value and Greeks (`Greeks`). */
export interface LegJson extends Greeks {
  qty: number;
  type: LegKind;
  strike: number | null;
  expiry: string | null;
  years: number | null;
  iv: number | null;
  /** entry price per share used (the fair value when none was written) */
  entry: number;
  entryGiven: boolean;
  probItmRiskNeutral: number | null;
  probItmView: number | null;
}


/** Exit figures under one walk (docs/design.md §4 `exits`). */
export interface ExitFiguresJson {
  probTarget: number;
  probStop: number;
  probNeither: number;
  /** expected P&L when closed at the first level reached, else at the horizon (money) */
  expectedPnl: number;
  /** median time to exit (years from asof) when it falls before the horizon, else null */
  medianExitYears: number | null;
  /** 'finite-differences' (no jumps) or 'monte-carlo' (jumps; with standard errors) */
  method: 'finite-differences' | 'monte-carlo';
  paths?: number;
  stderr?: { probTarget: number; probStop: number; probNeither: number; expectedPnl: number };
}

/** Targets and stops: the levels in money, the P&L now, and the figures under both walks. */
export interface ExitsJson {
  /** money P&L of the whole position; null when not given */
  target: number | null;
  stop: number | null;
  /** the levels as written: money, or a percentage of the position's |cost| (0.5 = 50%) */
  written: { target?: { value: number; pct: boolean }; stop?: { value: number; pct: boolean } };
  /** the P&L now (position value − cost), where every path starts */
  currentPnl: number;
  /** the market walk's vol (the request's iv, else the mark's, else the iv of the option leg nearest the money) */
  marketVol: number;
  monitoring: 'continuous';
  view: ExitFiguresJson;
  market: ExitFiguresJson;
}

export interface CheckJson {
  kind: 'check';
  symbol?: string;
  asof: string;
  horizon: string;
  horizonYears: number;
  market: { spot: number; rate: number; yield: number };
  /** `driftSe`: the drift's uncertainty; the view's outcome is then under the predictive law */
  view: { drift: number; vol: number; model: 'lognormal' | 'merton-jumps'; jumps?: Jumps; driftSe?: number };
  style: ExerciseStyle;
  mult: number;
  notes: string[];
  legs: LegJson[];
  position: PositionTotals;
  outcome: Outcome;
  /** the outcome under the walk that prices the options: drift = rate, vol = marketVol */
  outcomeMarket: MarketOutcome;
  /** σ_m: the request's iv, else the mark's, else the iv of the option leg nearest the money */
  marketVol: number;
  /** with a drift uncertainty: the same figures with the drift taken as known, for comparison */
  knownDrift?: { probProfit: number; pnlQuantiles: { p05: number; p95: number } };
  /** targets and stops, when the request gives one */
  exits?: ExitsJson;
}

export interface CheckAssembly {
  json: CheckJson;
  /** the view's curves, for the chart (not printed in --json) */
  curves: Curves;
}
export type { CheckCore };
