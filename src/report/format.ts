/**
 * Every number Kolmo writes, in one place: the text answer, the headline, the log and the charts.
 * The text register keeps a fixed number of decimals (tables line up); the charts' register
 * (fmt…) drops trailing zeros and needless decimals, and writes "–" for a missing value.
 * Negative numbers in text carry the ASCII hyphen-minus, so that figures copied from a chat answer
 * into a spreadsheet stay numbers.
 */
import { hasJumps } from '../core/jumps.js';
import type { Jumps } from '../core/types.js';

/** A finite number (the one test every formatter and chart helper uses). */
export const isNum = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

const MINUS = '-';

/** Money with thousands separators and two decimals: 1234.5 → "1,234.50", −3 → "-3.00". */
export function money(x: number, opts: { sign?: boolean; decimals?: number } = {}): string {
  if (!Number.isFinite(x)) return 'n/a';
  const d = opts.decimals ?? 2;
  const abs = Math.abs(x);
  const rounded = Number(abs.toFixed(d));
  const body = rounded.toLocaleString('en-US', { minimumFractionDigits: d, maximumFractionDigits: d });
  if (rounded === 0) return opts.sign ? ` ${body}` : body;
  if (x < 0) return `${MINUS}${body}`;
  return opts.sign ? `+${body}` : body;
}

/** A probability as a percentage: 0.4312 → "43.1%". Very small or large values keep a sign of it. */
export function pct(p: number, decimals = 1): string {
  if (!Number.isFinite(p)) return 'n/a';
  const v = p * 100;
  if (v > 0 && v < 0.05) return '<0.1%';
  if (v < 100 && v > 99.95) return '>99.9%';
  return `${v.toFixed(decimals)}%`;
}

/** A rate or vol given as a decimal, as a percentage with up to two decimals: 0.045 → "4.5%". */
/** A change of a chance in percentage points: "+4.2 pts", "−0.3 pts" (a change that rounds to 0 is "+0.0"). */
export function pts(d: number): string {
  const v = Math.abs(d * 100).toFixed(1);
  return `${d < 0 && v !== '0.0' ? '−' : '+'}${v} pts`;
}

export function rate(x: number): string {
  if (!Number.isFinite(x)) return 'n/a';
  const v = Math.round(x * 10000) / 100;
  return `${v < 0 ? MINUS : ''}${String(Math.abs(v))}%`;
}

/** A plain number with a fixed number of decimals and a true minus sign. */
export function num(x: number, decimals = 2): string {
  if (!Number.isFinite(x)) return 'n/a';
  const s = Math.abs(x).toFixed(decimals);
  if (Number(s) === 0) return s;
  return x < 0 ? `${MINUS}${s}` : s;
}

/** A price-like level (strike, spot, breakeven): drops needless trailing zeros, keeps ≥ 2 decimals when fractional. */
export function level(x: number): string {
  if (!Number.isFinite(x)) return 'n/a';
  if (Number.isInteger(x)) return String(x);
  const s = x.toFixed(2);
  return s;
}

/** A signed quantity: 2 → "+2", −2 → "-2". */
export function qty(q: number): string {
  return q < 0 ? `${MINUS}${Math.abs(q)}` : `+${q}`;
}

const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];

/** ISO date → "19Mar27" style short date used inside tables. */
export function shortDate(iso: string): string {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(iso);
  if (!m) return iso;
  return `${m[3]}${MONTHS[Number(m[2]) - 1]}${m[1].slice(2)}`;
}

/** Pads a table: each row is an array of cells; column i is right-aligned unless listed in `left`. */
export function table(rows: string[][], left: number[] = [0]): string[] {
  const widths: number[] = [];
  for (const r of rows) r.forEach((c, i) => (widths[i] = Math.max(widths[i] ?? 0, [...c].length)));
  return rows.map((r) =>
    r
      .map((c, i) => {
        const pad = widths[i] - [...c].length;
        return left.includes(i) ? c + ' '.repeat(pad) : ' '.repeat(pad) + c;
      })
      .join('  ')
      .trimEnd(),
  );
}

// ---------------------------------------------------------------------------------------------
// The charts' register: fewer decimals, trailing zeros dropped, "–" for a missing value.

function fmtNumber(v: number, decimals: number): string {
  const s = Math.abs(v).toLocaleString('en-US', { minimumFractionDigits: decimals, maximumFractionDigits: decimals });
  return (v < 0 && s.replace(/[0.,]/g, '') !== '' ? MINUS : '') + s;
}

/** Price-like number: up to 2 decimals, trailing zeros dropped. */
export function fmtPrice(v: number): string {
  if (!isNum(v)) return '–';
  const d = Math.abs(v) >= 1000 ? 0 : 2;
  const s = fmtNumber(v, d);
  return d > 0 ? s.replace(/\.?0+$/, '') : s;
}

/** Money with an explicit sign: "+1,234", "−56.20", with the currency code after it if known. */
export function fmtMoney(v: number, currency?: string): string {
  if (!isNum(v)) return '–';
  const d = Math.abs(v) >= 100 ? 0 : 2;
  const body = fmtNumber(v, d);
  const signed = v > 0 && body.replace(/[0.,]/g, '') !== '' ? `+${body}` : body;
  return currency ? `${signed} ${currency}` : signed;
}

/** Percentage of a decimal: 0.09 → "9%", 0.265 → "26.5%", −0.05 → "−5%". */
export function fmtPct(v: number): string {
  if (!isNum(v)) return '–';
  const p = v * 100;
  const d = Math.abs(p - Math.round(p)) < 1e-9 ? 0 : Math.abs(p * 10 - Math.round(p * 10)) < 1e-6 ? 1 : 2;
  return `${fmtNumber(p, d)}%`;
}

/** A chance as a percentage to 0.1%, never rounded to a certainty it is not: "< 0.1%", "> 99.9%". */
export function fmtChance(p: number): string {
  if (!isNum(p)) return '–';
  if (p > 0 && p < 0.0005) return '< 0.1%';
  if (p < 1 && p >= 0.9995) return '> 99.9%';
  return fmtPct(Math.round(Math.min(1, Math.max(0, p)) * 1000) / 1000);
}

/**
 * The view's jumps, worded one way in the text answer, the comparison table and on the charts:
 * "0.5/yr mean -8% sd 12%" (the request's order: rate per year, mean and s.d. of the log jump).
 */
export function jumpWords(j: Jumps): string {
  return `${fmtPrice(j.intensity)}/yr mean ${fmtPct(j.mean)} sd ${fmtPct(j.sd)}`;
}

/** The view as a chart title says it: "drift 9%, vol 26%, jumps 0.5/yr mean -5% sd 10%" */
export function describeView(view: { drift: number; vol: number; jumps?: Jumps; driftSe?: number }): string {
  const se = isNum(view.driftSe) && view.driftSe > 0 ? ` ± ${fmtPct(view.driftSe)}` : '';
  let s = `drift ${fmtPct(view.drift)}${se}, vol ${fmtPct(view.vol)}`;
  const j = view.jumps;
  if (j && isNum(j.intensity) && hasJumps(j)) {
    s += `, jumps ${jumpWords(j)}`;
  }
  return s;
}
