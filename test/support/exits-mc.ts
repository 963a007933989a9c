/**
 * A reference Monte Carlo for targets and stops, written independently of the engine: every step
 * revalues the position by its definition (test/support/positions.ts style: Black-Scholes-Merton
 * per leg with its own iv and remaining life, intrinsic at expiry, shares at the spot), closes at
 * the first level reached, and corrects for a crossing between the steps with the Brownian-bridge
 * chance exp(−2δ₀δ₁/(σ²Δt)), where δ is the distance in ln S to the level from the P&L's local
 * slope (the level is locally a straight line in ln S; the error is of the order of the step).
 * The correction is applied as a conditional expectation: each path carries its survival weight.
 */
import { bsmGreeks } from '../../src/core/bsm.js';
import type { CheckInput, Walk } from '../../src/core/types.js';
import { mulberry32 } from './rng.js';

export interface McExit {
  probTarget: number;
  probStop: number;
  probNeither: number;
  expectedPnl: number;
  se: { probTarget: number; probStop: number; probNeither: number; expectedPnl: number };
}

export function referenceExitsMc(input: CheckInput, target: number | null, stop: number | null, walk: Walk, paths: number, steps: number, seed: number): McExit {
  const { spot, rate, yield: q } = input.market;
  const h = input.horizonYears;
  const legs = input.legs.map((l) => {
    const m = l.kind === 'shares' ? 1 : input.mult;
    const fair = l.kind === 'shares' ? spot : bsmGreeks({ kind: l.kind, S: spot, K: l.strike, T: l.years, r: rate, q, sigma: l.iv }).value;
    return { ...l, c: l.qty * m, entry: l.entry ?? fair };
  });
  /** P&L and its derivative in ln S at (S, t) */
  const pnl = (S: number, t: number): [number, number] => {
    let v = 0;
    let d = 0;
    for (const l of legs) {
      if (l.kind === 'shares') {
        v += l.c * (S - l.entry);
        d += l.c * S;
        continue;
      }
      const tau = l.years - t;
      if (tau <= 1e-9) {
        const itm = l.kind === 'call' ? S > l.strike : S < l.strike;
        v += l.c * ((itm ? (l.kind === 'call' ? S - l.strike : l.strike - S) : 0) - l.entry);
        d += l.c * (itm ? (l.kind === 'call' ? S : -S) : 0);
        continue;
      }
      const g = bsmGreeks({ kind: l.kind, S, K: l.strike, T: tau, r: rate, q, sigma: l.iv });
      v += l.c * (g.value - l.entry);
      d += l.c * g.delta * S;
    }
    return [v, d];
  };
  const u = mulberry32(seed);
  const normal = (): number => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
  const sig = walk.vol;
  const nu = walk.drift - q - 0.5 * sig * sig;
  const dt = h / steps;
  const sd = sig * Math.sqrt(dt);
  const acc = { T: [0, 0], S: [0, 0], N: [0, 0], E: [0, 0] };
  const add = (k: keyof typeof acc, v: number): void => {
    acc[k][0] += v;
    acc[k][1] += v * v;
  };
  const T = target ?? Infinity;
  const L = stop ?? -Infinity;
  for (let p = 0; p < paths; p++) {
    let x = Math.log(spot);
    let [v0, d0] = pnl(spot, 0);
    let w = 1;
    let eT = 0;
    let eS = 0;
    let eE = 0;
    for (let k = 1; k <= steps && w > 0; k++) {
      const x1 = x + nu * dt + sd * normal();
      const [v1, d1] = pnl(Math.exp(x1), k * dt);
      if (v1 >= T) {
        eT += w;
        eE += w * T;
        w = 0;
        break;
      }
      if (v1 <= L) {
        eS += w;
        eE += w * L;
        w = 0;
        break;
      }
      // bridge: distances in ln S to each level from the local slope at both ends
      const cross = (lv: number): number => {
        if (!Number.isFinite(lv)) return 0;
        const a = Math.abs(lv - v0) / Math.max(Math.abs(d0), 1e-300);
        const b = Math.abs(lv - v1) / Math.max(Math.abs(d1), 1e-300);
        return Math.exp((-2 * a * b) / (sig * sig * dt));
      };
      const pT = cross(T);
      const pS = cross(L);
      eT += w * pT;
      eS += w * pS;
      eE += w * (pT * (Number.isFinite(T) ? T : 0) + pS * (Number.isFinite(L) ? L : 0));
      w *= Math.max(0, 1 - pT - pS);
      x = x1;
      v0 = v1;
      d0 = d1;
    }
    let eN = 0;
    if (w > 0) {
      eN = w;
      eE += w * v0;
    }
    add('T', eT);
    add('S', eS);
    add('N', eN);
    add('E', eE);
  }
  const m = (k: keyof typeof acc): number => acc[k][0] / paths;
  const se = (k: keyof typeof acc): number => Math.sqrt(Math.max(0, acc[k][1] / paths - m(k) ** 2) / (paths - 1));
  return {
    probTarget: m('T'),
    probStop: m('S'),
    probNeither: m('N'),
    expectedPnl: m('E'),
    se: { probTarget: se('T'), probStop: se('S'), probNeither: se('N'), expectedPnl: se('E') },
  };
}
