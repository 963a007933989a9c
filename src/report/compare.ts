/**
 * A comparison (`compare A ; B ; …`): the checks side by side in one monospace table, a column
 * each, the headline for the channel and the chart input (src/report/chart.ts compareChartConfig).
 * Layout and labels are Kolmo's own (docs/design.md §1, §6).
 */
import type { CompareChartItem } from './chart.js';
import type { CheckJson } from '../result.js';
import { hasJumps } from '../core/jumps.js';
import { jumpWords, level, money, pct, rate, shortDate, table } from './format.js';
import { isMethodNote, positionWords, wrapParts } from './text.js';

export interface ComparePart {
  /** the part as written (for the legend lines and the chart) */
  label: string;
  json: CheckJson;
}

/** A label cut to `max` code points, ending with "…" when cut. */
export function cut(s: string, max: number): string {
  const cps = Array.from(s.replace(/\s+/g, ' ').trim());
  return cps.length <= max ? cps.join('') : cps.slice(0, max - 1).join('') + '…';
}

/** Rows of market and view terms: the ones that differ between parts, and a line of the ones that do not. */
function termRows(parts: ComparePart[]): { rows: string[][]; same: string[] } {
  const terms: [string, (c: CheckJson) => string][] = [
    ['asof', (c) => c.asof],
    ['horizon', (c) => shortDate(c.horizon)],
    ['spot', (c) => level(c.market.spot)],
    ['rate', (c) => rate(c.market.rate)],
    ['yield', (c) => rate(c.market.yield)],
    ['drift', (c) => rate(c.view.drift)],
    ['vol', (c) => rate(c.view.vol)],
    ['jumps', (c) => (hasJumps(c.view.jumps) ? jumpWords(c.view.jumps) : 'none')],
    ['style', (c) => c.style],
    ['mult', (c) => String(c.mult)],
  ];
  const rows: string[][] = [];
  const same: string[] = [];
  for (const [name, f] of terms) {
    const vals = parts.map((p) => f(p.json));
    if (vals.every((v) => v === vals[0])) {
      if (!(name === 'jumps' && vals[0] === 'none') && !(name === 'style' && vals[0] === 'european') && !(name === 'mult' && vals[0] === '100')) {
        same.push(`${name} ${vals[0]}`);
      }
    } else rows.push([name, ...vals]);
  }
  return { rows, same };
}

/** The comparison table: one column per check. Money in whole units when more than three checks share the width. */
export function compareText(parts: ComparePart[], opts: { verbose?: boolean } = {}): string {
  const d = parts.length > 3 ? 0 : 2;
  const m = (x: number) => money(x, { sign: true, decimals: d });
  const plain = (x: number) => money(x, { decimals: d });
  const lines: string[] = [];
  lines.push(`Comparison of ${parts.length} checks (each part inherits from the one before)`);
  parts.forEach((p, k) => lines.push(`${k + 1}: ${cut(p.label, 66)}`));
  const words = parts.map((p) => positionWords(p.json));
  if (words.every((w) => w === words[0])) lines.push(`position in every check: ${words[0]}`);
  else words.forEach((w, k) => lines.push(`position ${k + 1}: ${cut(w, 60)}`));
  lines.push('');
  const head = ['', ...parts.map((_, k) => String(k + 1))];
  const { rows: termDiff, same } = termRows(parts);
  const o = (f: (c: CheckJson) => string) => parts.map((p) => f(p.json));
  const rows: string[][] = [
    head,
    ...termDiff,
    ['cost', ...o((c) => plain(c.position.cost))],
    ['fair value', ...o((c) => plain(c.position.value))],
    ['chance of profit', ...o((c) => pct(c.outcome.probProfit))],
    ['expected P&L', ...o((c) => m(c.outcome.expectedPnl))],
    ['view edge', ...o((c) => m(c.outcome.viewEdge))],
    ['P&L p05', ...o((c) => m(c.outcome.pnlQuantiles.p05))],
    ['P&L p95', ...o((c) => m(c.outcome.pnlQuantiles.p95))],
    ['worst-5% average', ...o((c) => m(c.outcome.tailMean05))],
    ['max loss', ...o((c) => (c.outcome.maxLoss === null ? 'unbounded' : m(c.outcome.maxLoss)))],
  ];
  if (parts.some((p) => p.json.exits)) {
    // targets and stops (view; monitoring is continuous)
    const e = (f: (x: NonNullable<CheckJson['exits']>) => string) => o((c) => (c.exits ? f(c.exits) : '—'));
    rows.push(
      ['target', ...e((x) => (x.target === null ? 'none' : m(x.target)))],
      ['stop', ...e((x) => (x.stop === null ? 'none' : m(x.stop)))],
      ['target first', ...e((x) => pct(x.view.probTarget))],
      ['stop first', ...e((x) => pct(x.view.probStop))],
      ['expected P&L at exit', ...e((x) => m(x.view.expectedPnl))],
    );
  }
  lines.push(...table(rows));
  lines.push('');
  const common = [...same, 'P&L at each horizon, undiscounted, unfinanced'];
  if (parts.some((p) => p.json.exits)) common.push('targets and stops under the view, monitoring is continuous');
  if (parts.some((p) => p.json.legs.some((l) => l.type === 'shares'))) common.push('no dividends in P&L');
  lines.push(wrapParts('Same in every check:', common));
  // notes: once when every part has it, else with the part's number
  const seen = new Set<string>();
  for (const p of parts) {
    for (const n of p.json.notes) {
      if (seen.has(n) || (!opts.verbose && isMethodNote(n))) continue;
      seen.add(n);
      const who = parts.map((q, k) => (q.json.notes.includes(n) ? k + 1 : 0)).filter((k) => k > 0);
      lines.push(`Note${who.length === parts.length ? '' : ` (${who.join(', ')})`}: ${n}`);
    }
  }
  return lines.join('\n');
}

function range(xs: number[], f: (x: number) => string): string {
  const lo = Math.min(...xs);
  const hi = Math.max(...xs);
  return f(lo) === f(hi) ? f(lo) : `${f(lo)} to ${f(hi)}`;
}

/** The root line for the channel: what is compared, the range of chance of profit and of view edge. */
export function compareHeadline(parts: ComparePart[]): string {
  const words = [...new Set(parts.map((p) => positionWords(p.json)))];
  const what = words.length === 1 ? words[0] : `${words[0]} and ${words.length - 1} other position${words.length > 2 ? 's' : ''}`;
  return [
    `comparison of ${parts.length}: ${cut(what, 60)}`,
    `chance of profit ${range(parts.map((p) => p.json.outcome.probProfit), (x) => pct(x))}`,
    `view edge ${range(parts.map((p) => p.json.outcome.viewEdge), (x) => money(x, { sign: true }))}`,
  ].join(' · ');
}

/** What the comparison chart reads (plain data: it may cross a worker boundary). */
export function compareChartInput(parts: ComparePart[], curves: { pnlDensity: CompareChartItem['pnlDensity'] }[]): { kind: 'compare'; inputs: CompareChartItem[] } {
  return {
    kind: 'compare',
    inputs: parts.map((p, k) => ({
      label: `${k + 1}: ${cut(p.label, 34)}`,
      pnlDensity: curves[k].pnlDensity,
      expectedPnl: p.json.outcome.expectedPnl,
    })),
  };
}
