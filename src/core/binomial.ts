/**
 * Cox-Ross-Rubinstein binomial trees: an independent reference for the finite-difference
 * American solver (tests and benchmarks use it; nothing in the pricing path does).
 *
 * - `crrValue`: the plain CRR tree (u = e^{σ√Δt}, d = 1/u, p = (e^{(r−q)Δt} − d)/(u − d)),
 *   European or American, value at the root.
 * - `bbsrValue`: the "binomial Black-Scholes with Richardson" variant of Broadie and Detemple
 *   (Review of Financial Studies 9, 1996): the step before expiry uses the Black-Scholes-Merton
 *   European value instead of the payoff (removing the odd-even oscillation), and two trees of
 *   n and n/2 steps are combined as 2·V(n) − V(n/2).
 */
import type { OptionInputs, OptionKind } from './types.js';
import { normCdf } from './normal.js';

function intrinsic(kind: OptionKind, S: number, K: number): number {
  return kind === 'call' ? Math.max(S - K, 0) : Math.max(K - S, 0);
}

/** European BSM value (local to the trees, so the reference does not lean on bsm.ts). */
function bsmEuropean(kind: OptionKind, S: number, K: number, T: number, r: number, q: number, sigma: number): number {
  if (T <= 0) return intrinsic(kind, S, K);
  const sd = sigma * Math.sqrt(T);
  const d1 = (Math.log(S / K) + (r - q) * T) / sd + 0.5 * sd;
  const d2 = d1 - sd;
  const fS = S * Math.exp(-q * T);
  const fK = K * Math.exp(-r * T);
  return kind === 'call' ? fS * normCdf(d1) - fK * normCdf(d2) : fK * normCdf(-d2) - fS * normCdf(-d1);
}

/** Exercise style and number of steps of a tree. */
export interface TreeOptions {
  american: boolean;
  steps: number;
}

function tree(o: OptionInputs, american: boolean, steps: number, bsmLastStep: boolean): number {
  const { kind, S, K, T, r, q, sigma } = o;
  const n = Math.max(1, Math.floor(steps));
  const dt = T / n;
  const u = Math.exp(sigma * Math.sqrt(dt));
  const d = 1 / u;
  const disc = Math.exp(-r * dt);
  const p = (Math.exp((r - q) * dt) - d) / (u - d);
  const pu = disc * p;
  const pd = disc * (1 - p);
  const top = bsmLastStep ? n - 1 : n;
  const v = new Float64Array(top + 1);
  for (let j = 0; j <= top; j++) {
    const s = S * Math.pow(u, 2 * j - top);
    if (bsmLastStep) {
      const e = bsmEuropean(kind, s, K, dt, r, q, sigma);
      v[j] = american ? Math.max(e, intrinsic(kind, s, K)) : e;
    } else {
      v[j] = intrinsic(kind, s, K);
    }
  }
  const u2 = u * u;
  for (let i = top - 1; i >= 0; i--) {
    let s = S * Math.pow(d, i);
    for (let j = 0; j <= i; j++) {
      const cont = pd * v[j] + pu * v[j + 1];
      if (american) {
        const ex = kind === 'call' ? s - K : K - s;
        v[j] = cont > ex ? cont : ex;
      } else {
        v[j] = cont;
      }
      s *= u2;
    }
  }
  return v[0];
}

/** Plain CRR tree value with `steps` steps. */
export function crrValue(o: OptionInputs, t: TreeOptions): number {
  return tree(o, t.american, t.steps, false);
}

/** Broadie-Detemple BBSR value: 2·BBS(n) − BBS(n/2), n rounded to an even number. */
export function bbsrValue(o: OptionInputs, t: TreeOptions): number {
  const n = Math.max(2, 2 * Math.round(t.steps / 2));
  return 2 * tree(o, t.american, n, true) - tree(o, t.american, n / 2, true);
}
