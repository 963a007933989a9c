/**
 * The σ → 0 limit of the American option: with no volatility (and no jumps) the path is certain.
 */
import type { Greeks, OptionInputs } from '../types.js';

/**
 * With no volatility the path is deterministic: the holder exercises at the best time on
 * S e^{(r−q)t}. Value = max over t ∈ [0, T] of e^{−rt}·payoff(S e^{(r−q)t}).
 */
export function deterministicValue(o: Omit<OptionInputs, 'sigma'>): number {
  const { kind, S, K, T, r, q } = o;
  const f = (t: number): number =>
    kind === 'call' ? S * Math.exp(-q * t) - K * Math.exp(-r * t) : K * Math.exp(-r * t) - S * Math.exp(-q * t);
  let best = Math.max(0, f(0), f(T));
  // interior stationary point of f: r K e^{−rt} = q S e^{−qt}
  if (r !== q && r * q > 0) {
    const t = Math.log((r * K) / (q * S)) / (r - q);
    if (t > 0 && t < T) best = Math.max(best, f(t));
  }
  return best;
}

/** Value and Greeks of the deterministic limit (delta, theta and rho by differences). */
export function deterministicGreeks(o: Omit<OptionInputs, 'sigma'>): Greeks {
  const { kind, S, K, T, r, q } = o;
  const v = (s: number, t: number, rate: number): number => deterministicValue({ kind, S: s, K, T: t, r: rate, q });
  const value = v(S, T, r);
  const hS = 1e-4 * S;
  const dMax = Math.max(1, Math.exp(-q * T));
  const raw = (v(S + hS, T, r) - v(S - hS, T, r)) / (2 * hS);
  const delta = Math.min(Math.max(raw, -dMax), dMax);
  const ht = Math.min(1e-4, T / 2);
  const theta = -((v(S, T, r) - v(S, T - ht, r)) / ht) / 365;
  const rho = ((v(S, T, r + 1e-4) - v(S, T, r - 1e-4)) / 2e-4) * 0.01;
  return { value, delta, gamma: 0, vega: 0, theta, rho };
}
