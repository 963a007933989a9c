/**
 * Targets and stops in the text answer: one line with the chances under the view (the market
 * walk's in brackets), the expected P&L at exit and the median time to exit, saying that
 * monitoring is continuous.
 */
import type { ExitsJson } from '../result.js';
import { money, pct } from './format.js';

/** A time in days (or hours under a day) from years. */
function days(years: number): string {
  const d = years * 365;
  if (d < 1) return `${Math.max(1, Math.round(d * 24))} h`;
  return `${d < 10 ? d.toFixed(1) : String(Math.round(d))} days`;
}

/** The one line of an answer with a target or a stop. */
export function exitsLine(e: ExitsJson): string {
  const v = e.view;
  const m = e.market;
  const s = (x: number) => money(x, { sign: true });
  const se = (x: number | undefined) => (x !== undefined ? ` ±${pct(x)}` : '');
  const parts: string[] = [];
  if (e.target !== null) parts.push(`target ${s(e.target)} first ${pct(v.probTarget)}${se(v.stderr?.probTarget)} (market ${pct(m.probTarget)})`);
  if (e.stop !== null) parts.push(`stop ${s(e.stop)} first ${pct(v.probStop)}${se(v.stderr?.probStop)} (market ${pct(m.probStop)})`);
  parts.push(`neither by the horizon ${pct(v.probNeither)} (${pct(m.probNeither)})`);
  parts.push(`expected P&L at exit ${s(v.expectedPnl)}${v.stderr ? ` ±${money(v.stderr.expectedPnl)}` : ''} (${s(m.expectedPnl)})`);
  parts.push(v.medianExitYears === null ? 'median exit: at the horizon' : `median exit in ${days(v.medianExitYears)}`);
  const how = v.method === 'monte-carlo' ? `; with jumps by Monte Carlo, ${(v.paths ?? 0).toLocaleString('en-US')} paths, ± one standard error` : '';
  return `Exits (monitoring is continuous${how}): ${parts.join(' · ')}.`;
}
