/**
 * Text answers: compact monospace tables that fit a chat message (about 72 columns).
 * Layout and labels are Kolmo's own (docs/design.md §1, §6).
 */
import type { CheckJson } from '../result.js';
import { hasJumps } from '../core/jumps.js';
import { DAY_MS } from '../core/units.js';
import { describePosition } from './describe.js';
import { exitsLine } from './exits.js';
import { jumpWords, level, money, num, pct, qty as fmtQty, rate, shortDate, table } from './format.js';

function daysBetween(a: string, b: string): number {
  return Math.round((Date.parse(b + 'T00:00:00Z') - Date.parse(a + 'T00:00:00Z')) / DAY_MS);
}

export function positionWords(c: CheckJson): string {
  return describePosition(
    c.legs.map((l) => ({ qty: l.qty, kind: l.type, strike: l.strike, expiry: l.expiry })),
    c.symbol,
  );
}

/** The view in a few words: "drift 9% vol 26%" (+ jumps). */
export function viewWords(c: Pick<CheckJson, 'view'>): string {
  const v = c.view;
  const j = hasJumps(v.jumps) ? `, jumps ${jumpWords(v.jumps)}` : '';
  return `drift ${rate(v.drift)}${v.driftSe ? ` ± ${rate(v.driftSe)}` : ''}, vol ${rate(v.vol)}${j}`;
}

/** Longest line of the assumptions (a chat window shows about this many characters). */
export const ASSUMPTIONS_WIDTH = 96;

/** Words joined by ' · ', wrapped before a part that would pass `width` (continuations indented). */
export function wrapParts(head: string, parts: string[], width = ASSUMPTIONS_WIDTH): string {
  const lines: string[] = [];
  let cur = head;
  parts.forEach((p, i) => {
    const piece = (i === 0 ? '' : ' · ') + p + (i === parts.length - 1 ? '.' : '');
    if (i > 0 && cur.length + piece.length > width) {
      lines.push(cur + ' ·');
      cur = '  ' + p + (i === parts.length - 1 ? '.' : '');
    } else cur += (i === 0 ? ' ' : '') + piece;
  });
  lines.push(cur);
  return lines.join('\n');
}

export function assumptionsLine(c: CheckJson): string {
  const parts = [
    `asof ${c.asof}`,
    `spot ${level(c.market.spot)}`,
    `rate ${rate(c.market.rate)}`,
    `yield ${rate(c.market.yield)}`,
    `view ${viewWords(c)}`,
    c.style === 'american' ? 'American exercise' : 'European exercise',
    ...(c.view.model === 'merton-jumps' ? ['Merton jumps'] : []),
    `mult ${c.mult}`,
    'P&L at the horizon, undiscounted, unfinanced',
  ];
  if (c.legs.some((l) => l.type === 'shares')) parts.push('no dividends in P&L');
  return wrapParts('Assumptions:', parts);
}

/**
 * Very unlikely inputs, said rather than passed over: an entry price far from the leg's fair
 * value (outside half to twice it, by more than 0.10 a share) usually means a mistyped iv (250%
 * for 25%) or entry.
 */
export function warningLines(c: CheckJson): string[] {
  const out: string[] = [];
  const minutes = Math.round(c.horizonYears * 365 * 24 * 60);
  if (minutes < 24 * 60) {
    out.push(`Warning: a horizon of ${minutes} minutes: the outcome is almost today's value; did you mean ${Math.max(1, Math.round(minutes))}d (days) or ${Math.max(1, Math.round(minutes))}m (months)?`);
  }
  c.legs.forEach((l, i) => {
    if (!l.entryGiven || l.type === 'shares') return;
    const far = (l.entry < l.value / 2 || l.entry > 2 * l.value) && Math.abs(l.entry - l.value) > 0.1;
    if (far) {
      out.push(
        `Warning: leg ${i + 1} (${l.type} ${level(l.strike ?? 0)}) entry ${num(l.entry)} is far from its fair value ${num(l.value)} at iv ${rate(l.iv ?? 0)}: is the iv or the entry mistyped?`,
      );
    }
  });
  return out;
}

/** Notes on the method (how figures were computed): in the JSON always, in the text with `verbose`. */
export function isMethodNote(n: string): boolean {
  return /^(values|outcome|shares legs):/.test(n);
}

/**
 * American legs whose value equals intrinsic value: exercising now is worth as much as holding
 * (to a millionth of the strike; the backward solve returns the exercise value itself there).
 */
export function exerciseNotes(c: CheckJson): string[] {
  if (c.style !== 'american') return [];
  const out: string[] = [];
  c.legs.forEach((l, i) => {
    if (l.type === 'shares' || l.strike === null) return;
    const intrinsic = l.type === 'call' ? c.market.spot - l.strike : l.strike - c.market.spot;
    if (intrinsic > 0 && Math.abs(l.value - intrinsic) <= 1e-6 * l.strike) {
      out.push(`leg ${i + 1} (${l.type} ${level(l.strike)}): exercise now is worth as much as holding (value = intrinsic ${num(intrinsic)})`);
    }
  });
  return out;
}

export function checkText(c: CheckJson, opts: { verbose?: boolean } = {}): string {
  const lines: string[] = [];
  const days = daysBetween(c.asof, c.horizon);
  const mins = Math.round(c.horizonYears * 365 * 24 * 60);
  const span = mins < 24 * 60 ? `${mins} minutes` : `${days} day${days === 1 ? '' : 's'}`;
  lines.push(`${positionWords(c)} — horizon ${c.horizon} (${span})`);
  lines.push('');

  // rho matters when the rate is high or a leg lives a year or more (the issue's rule)
  const showRho = c.market.rate >= 0.05 || c.legs.some((l) => (l.years ?? 0) >= 1);
  const legRows: string[][] = [['leg (per share)', 'qty', 'days', 'entry', 'fair', 'Δ', 'Γ', 'vega', 'θ/day', ...(showRho ? ['rho'] : [])]];
  for (const l of c.legs) {
    const name =
      l.type === 'shares'
        ? 'shares'
        : `${l.type === 'call' ? 'call' : 'put'} ${level(l.strike ?? 0)} ${l.expiry ? shortDate(l.expiry) : ''}`;
    const opt = l.type !== 'shares';
    legRows.push([
      name,
      fmtQty(l.qty),
      opt && l.expiry ? `${daysBetween(c.asof, l.expiry)}d` : '',
      num(l.entry) + (l.entryGiven ? '' : '*'),
      num(l.value),
      num(l.delta, 3),
      opt ? num(l.gamma, 4) : '',
      opt ? num(l.vega, 3) : '',
      opt ? num(l.theta, 3) : '',
      ...(showRho ? [opt ? num(l.rho, 3) : ''] : []),
    ]);
  }
  lines.push(...table(legRows));
  if (c.legs.some((l) => !l.entryGiven)) lines.push('* no @entry written: entered at fair value');
  for (const n of exerciseNotes(c)) lines.push(n);
  const p = c.position;
  // a net credit reads as a credit, not as a negative cost
  const paid = p.cost < 0 && money(p.cost) !== money(0) ? `credit ${money(-p.cost)}` : `cost ${money(p.cost)}`;
  lines.push(
    `position (money; Δ and Γ per 1.00 of spot): ${paid} · value ${money(p.value)} · Δ ${num(p.delta, 1)} · Γ ${num(p.gamma, 2)} · vega ${num(p.vega, 1)} · θ/day ${num(p.theta, 2)}${showRho ? ` · rho ${num(p.rho, 1)}` : ''}`,
  );
  lines.push('');

  const o = c.outcome;
  const mk = c.outcomeMarket;
  const s = (x: number) => money(x, { sign: true });
  const a = o.attribution;
  // each part of the expected P&L is shown only when it is not zero at display precision
  const parts: [string, number][] = [
    ['  entry vs fair', a.entryVsFair],
    ['  carry at the rate', a.carry],
    ['  early exercise given up', a.earlyExercise],
    ["  legs' iv vs market vol", a.legIv],
    ['  vol view', a.vol],
    ['  drift view (view edge)', a.drift],
  ];
  const rows: string[][] = [
    [`outcome at ${shortDate(c.horizon)}`, 'your view', `market (vol ${rate(c.marketVol)})`],
    ['chance of profit', pct(o.probProfit), pct(mk.probProfit)],
    ['expected P&L', s(o.expectedPnl), s(mk.expectedPnl)],
    ...parts.filter(([, v]) => Number(Math.abs(v).toFixed(2)) !== 0).map(([label, v]) => [label, s(v), '']),
    ['P&L p05', s(o.pnlQuantiles.p05), s(mk.pnlQuantiles.p05)],
    ['P&L p25', s(o.pnlQuantiles.p25), s(mk.pnlQuantiles.p25)],
    ['P&L p50', s(o.pnlQuantiles.p50), s(mk.pnlQuantiles.p50)],
    ['P&L p75', s(o.pnlQuantiles.p75), s(mk.pnlQuantiles.p75)],
    ['P&L p95', s(o.pnlQuantiles.p95), s(mk.pnlQuantiles.p95)],
    ['worst-5% average', s(o.tailMean05), s(mk.tailMean05)],
  ];
  lines.push(...table(rows));
  if (c.knownDrift && c.view.driftSe) {
    const k = c.knownDrift;
    lines.push(
      `drift ${rate(c.view.drift)} ± ${rate(c.view.driftSe)}: P&L p05–p95 ${s(o.pnlQuantiles.p05)} … ${s(o.pnlQuantiles.p95)}, chance of profit ${pct(o.probProfit)}` +
        ` (drift known: ${s(k.pnlQuantiles.p05)} … ${s(k.pnlQuantiles.p95)}, ${pct(k.probProfit)})`,
    );
  }
  const be = o.breakevens.length ? o.breakevens.map((b) => level(Number(b.toFixed(2)))).join(', ') : 'none';
  lines.push(`breakevens: ${be}`);
  lines.push(
    `max gain: ${o.maxGain === null ? 'unbounded' : s(o.maxGain)} · max loss: ${o.maxLoss === null ? 'unbounded' : s(o.maxLoss)}`,
  );
  if (c.exits) lines.push(exitsLine(c.exits));
  lines.push('');
  const warnings = warningLines(c);
  if (warnings.length) lines.push(...warnings, '');
  lines.push(assumptionsLine(c));
  for (const n of c.notes) if (opts.verbose || !isMethodNote(n)) lines.push(`Note: ${n}`);
  return lines.join('\n');
}

/** The short root line for the channel (the shell puts who asked in front). */
export function checkHeadline(c: CheckJson): string {
  return `${positionWords(c)} · to ${c.horizon} · chance of profit ${pct(c.outcome.probProfit)} · view edge ${money(c.outcome.viewEdge, { sign: true })}`;
}
