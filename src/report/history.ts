/**
 * A price history's estimates → the text answer, its headline and the JSON result
 * (docs/design.md §4: `kind:"history"`). Pure.
 */
import type { HistoryEstimate } from '../core/history.js';
import { table } from './format.js';

const MINUS = '−';

/** A decimal as a percentage with one decimal, signed with the typographic minus: 0.091 → "9.1%". */
function p1(x: number): string {
  if (!Number.isFinite(x)) return 'n/a';
  const v = Math.round(x * 1000) / 10;
  return `${v < 0 ? MINUS : ''}${Math.abs(v).toFixed(1)}%`;
}

export interface HistoryReportInput {
  symbol: string;
  est: HistoryEstimate;
  /** where the closes came from, in words (e.g. "inline", "prices.csv", "the channel's stored history") */
  source: string;
  /** notes of the reader (e.g. a file read in reverse) and of the store */
  notes: string[];
  /** closes now kept for the symbol in this channel (undefined: not kept) */
  kept?: number;
  /** the mark after `save` */
  saved?: { vol: number; drift: number; driftSe: number; spot?: number };
  /** why `save` stored nothing */
  notSaved?: string;
}

export function historyHeadline(r: HistoryReportInput): string {
  const e = r.est;
  return `history ${r.symbol}: ${e.n} closes → vol ${p1(e.vol)} ±${p1(e.volSe)} · drift ${p1(e.drift)} ±${p1(e.driftSe)}`;
}

export function historyText(r: HistoryReportInput): string {
  const e = r.est;
  const span = e.dated ? `${e.first} → ${e.last}, ` : '';
  const clock = e.dated ? 'calendar days/365' : 'closes without dates: consecutive trading days, 252 a year';
  const rows = table(
    [
      ['', 'estimate', 'std error', '252-day check'],
      ['vol (σ̂, a year)', p1(e.vol), `±${p1(e.volSe)}`, p1(e.volTradingDays)],
      ['drift (μ̂, total return)', p1(e.drift), `±${p1(e.driftSe)}`, p1(e.driftTradingDays)],
    ],
    [0],
  );
  const parts = [`price drift ${p1(e.priceDrift)}`, `σ̂²/2 ${p1(0.5 * e.vol * e.vol)}`];
  if (e.yield !== 0) parts.push(`yield ${p1(e.yield)}`);
  const lines = [
    `History ${r.symbol} (${r.source}): ${e.n} closes, ${span}${e.years.toFixed(2)} years (${clock})`,
    ...rows,
    `μ̂ = ${parts.join(' + ')}; standard errors σ̂/√(2·${e.returns} returns) and σ̂/√(${e.years.toFixed(2)} years)`,
    ...e.warnings.map((w) => `Warning: ${w}`),
    ...r.notes.map((n) => `Note: ${n}`),
  ];
  if (r.kept !== undefined) lines.push(`Kept: ${r.kept} closes of ${r.symbol} in this channel (\`history ${r.symbol}\` re-reads them; new closes append).`);
  if (r.saved) {
    lines.push(
      `Saved into the mark ${r.symbol}: vol ${p1(r.saved.vol)}, drift ${p1(r.saved.drift)} ± ${p1(r.saved.driftSe)}` +
        `${r.saved.spot !== undefined ? `, spot ${r.saved.spot}` : ''}; checks \`on ${r.symbol}\` use them.`,
    );
  } else if (r.notSaved) {
    lines.push(`Not saved into the mark ${r.symbol}: ${r.notSaved}.`);
  } else {
    lines.push(`Add \`save\` to store these estimates into the mark ${r.symbol}.`);
  }
  return lines.join('\n');
}

export function historyJson(r: HistoryReportInput): Record<string, unknown> {
  const e = r.est;
  return {
    kind: 'history',
    symbol: r.symbol,
    n: e.n,
    returns: e.returns,
    first: e.first,
    last: e.last,
    years: e.years,
    clock: e.dated ? 'calendar' : 'trading',
    vol: e.vol,
    volSe: e.volSe,
    drift: e.drift,
    driftSe: e.driftSe,
    priceDrift: e.priceDrift,
    yield: e.yield,
    tradingDays: { years: e.tradingYears, vol: e.volTradingDays, drift: e.driftTradingDays },
    returnsPerYear: e.returnsPerYear,
    source: r.source,
    warnings: e.warnings,
    notes: r.notes,
    ...(r.kept !== undefined ? { kept: r.kept } : {}),
    ...(r.saved ? { saved: r.saved } : {}),
    ...(r.notSaved ? { notSaved: r.notSaved } : {}),
  };
}
