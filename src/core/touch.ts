/**
 * Touch probabilities: will the spot reach a level before a date?
 *
 * Under dS = (drift − q) S dt + σ S dW the log-spot X_t = ln(S_t/S) is a Brownian motion with
 * drift ν = drift − q − σ²/2 and volatility σ. For a level L at distance a = |ln(L/S)| and the
 * drift towards it ν' = ν·sign(ln(L/S)), the first-passage probability by T is (reflection
 * principle with drift; e.g. Karatzas & Shreve, Brownian Motion and Stochastic Calculus, §3.5.C,
 * or any text's running-maximum law of drifted Brownian motion):
 *
 *   P(touch by T) = Φ((ν'T − a)/(σ√T)) + e^{2ν'a/σ²} Φ((−ν'T − a)/(σ√T)).
 *
 * The second term is computed as φ((a − ν'T)/(σ√T))·M((a + ν'T)/(σ√T)) with M the Mills ratio
 * Φ(−u)/φ(u) (the exponents combine exactly), so it neither overflows for small σ nor loses
 * precision when both factors are extreme.
 */
import { normCdf, normMills, normPdf } from './normal.js';
import type { TouchInputs } from './types.js';

const TINY_SD = 1e-15;

/**
 * Probability that the spot touches `level` at some time in [0, T] (either direction; a level
 * equal to the spot counts as touched: 1). T ≤ 0: 1 if level == S, else 0. σ√T = 0: the path is
 * the certain exponential S e^{(drift − q)t}, touched if it gets there by T. The drift is taken as
 * known (`driftSe` is not read: touchProbPredictive mixes over it).
 */
export function touchProb(o: TouchInputs): number {
  const { S, level, T, drift, q, sigma } = o;
  const b = Math.log(level / S);
  if (b === 0) return 1;
  const t = T > 0 ? T : 0;
  const a = Math.abs(b);
  const sd = sigma * Math.sqrt(t);
  if (!(sd > TINY_SD)) {
    const towards = (b > 0 ? 1 : -1) * (drift - q) * t;
    return towards >= a ? 1 : 0;
  }
  const nu = (b > 0 ? 1 : -1) * (drift - q - 0.5 * sigma * sigma);
  const nt = nu * t;
  const first = normCdf((nt - a) / sd);
  const u = (a + nt) / sd;
  let second: number;
  if (u > 0) {
    second = normPdf((a - nt) / sd) * normMills(u);
  } else {
    // drift away from the level strong enough that ν' < 0: the exponential is small, no overflow
    second = Math.exp((2 * nu * a) / (sigma * sigma)) * normCdf(-u);
  }
  const p = first + second;
  return p > 1 ? 1 : p;
}

/**
 * Probability that the spot ends at or beyond `level` at T: P(S_T ≥ level) when level ≥ S (a
 * level equal to the spot is taken upward), P(S_T ≤ level) when level < S. σ√T = 0 or T ≤ 0:
 * 1 if the certain end point is at or beyond the level, else 0. The drift is taken as known
 * (`driftSe` is not read: probBeyondAtEndPredictive widens the law by it).
 */
export function probBeyondAtEnd(o: TouchInputs): number {
  const { S, level, T, drift, q, sigma } = o;
  const b = Math.log(level / S);
  const dir = b >= 0 ? 1 : -1;
  const a = Math.abs(b);
  const t = T > 0 ? T : 0;
  const sd = sigma * Math.sqrt(t);
  if (!(sd > TINY_SD)) return dir * (drift - q) * t >= a ? 1 : 0;
  const nt = dir * (drift - q - 0.5 * sigma * sigma) * t;
  return normCdf((nt - a) / sd);
}
