/**
 * The check form's values → the request text (docs/design.md §2), so a form goes through the same
 * `ask` seam as typed text and its answer can quote the typed request that would have produced it.
 *
 * Pure. The composer remembers which characters of the text each field wrote (`spans`), so a
 * rejection's caret position can be put back on the field that caused it (./errors.ts).
 *
 * Values are the strings the form's inputs hold (number inputs hand numbers over as text):
 * percentages without `%` (the form's labels say "%"), dates as yyyy-mm-dd.
 */

/** The legs the form offers at most. */
export const FORM_LEGS_MAX = 6;

export type LegType = 'call' | 'put' | 'shares';
export type LegField = 'qty' | 'type' | 'strike' | 'expiry' | 'entry' | 'iv';
export const LEG_FIELDS: readonly LegField[] = ['qty', 'type', 'strike', 'expiry', 'entry', 'iv'];

export interface LegValues {
  qty?: string;
  type?: LegType;
  strike?: string;
  /** yyyy-mm-dd */
  expiry?: string;
  entry?: string;
  /** percent, e.g. "28" */
  iv?: string;
}

export interface FormValues {
  /** a symbol of the channel's marks: market terms come from it (`on SYMBOL`) */
  symbol?: string;
  legs: LegValues[];
  spot?: string;
  rate?: string;
  yield?: string;
  /** position-wide iv, percent */
  iv?: string;
  /** yyyy-mm-dd; absent: today */
  asof?: string;
  drift?: string;
  /** the drift's uncertainty (one standard error), percent */
  driftSe?: string;
  vol?: string;
  /** yyyy-mm-dd */
  horizon?: string;
  style?: 'european' | 'american';
  mult?: string;
  jumpRate?: string;
  jumpMean?: string;
  jumpSd?: string;
  /** an exit level: money P&L of the whole position ("+400", "-300") or percent of |cost| ("50%") */
  target?: string;
  stop?: string;
}

/** The form's fields, as the block ids of its inputs. */
export type FieldId =
  | 'symbol'
  | `leg${number}_${LegField}`
  | 'spot'
  | 'rate'
  | 'yield'
  | 'iv'
  | 'asof'
  | 'drift'
  | 'drift_se'
  | 'vol'
  | 'horizon'
  | 'style'
  | 'mult'
  | 'jump_rate'
  | 'jump_mean'
  | 'jump_sd'
  | 'target'
  | 'stop';

export function legField(i: number, f: LegField): FieldId {
  return `leg${i + 1}_${f}`;
}

export interface Span {
  from: number;
  to: number;
  field: FieldId;
}

export type Composed = { ok: true; text: string; spans: Span[] } | { ok: false; errors: Partial<Record<FieldId, string>> };

const NUMERIC = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/;
/** An exit level as the form takes it: one number, `%` optional (percent of the position's |cost|). */
const EXIT_LEVEL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)\s*%?$/;
const DATE = /^\d{4}-\d{2}-\d{2}$/;

const blank = (s: string | undefined): boolean => s === undefined || s.trim() === '';

/** A number as written in a request: plain decimal, no exponent where avoidable. */
export function plain(s: string): string {
  const t = s.trim().replace(/^\+/, '');
  const n = Number(t);
  if (t === '' || !Number.isFinite(n)) return s.trim();
  // number inputs give plain decimals already; this only tidies "08.50" and "1e2"
  return String(Number(n.toPrecision(12)));
}

/** An exit level as written in a request: the sign as given (unsigned is read by the grammar), `%` kept. */
function exitText(s: string): string {
  const t = s.replace(/\s+/g, '');
  const pct = t.endsWith('%');
  const num = pct ? t.slice(0, -1) : t;
  const sign = num.startsWith('-') ? '-' : num.startsWith('+') ? '+' : '';
  return `${sign}${plain(num.replace(/^[+-]/, ''))}${pct ? '%' : ''}`;
}

function legUsed(l: LegValues): boolean {
  return !blank(l.qty) || !blank(l.strike) || !blank(l.expiry) || !blank(l.entry) || !blank(l.iv);
}

/**
 * Checks the form cannot leave to the grammar (the grammar would put its caret on text the person
 * never typed): a leg needs a quantity, jumps need all three values, an uncertainty needs a drift.
 */
function formErrors(v: FormValues): Partial<Record<FieldId, string>> {
  const errors: Partial<Record<FieldId, string>> = {};
  // each field writes one value: a number or a date, nothing else (no words that would read as terms)
  const num = (s: string | undefined, f: FieldId, example: string) => {
    if (!blank(s) && !NUMERIC.test(s!.trim())) errors[f] = `A plain number here, e.g. ${example}.`;
  };
  const date = (s: string | undefined, f: FieldId) => {
    if (!blank(s) && !DATE.test(s!.trim())) errors[f] = 'A date, yyyy-mm-dd.';
  };
  v.legs.forEach((l, i) => {
    num(l.qty, legField(i, 'qty'), '2 or -2');
    num(l.strike, legField(i, 'strike'), '105');
    date(l.expiry, legField(i, 'expiry'));
    num(l.entry, legField(i, 'entry'), '3.10');
    num(l.iv, legField(i, 'iv'), '28');
  });
  num(v.spot, 'spot', '100');
  num(v.rate, 'rate', '4.5');
  num(v.yield, 'yield', '1');
  num(v.iv, 'iv', '28');
  date(v.asof, 'asof');
  num(v.drift, 'drift', '9');
  num(v.driftSe, 'drift_se', '6');
  num(v.vol, 'vol', '26');
  date(v.horizon, 'horizon');
  num(v.mult, 'mult', '100');
  num(v.jumpRate, 'jump_rate', '0.5');
  num(v.jumpMean, 'jump_mean', '-8');
  num(v.jumpSd, 'jump_sd', '12');
  for (const [s, f, ex] of [[v.target, 'target', '+400 or 50%'], [v.stop, 'stop', '-300 or 100%']] as const) {
    if (!blank(s) && !EXIT_LEVEL.test(s!.trim())) errors[f] = `One level: a P&L in money or a percentage of the position’s cost, e.g. ${ex}.`;
  }
  if (!blank(v.symbol) && !/^[A-Za-z][A-Za-z0-9.-]*$/.test(v.symbol!.trim())) errors.symbol = 'A symbol of this channel’s marks.';
  if (Object.keys(errors).length > 0) return errors;
  let used = 0;
  v.legs.forEach((l, i) => {
    if (!legUsed(l)) return;
    used++;
    if (blank(l.qty)) errors[legField(i, 'qty')] = 'Give a quantity: 2 buys two contracts, -2 sells two (shares: a number of shares).';
    if ((l.type ?? 'call') !== 'shares' && blank(l.strike)) errors[legField(i, 'strike')] = 'A call or a put needs a strike.';
  });
  if (used === 0) errors[legField(0, 'qty')] = 'Give at least one leg: a quantity (2 buys, -2 sells), a type and a strike.';
  const jumps = [v.jumpRate, v.jumpMean, v.jumpSd];
  if (jumps.some((j) => !blank(j)) && jumps.some(blank)) {
    const msg = 'Jumps need all three: how many a year, their mean size and its spread (e.g. 0.5, -8, 12).';
    if (blank(v.jumpRate)) errors.jump_rate = msg;
    if (blank(v.jumpMean)) errors.jump_mean = msg;
    if (blank(v.jumpSd)) errors.jump_sd = msg;
  }
  if (!blank(v.driftSe) && blank(v.drift)) errors.drift = 'An uncertainty needs the drift it belongs to.';
  if (!blank(v.driftSe) && Number(v.driftSe) < 0) errors.drift_se = 'The uncertainty is one standard error: a positive percentage.';
  return errors;
}

/**
 * Composes the request text. Order: legs, then `on SYMBOL`, spot, rate, yield, asof, horizon,
 * drift, vol, style, mult, jumps, target, stop, and the position-wide iv last: an `iv` written right after a leg
 * would be read as that leg's own (docs/design.md §2), so when it would come first it is preceded by
 * `style european` (the default, so the meaning is unchanged).
 */
export function composeRequest(v: FormValues): Composed {
  const errors = formErrors(v);
  if (Object.keys(errors).length > 0) return { ok: false, errors };
  const spans: Span[] = [];
  let text = '';
  const put = (piece: string, field?: FieldId) => {
    if (text !== '') text += ' ';
    const from = text.length;
    text += piece;
    if (field) spans.push({ from, to: text.length, field });
  };
  let lastShares = false;
  v.legs.forEach((l, i) => {
    if (!legUsed(l)) return;
    const type = l.type ?? 'call';
    const q = plain(l.qty!);
    put(/^[+-]/.test(q) ? q : `+${q}`, legField(i, 'qty'));
    put(type, legField(i, 'type'));
    if (type !== 'shares') {
      if (!blank(l.strike)) put(plain(l.strike!), legField(i, 'strike'));
      if (!blank(l.expiry)) put(l.expiry!.trim(), legField(i, 'expiry'));
    }
    if (!blank(l.entry)) put(`@${plain(l.entry!)}`, legField(i, 'entry'));
    if (type !== 'shares' && !blank(l.iv)) put(`iv ${plain(l.iv!)}%`, legField(i, 'iv'));
    lastShares = type === 'shares';
  });
  let terms = 0;
  const term = (piece: string, field: FieldId) => {
    put(piece, field);
    terms++;
  };
  if (!blank(v.symbol)) term(`on ${v.symbol!.trim().toUpperCase()}`, 'symbol');
  if (!blank(v.spot)) term(`spot ${plain(v.spot!)}`, 'spot');
  if (!blank(v.rate)) term(`rate ${plain(v.rate!)}%`, 'rate');
  if (!blank(v.yield)) term(`yield ${plain(v.yield!)}%`, 'yield');
  if (!blank(v.asof)) term(`asof ${v.asof!.trim()}`, 'asof');
  if (!blank(v.horizon)) term(`horizon ${v.horizon!.trim()}`, 'horizon');
  if (!blank(v.drift)) {
    term(`drift ${plain(v.drift!)}%`, 'drift');
    if (!blank(v.driftSe)) put(`± ${plain(v.driftSe!)}%`, 'drift_se');
  }
  if (!blank(v.vol)) term(`vol ${plain(v.vol!)}%`, 'vol');
  if (v.style === 'american') term('style american', 'style');
  if (!blank(v.mult)) term(`mult ${plain(v.mult!)}`, 'mult');
  if (!blank(v.jumpRate)) {
    put('jumps', 'jump_rate');
    put(`${plain(v.jumpRate!)}/yr`, 'jump_rate');
    put(`${plain(v.jumpMean!)}%`, 'jump_mean');
    put(`${plain(v.jumpSd!)}%`, 'jump_sd');
    terms++;
  }
  if (!blank(v.target)) term(`target ${exitText(v.target!)}`, 'target');
  if (!blank(v.stop)) term(`stop ${exitText(v.stop!)}`, 'stop');
  if (!blank(v.iv)) {
    if (terms === 0 && !lastShares) put('style european');
    put(`iv ${plain(v.iv!)}%`, 'iv');
  }
  return { ok: true, text, spans };
}
