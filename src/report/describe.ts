/**
 * The position in a few words, for the channel's root line, the log and chart titles.
 * Common structures get their trade names (vertical spread, straddle, strangle, calendar,
 * covered call, protective put); anything else is a compact list of its legs.
 */
import type { LegKind } from '../core/types.js';
import { level, qty as fmtQty, shortDate } from './format.js';

export interface LegWords {
  qty: number;
  kind: LegKind;
  strike: number | null;
  expiry: string | null;
}

function legShort(l: LegWords): string {
  if (l.kind === 'shares') return `${fmtQty(l.qty)} sh`;
  const t = l.kind === 'call' ? 'C' : 'P';
  return `${fmtQty(l.qty)} ${t}${level(l.strike ?? 0)}${l.expiry ? ' ' + shortDate(l.expiry) : ''}`;
}

function side(q: number): string {
  return q > 0 ? 'long' : 'short';
}

export function describePosition(legs: LegWords[], symbol?: string): string {
  const prefix = symbol ? `${symbol} ` : '';
  const opts = legs.filter((l) => l.kind !== 'shares');
  const shares = legs.filter((l) => l.kind === 'shares');
  const exp = (l: LegWords) => (l.expiry ? ` ${shortDate(l.expiry)}` : '');

  if (legs.length === 1) {
    const l = legs[0];
    if (l.kind === 'shares') return `${prefix}${side(l.qty)} ${Math.abs(l.qty)} shares`;
    return `${prefix}${side(l.qty)} ${Math.abs(l.qty)} ${l.kind} ${level(l.strike ?? 0)}${exp(l)}`;
  }

  if (legs.length === 2 && opts.length === 2) {
    const [a, b] = [...opts].sort((x, y) => (x.strike ?? 0) - (y.strike ?? 0));
    const sameExp = a.expiry === b.expiry;
    const n = Math.abs(a.qty);
    if (a.kind === b.kind && sameExp && a.qty === -b.qty) {
      const debit = (a.kind === 'call') === a.qty > 0;
      return `${prefix}${n}× ${a.kind} spread ${level(a.strike ?? 0)}/${level(b.strike ?? 0)}${exp(a)} (${debit ? 'debit' : 'credit'})`;
    }
    if (a.kind === b.kind && a.strike === b.strike && !sameExp && a.qty === -b.qty) {
      const [near, far] = [a, b].sort((x, y) => String(x.expiry).localeCompare(String(y.expiry)));
      return `${prefix}${n}× ${a.kind} calendar ${level(a.strike ?? 0)} ${shortDate(near.expiry ?? '')}/${shortDate(far.expiry ?? '')}`;
    }
    if (a.kind !== b.kind && sameExp && a.qty === b.qty) {
      const name = a.strike === b.strike ? `straddle ${level(a.strike ?? 0)}` : `strangle ${level(a.strike ?? 0)}/${level(b.strike ?? 0)}`;
      return `${prefix}${side(a.qty)} ${n}× ${name}${exp(a)}`;
    }
  }

  if (legs.length === 2 && shares.length === 1 && opts.length === 1) {
    const s = shares[0];
    const o = opts[0];
    if (s.qty > 0 && o.kind === 'call' && o.qty < 0) return `${prefix}covered call ${level(o.strike ?? 0)}${exp(o)} (${s.qty} sh, ${fmtQty(o.qty)} C)`;
    if (s.qty > 0 && o.kind === 'put' && o.qty > 0) return `${prefix}protective put ${level(o.strike ?? 0)}${exp(o)} (${s.qty} sh, ${fmtQty(o.qty)} P)`;
  }

  const list = legs.slice(0, 4).map(legShort).join(', ');
  return `${prefix}${legs.length} legs: ${list}${legs.length > 4 ? ', …' : ''}`;
}
