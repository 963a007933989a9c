/**
 * The position in a few words, for the channel's root line, the log and chart titles.
 * Common structures get their trade names (vertical spread, ratio spread, straddle, strangle,
 * calendar, diagonal, butterfly, iron condor, covered call, protective put, collar; common
 * practice); anything else is a compact list of its legs.
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
    if (a.kind === b.kind && sameExp && a.strike !== b.strike && Math.sign(a.qty) !== Math.sign(b.qty) && Math.abs(a.qty) !== Math.abs(b.qty)) {
      return `${prefix}${Math.abs(a.qty)}×${Math.abs(b.qty)} ${a.kind} ratio spread ${level(a.strike ?? 0)}/${level(b.strike ?? 0)}${exp(a)}`;
    }
    if (a.kind === b.kind && !sameExp && a.strike !== b.strike && a.qty === -b.qty) {
      const [near, far] = [a, b].sort((x, y) => String(x.expiry).localeCompare(String(y.expiry)));
      return `${prefix}${n}× ${a.kind} diagonal ${level(far.strike ?? 0)} ${shortDate(far.expiry ?? '')} ${far.qty > 0 ? 'long' : 'short'} / ${level(near.strike ?? 0)} ${shortDate(near.expiry ?? '')}`;
    }
  }

  if (opts.length === legs.length && legs.length >= 3 && opts.every((l) => l.expiry === opts[0].expiry)) {
    const byK = [...opts].sort((x, y) => (x.strike ?? 0) - (y.strike ?? 0));
    const ks = byK.map((l) => level(l.strike ?? 0)).join('/');
    // butterfly: one type, strikes K1 < K2 < K3 (equally spaced or not), quantities q, −2q, q
    if (byK.length === 3 && byK.every((l) => l.kind === byK[0].kind)) {
      const [p, m, r] = byK;
      if (p.qty === r.qty && m.qty === -2 * p.qty && (p.strike ?? 0) < (m.strike ?? 0) && (m.strike ?? 0) < (r.strike ?? 0)) {
        return `${prefix}${side(p.qty)} ${Math.abs(p.qty)}× ${p.kind} butterfly ${ks}${exp(p)}`;
      }
    }
    // iron condor: put spread below a call spread, sold (or bought) together, one size
    if (byK.length === 4) {
      const [p1, p2, c1, c2] = byK;
      const n = Math.abs(p1.qty);
      if (
        p1.kind === 'put' && p2.kind === 'put' && c1.kind === 'call' && c2.kind === 'call' &&
        [p1, p2, c1, c2].every((l) => Math.abs(l.qty) === n) &&
        p1.qty === -p2.qty && c2.qty === -c1.qty && p1.qty === c2.qty && (p2.strike ?? 0) <= (c1.strike ?? 0)
      ) {
        const name = p2.strike === c1.strike ? 'iron butterfly' : 'iron condor';
        return `${prefix}${p1.qty > 0 ? 'short' : 'long'} ${n}× ${name} ${ks}${exp(p1)} (${p1.qty > 0 ? 'credit' : 'debit'})`;
      }
    }
  }

  if (legs.length === 3 && shares.length === 1 && opts.length === 2) {
    const s = shares[0];
    const put = opts.find((l) => l.kind === 'put');
    const call = opts.find((l) => l.kind === 'call');
    if (s.qty > 0 && put && call && put.qty > 0 && call.qty < 0 && put.qty === -call.qty && (put.strike ?? 0) < (call.strike ?? 0) && put.expiry === call.expiry) {
      return `${prefix}collar ${level(put.strike ?? 0)}/${level(call.strike ?? 0)}${exp(put)} (${s.qty} sh, ${fmtQty(put.qty)} P, ${fmtQty(call.qty)} C)`;
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
