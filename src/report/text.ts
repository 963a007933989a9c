/**
 * Text answers: compact monospace tables that fit a chat message (about 72 columns).
 * Layout and labels are Kolmo's own (docs/design.md §1, §6).
 */
import type { CheckJson } from '../result.js';
import { hasJumps } from '../core/jumps.js';
import { DAY_MS } from '../core/units.js';
import { describePosition } from './describe.js';
import { exitsLine } from './exits.js';
import { level, money, num, pct, rate, shortDate, table } from './format.js';

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
  const j = hasJumps(v.jumps) ? `, jumps ${num(v.jumps.intensity, 2)}/yr ${rate(v.jumps.mean)} ±${rate(v.jumps.sd)}` : '';
  return `drift ${rate(v.drift)}${v.driftSe ? ` ± ${rate(v.driftSe)}` : ''}, vol ${rate(v.vol)}${j}`;
}

export function assumptionsLine(c: CheckJson): string {
  const parts = [
    `asof ${c.asof}`,
    `spot ${level(c.market.spot)}`,
    `rate ${rate(c.market.rate)}`,
    `yield ${rate(c.market.yield)}`,
    `view ${viewWords(c)}`,
    c.style === 'american' ? 'American exercise (finite differences)' : 'European exercise',
    c.view.model === 'merton-jumps' ? 'Merton jump diffusion' : 'Black-Scholes-Merton',
    `mult ${c.mult}`,
    'P&L at the horizon, undiscounted, no financing',
  ];
  if (c.legs.some((l) => l.type === 'shares')) parts.push('dividends on shares left out of P&L');
  return `Assumptions: ${parts.join(' · ')}.`;
}

export function checkText(c: CheckJson): string {
  const lines: string[] = [];
  const days = daysBetween(c.asof, c.horizon);
  lines.push(`${positionWords(c)} — horizon ${c.horizon} (${days} day${days === 1 ? '' : 's'})`);
  lines.push('');

  const legRows: string[][] = [['leg', 'qty', 'entry', 'fair', 'Δ', 'Γ', 'vega', 'θ/day']];
  for (const l of c.legs) {
    const name =
      l.type === 'shares'
        ? 'shares'
        : `${l.type === 'call' ? 'call' : 'put'} ${level(l.strike ?? 0)} ${l.expiry ? shortDate(l.expiry) : ''}`;
    const opt = l.type !== 'shares';
    legRows.push([
      name,
      l.qty > 0 ? `+${l.qty}` : `−${Math.abs(l.qty)}`,
      num(l.entry) + (l.entryGiven ? '' : '*'),
      num(l.value),
      num(l.delta, 3),
      opt ? num(l.gamma, 4) : '',
      opt ? num(l.vega, 3) : '',
      opt ? num(l.theta, 3) : '',
    ]);
  }
  lines.push(...table(legRows));
  if (c.legs.some((l) => !l.entryGiven)) lines.push('* no @entry written: entered at fair value');
  const p = c.position;
  lines.push(
    `position: cost ${money(p.cost)} · value ${money(p.value)} · Δ ${num(p.delta, 1)} · Γ ${num(p.gamma, 2)} · vega ${num(p.vega, 1)} · θ/day ${num(p.theta, 2)}`,
  );
  lines.push('');

  const o = c.outcome;
  const rn = c.outcomeRiskNeutral;
  const s = (x: number) => money(x, { sign: true });
  const rows: string[][] = [
    [`outcome at ${shortDate(c.horizon)}`, 'view', 'risk-neutral'],
    ['chance of profit', pct(o.probProfit), pct(rn.probProfit)],
    ['expected P&L', s(o.expectedPnl), s(rn.expectedPnl)],
    ['  from entry prices', s(o.attribution.price), ''],
    ['  from vol view', s(o.attribution.vol), ''],
    ['  from drift view (view edge)', s(o.attribution.drift), ''],
    ['P&L p05', s(o.pnlQuantiles.p05), s(rn.pnlQuantiles.p05)],
    ['P&L p50', s(o.pnlQuantiles.p50), s(rn.pnlQuantiles.p50)],
    ['P&L p95', s(o.pnlQuantiles.p95), s(rn.pnlQuantiles.p95)],
    ['worst-5% average', s(o.tailMean05), s(rn.tailMean05)],
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
  lines.push(assumptionsLine(c));
  for (const n of c.notes) lines.push(`Note: ${n}`);
  return lines.join('\n');
}

/** The short root line for the channel (the shell puts who asked in front). */
export function checkHeadline(c: CheckJson): string {
  return `${positionWords(c)} · to ${c.horizon} · chance of profit ${pct(c.outcome.probProfit)} · view edge ${money(c.outcome.viewEdge, { sign: true })}`;
}
