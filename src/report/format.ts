/** Number formatting shared by the text answer, the headline and the chart titles. */

const MINUS = '−';

/** Money with thousands separators and two decimals: 1234.5 → "1,234.50", −3 → "−3.00". */
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

/** A signed quantity: 2 → "+2", −2 → "−2". */
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
