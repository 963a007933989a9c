/**
 * The channel's log (`log [N]`) and marks (`mark`) as monospace listings. Layout and labels are
 * Kolmo's own (docs/design.md §1).
 */
import { level, money, pct, rate, table } from './format.js';
import { cut } from './compare.js';

import type { MarkFigures } from '../core/types.js';
import { DAY_MS } from '../core/units.js';

/** "2027-01-04 14:02" (UTC) from an ISO time; the text itself when it does not read as a time. */
export function whenUtc(iso: string): string {
  const t = Date.parse(iso);
  if (!Number.isFinite(t)) return iso;
  return new Date(t).toISOString().slice(0, 16).replace('T', ' ');
}

/** Age in a few words: "just now", "12 min", "3 h 05 min", "2 days 4 h". Negative ages (clock skew) read as "just now". */
export function ageWords(ms: number): string {
  if (!Number.isFinite(ms) || ms < 60_000) return 'just now';
  const min = Math.floor(ms / 60_000);
  if (min < 60) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 48) return `${h} h ${String(min % 60).padStart(2, '0')} min`;
  const days = Math.floor(h / 24);
  return `${days} days ${h % 24} h`;
}

/** True when a mark recorded at `at` is older than a day at `now`. */
export function isStale(at: string, now: Date): boolean {
  const t = Date.parse(at);
  return !Number.isFinite(t) || now.getTime() - t > DAY_MS;
}

/** What a listing reads of a logged check (the log keeps more). */
export interface LoggedCheck {
  number: number;
  user: string;
  /** ISO time of the check */
  at: string;
  verb: string;
  text: string;
  /** headline figures as logged (position words, chance of profit, …; `parts` for a comparison) */
  summary: Record<string, unknown>;
  permalink: string | null;
  delivered: string;
}

/** What a listing reads of a mark. */
export interface MarkShown extends MarkFigures {
  user: string;
}

/** What a verb adds after the position words of one of its entries (e.g. " → iv 26.98%"). */
export type ResultWords = (e: LoggedCheck) => string;

const num = (v: unknown): number | undefined => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);

interface PartFigures {
  probProfit?: number;
  expectedPnl?: number;
}

/** The figures of a logged entry as the log shows them: chance of profit and expected P&L (ranges for a comparison). */
export function entryFigures(e: LoggedCheck): { chance: string; pnl: string } {
  const s = e.summary;
  const parts = Array.isArray(s.parts) ? (s.parts as PartFigures[]) : null;
  if (parts?.length) {
    const ps = parts.map((p) => num(p.probProfit)).filter((x): x is number => x !== undefined);
    const es = parts.map((p) => num(p.expectedPnl)).filter((x): x is number => x !== undefined);
    const span = (xs: number[], f: (x: number) => string) => {
      if (!xs.length) return '';
      const lo = f(Math.min(...xs));
      const hi = f(Math.max(...xs));
      return lo === hi ? lo : `${lo}..${hi}`;
    };
    return { chance: span(ps, (x) => pct(x, 0)), pnl: span(es, (x) => money(x, { sign: true, decimals: 0 })) };
  }
  const p = num(s.probProfit);
  const x = num(s.expectedPnl);
  return { chance: p === undefined ? '' : pct(p), pnl: x === undefined ? '' : money(x, { sign: true }) };
}

/** The words of a logged entry: the position, or what an iv / touch request asked, and its result. */
export function entryWords(e: LoggedCheck, result: ResultWords): string {
  const s = e.summary;
  let w = typeof s.position === 'string' && s.position !== '' ? s.position : e.text;
  w += result(e);
  if (num(s.againOf) !== undefined) w = `again #${num(s.againOf)}: ${w}`;
  if (e.delivered === 'undelivered') w += ' (not posted)';
  return w;
}

export interface LogListing {
  text: string;
  /** entries with a thread link, newest first */
  links: { label: string; url: string }[];
}

/** A permalink fit to put in a link: http(s), no spaces or link-syntax characters. */
export function safeUrl(u: string | null): string | null {
  if (!u || !/^https?:\/\/[^\s<>|]+$/.test(u) || u.length > 2048) return null;
  return u;
}

/**
 * The log listing, newest first. `linksInline`: write each thread link as a line of the text
 * (outside a workspace, where links cannot be rendered); otherwise they are returned apart.
 */
export function logText(entries: LoggedCheck[], asked: number, linksInline: boolean, result: ResultWords): LogListing {
  if (entries.length === 0) return { text: 'No checks in this channel\'s log yet.', links: [] };
  // two lines per entry (number, who, when, figures; then the position in words) to stay narrow
  const rows: string[][] = [['#', 'who', 'when (UTC)', 'chance', 'exp. P&L']];
  const words: string[] = [];
  const links: { label: string; url: string }[] = [];
  for (const e of entries) {
    const f = entryFigures(e);
    rows.push([`#${e.number}`, cut(e.user, 14), whenUtc(e.at), f.chance, f.pnl]);
    words.push(`    ${cut(entryWords(e, result), 66)}`);
    const url = safeUrl(e.permalink);
    if (url) links.push({ label: `#${e.number}`, url });
  }
  const t = table(rows, [0, 1, 2]);
  const body = [t[0], ...entries.flatMap((_, i) => [t[i + 1], words[i]])];
  const lines = [
    `Last ${entries.length} check${entries.length === 1 ? '' : 's'} in this channel, newest first${entries.length < asked ? ` (all there are)` : ''}:`,
    ...body,
    '',
    'chance = chance of profit, exp. P&L = expected P&L under the view, both at the time of the check.',
    '`again N` reruns check #N; `again N spot 102 asof today` reruns it with changes.',
  ];
  if (linksInline && links.length) {
    lines.push('Threads:');
    for (const l of links) lines.push(`  ${l.label} ${l.url}`);
  }
  return { text: lines.join('\n'), links: linksInline ? [] : links };
}

/** The channel's marks, with their age and a stale flag. */
export function marksText(marks: MarkShown[], now: Date): string {
  if (marks.length === 0) return 'No marks in this channel yet. Record one with `mark FERNWK spot 84.20 iv 31% yield 1.2%`.';
  // a view column (vol, drift ± its uncertainty) only when some mark carries one
  const views = marks.some((m) => m.vol !== undefined || m.drift !== undefined);
  const viewOf = (m: MarkShown) =>
    [m.vol !== undefined ? `vol ${rate(m.vol)}` : '', m.drift !== undefined ? `drift ${rate(m.drift)}${m.driftSe ? ` ± ${rate(m.driftSe)}` : ''}` : '']
      .filter(Boolean)
      .join(' ') || '–';
  const rows: string[][] = [['symbol', 'spot', 'iv', 'yield', 'rate', ...(views ? ['view'] : []), 'by', 'age']];
  for (const m of marks) {
    const age = now.getTime() - Date.parse(m.at);
    rows.push([
      m.symbol,
      m.spot === undefined ? '–' : level(m.spot),
      m.iv === undefined ? '–' : rate(m.iv),
      m.yield === undefined ? '–' : rate(m.yield),
      m.rate === undefined ? '–' : rate(m.rate),
      ...(views ? [viewOf(m)] : []),
      cut(m.user, 12),
      ageWords(age) + (isStale(m.at, now) ? ' STALE' : ''),
    ]);
  }
  return [
    `Marks in this channel (${marks.length}; age at ${whenUtc(now.toISOString())} UTC):`,
    ...table(rows, views ? [0, 5, 6, 7] : [0, 5, 6]),
    '',
    'Checks that say `on SYMBOL` take spot, iv, yield and rate from the mark; terms written in the request override it.',
    ...(views ? ['A mark with a view also gives the view its vol and drift (± its uncertainty) where the request writes none.'] : []),
    ...(marks.some((m) => isStale(m.at, now)) ? ['STALE: recorded more than a day ago.'] : []),
  ].join('\n');
}
