/**
 * Closing prices as a desk member gives them to `history`: inline in the request (`84.10 84.95 …`
 * or `2026-01-05:84.10 …`), or in a CSV/TSV file (date, close) shared in the workspace or named
 * with `--file` on the command line. Pure: the shells read the bytes, this module reads the text.
 *
 * Files: UTF-8 text (a byte-order mark is skipped); comma, tab or semicolon between columns;
 * an optional header row naming the columns (`date` and `close`, or `adj close`, in any order;
 * without a header the first column is the date and the last the close); blank lines and lines
 * starting with `#` are skipped; thousands separators are not read (write 1234.5, not 1,234.5).
 * A file with its newest close first (as many exports are) is read in reverse and the answer says
 * so; any other order is refused by the estimator's checks.
 */
import type { Close } from '../core/history.js';

/** Largest file read, in bytes. */
export const CLOSES_FILE_BYTES = 1_000_000;
/** Most closes read (20 years of daily closes with room to spare). */
export const CLOSES_MAX = 6000;

export type CloseToken = { ok: true; close: Close } | { ok: false; message: string; example: string };

const ISO = /^\d{4}-\d{2}-\d{2}$/;
const PLAIN = /^(?:\d+(?:\.\d*)?|\.\d+)$/;

/** One inline close: `84.10` or `2026-01-05:84.10`. */
export function readCloseToken(text: string): CloseToken {
  const colon = text.indexOf(':');
  const date = colon >= 0 ? text.slice(0, colon) : undefined;
  const num = colon >= 0 ? text.slice(colon + 1) : text;
  if (date !== undefined && !ISO.test(date)) {
    return { ok: false, message: `a dated close is written DATE:CLOSE with the date as YYYY-MM-DD (got ${text})`, example: '2026-01-05:84.10' };
  }
  if (!PLAIN.test(num)) {
    const neg = /^-/.test(num);
    return {
      ok: false,
      message: neg || Number(num) === 0 ? `a close must be a positive price (got ${num})` : `a close is a plain number such as 84.10 (got ${num || 'nothing'})`,
      example: date ? `${date}:84.10` : '84.10',
    };
  }
  const close = Number(num);
  if (!(close > 0)) return { ok: false, message: `a close must be a positive price (got ${num})`, example: date ? `${date}:84.10` : '84.10' };
  return { ok: true, close: date !== undefined ? { date, close } : { close } };
}

export interface FileCloses {
  closes: Close[];
  /** the file's line (1-based) of each close, in the order of `closes` */
  lines: number[];
  /** e.g. "read newest first: reversed" */
  notes: string[];
}

export type FileResult = { ok: true; value: FileCloses } | { ok: false; message: string; line?: number };

/** Decodes file bytes as UTF-8 text, or says it is not text. */
export function fileText(bytes: Uint8Array): { ok: true; text: string } | { ok: false; message: string } {
  if (bytes.length > CLOSES_FILE_BYTES) return { ok: false, message: `the file is ${bytes.length} bytes; at most ${CLOSES_FILE_BYTES} are read` };
  if (bytes.includes(0)) return { ok: false, message: 'the file is not text (it holds NUL bytes): share a CSV or TSV file of date, close' };
  try {
    let text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
    if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    return { ok: true, text };
  } catch {
    return { ok: false, message: 'the file is not text (not UTF-8): share a CSV or TSV file of date, close' };
  }
}

function splitRow(line: string): string[] {
  const sep = line.includes('\t') ? '\t' : line.includes(';') ? ';' : ',';
  return line.split(sep).map((c) => c.trim().replace(/^"(.*)"$/, '$1').trim());
}

/** Reads date, close rows from CSV/TSV text. */
export function readClosesText(name: string, text: string): FileResult {
  const rows: { cells: string[]; line: number }[] = [];
  text.split(/\r\n|\n|\r/).forEach((raw, i) => {
    const line = raw.trim();
    if (line === '' || line.startsWith('#')) return;
    rows.push({ cells: splitRow(line), line: i + 1 });
  });
  if (rows.length === 0) return { ok: false, message: `${name} holds no rows: write one date, close per line` };
  let dateCol = 0;
  let closeCol = -1;
  const head = rows[0].cells.map((c) => c.toLowerCase());
  const headerLike = head.some((c) => /[a-z]/.test(c) && !ISO.test(c));
  if (headerLike) {
    const d = head.findIndex((c) => c === 'date' || c === 'day');
    const adj = head.findIndex((c) => c === 'adj close' || c === 'adj_close' || c === 'adjclose' || c === 'adjusted close');
    const c = adj >= 0 ? adj : head.findIndex((x) => x === 'close' || x === 'price' || x === 'last');
    if (c < 0) {
      return { ok: false, line: rows[0].line, message: `line ${rows[0].line} of ${name} looks like a header but names no close column (write "date,close")` };
    }
    dateCol = d;
    closeCol = c;
    rows.shift();
  }
  const closes: Close[] = [];
  const lines: number[] = [];
  for (const r of rows) {
    if (closes.length >= CLOSES_MAX) return { ok: false, line: r.line, message: `${name} has more than ${CLOSES_MAX} closes` };
    const cells = r.cells;
    const cc = closeCol >= 0 ? closeCol : cells.length - 1;
    const cell = cells[cc] ?? '';
    if (!PLAIN.test(cell) || !(Number(cell) > 0)) {
      return { ok: false, line: r.line, message: `line ${r.line} of ${name}: the close ${cell === '' ? 'is missing' : `${cell} is not a positive price`}` };
    }
    const close = Number(cell);
    // one column (closes only) or no date column in the header: undated closes
    const dated = dateCol >= 0 && cells.length > 1 && dateCol !== cc;
    if (dated) {
      const date = cells[dateCol];
      if (!ISO.test(date)) return { ok: false, line: r.line, message: `line ${r.line} of ${name}: the date ${date || '(empty)'} is not written YYYY-MM-DD` };
      closes.push({ date, close });
    } else closes.push({ close });
    lines.push(r.line);
  }
  const notes: string[] = [];
  // newest first: strictly descending dates throughout → read in reverse
  if (closes.length > 1 && closes[0].date !== undefined && closes.every((c, i) => i === 0 || (c.date !== undefined && c.date < closes[i - 1].date!))) {
    closes.reverse();
    lines.reverse();
    notes.push(`${name} lists the newest close first: read in reverse`);
  }
  return { ok: true, value: { closes, lines, notes } };
}
