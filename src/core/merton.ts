/**
 * Merton (1976) jump diffusion: European values and Greeks as a Poisson-weighted series of
 * Black-Scholes-Merton values.
 *
 * The spot follows dS/S = (r − q − λκ) dt + σ dW + (J − 1) dN under the risk-neutral walk, N a
 * Poisson process of intensity λ, ln J ~ N(m, δ²), κ = E[J − 1] = e^{m+δ²/2} − 1 (the
 * compensator keeps E[S_T] = S e^{(r−q)T}). Conditioning on n jumps by T gives the standard
 * series (Merton, "Option pricing when underlying stock returns are discontinuous", J. Financial
 * Economics 3, 1976):
 *
 *   V = Σₙ wₙ · BSM(S, K, T, rₙ, q, σₙ),   wₙ = e^{−λ'T}(λ'T)ⁿ/n!,   λ' = λ(1+κ),
 *   σₙ² = σ² + nδ²/T,   rₙ = r − λκ + n·ln(1+κ)/T.
 *
 * (wₙ e^{−rₙT} = e^{−rT}·Poisson(λT)ₙ, so the mixture is the discounted payoff averaged over the
 * number of jumps.) The series is cut when a bound on the remaining terms falls below 1e−15 of
 * the scale of the option: each call term is at most S e^{−qT} (weights in λ'T) and each put term
 * at most K e^{−rₙT} (weights then combine to Poisson(λT)), and the Poisson tail beyond n is at
 * most wₙ₊₁/(1 − μ/(n+2)) once n + 2 > μ (ratio bound).
 *
 * Greeks (docs/design.md §3 units) are analytic term by term: delta, gamma as sums; vega with respect
 * to the diffusion σ (∂σₙ/∂σ = σ/σₙ); rho with ∂rₙ/∂r = 1; theta from ∂/∂T of the weights, of rₙ
 * and σₙ and of the BSM term.
 */
import { bsmGreeks, bsmValue } from './bsm.js';
import type { IvResult } from './iv.js';
import type { Greeks, IvInputs, Jumps, OptionInputs, OptionKind } from './types.js';
import { logFactorial } from './numeric/special.js';
import { hasJumps, jumpCompensator } from './jumps.js';
import { checkMarketInputs } from './inputs.js';

const TAIL = 1e-15;
const MAX_TERMS = 20000;


/** Jumps that act before expiry (the series reduces to BSM otherwise). */
function jumpsAct(j: Jumps | undefined, T: number): j is Jumps {
  return hasJumps(j) && T > 0;
}

const NAMES = { S: 'spot', K: 'strike', T: 'time', rq: 'rate and yield', sigma: 'sigma' };

function checkInputs(o: OptionInputs, j: Jumps): void {
  checkMarketInputs('merton', NAMES, o);
  if (!(Number.isFinite(j.intensity) && j.intensity >= 0)) throw new RangeError(`merton: jump intensity must be finite and ≥ 0 (got ${j.intensity})`);
  if (!Number.isFinite(j.mean)) throw new RangeError(`merton: mean log jump must be finite (got ${j.mean})`);
  if (!(Number.isFinite(j.sd) && j.sd >= 0)) throw new RangeError(`merton: s.d. of the log jump must be finite and ≥ 0 (got ${j.sd})`);
}

interface Term {
  n: number;
  /** weight wₙ in λ'T */
  w: number;
  rn: number;
  sn: number;
}

/**
 * Visits the terms of the series in order n = 0, 1, … until the bound on the remaining ones is
 * below TAIL·(S + K).
 */
function forTerms(kind: OptionKind, S: number, K: number, T: number, r: number, q: number, sigma: number, j: Jumps, visit: (t: Term) => void): void {
  const kappa = jumpCompensator(j);
  const lnJ = j.mean + 0.5 * j.sd * j.sd; // ln(1+κ)
  const lp = j.intensity * (1 + kappa) * T; // λ'T
  const lam = j.intensity * T; // λT
  const logLp = Math.log(lp);
  const s2 = sigma * sigma;
  const d2T = (j.sd * j.sd) / T;
  // call terms: ≤ S e^{−qT}·wₙ(λ'T); put terms: ≤ K e^{−rT}·Poissonₙ(λT)
  const mean = kind === 'call' ? lp : lam;
  const bound = kind === 'call' ? S * Math.exp(-q * T) : K * Math.exp(-r * T);
  const tol = TAIL * (S + K);
  const logMean = Math.log(mean);
  // weights by recursion (wₙ₊₁ = wₙ·λ'T/(n+1)) while e^{−λ'T} is representable, else in logs
  const recurse = lp < 600 && mean < 600;
  let w = Math.exp(-lp);
  let pn = Math.exp(-mean); // Poisson(mean) weight of n, for the stopping rule
  const rBase = r - j.intensity * kappa;
  for (let n = 0; n < MAX_TERMS; n++) {
    if (!recurse) {
      const lf = logFactorial(n);
      w = Math.exp(-lp + n * logLp - lf);
      pn = Math.exp(-mean + n * logMean - lf);
    }
    visit({ n, w, rn: rBase + (n * lnJ) / T, sn: Math.sqrt(s2 + n * d2T) });
    const pNext = pn * (mean / (n + 1));
    if (n + 2 > mean && (pNext / (1 - mean / (n + 2))) * bound < tol) break;
    if (recurse) {
      w *= lp / (n + 1);
      pn = pNext;
    }
  }
}

/** Merton jump-diffusion value per share of a European call or put. */
export function mertonValue(o: OptionInputs, jumps: Jumps): number {
  checkInputs(o, jumps);
  const { kind, S, K, T, r, q } = o;
  if (!jumpsAct(jumps, T)) return bsmValue(o);
  let v = 0;
  // a record written per term (V8 inlines bsmValue here and drops the allocation); forTerms keeps
  // its numbers as parameters: reading them from the record there measured 10% slower
  forTerms(kind, S, K, T, r, q, o.sigma, jumps, (t) => {
    if (t.w > 0) v += t.w * bsmValue({ kind, S, K, T, r: t.rn, q, sigma: t.sn });
  });
  // no-arbitrage bounds (rounding only)
  const fS = S * Math.exp(-q * T);
  const fK = K * Math.exp(-r * T);
  return kind === 'call' ? Math.min(Math.max(v, fS - fK, 0), fS) : Math.min(Math.max(v, fK - fS, 0), fK);
}

/** Value and Greeks per share under Merton jumps (vega: per vol point of the diffusion σ). */
export function mertonGreeks(o: OptionInputs, jumps: Jumps): Greeks {
  checkInputs(o, jumps);
  const { kind, S, K, T, r, q, sigma } = o;
  if (!jumpsAct(jumps, T)) return bsmGreeks(o);
  const lp = jumps.intensity * (1 + jumpCompensator(jumps)) * T;
  const lnJ = jumps.mean + 0.5 * jumps.sd * jumps.sd;
  const d2 = jumps.sd * jumps.sd;
  let value = 0;
  let delta = 0;
  let gamma = 0;
  let vega = 0;
  let rho = 0;
  let dVdT = 0;
  // a record written per term, as in mertonValue
  forTerms(kind, S, K, T, r, q, sigma, jumps, (t) => {
    if (!(t.w > 0)) return;
    const g = bsmGreeks({ kind, S, K, T, r: t.rn, q, sigma: t.sn });
    const w = t.w;
    value += w * g.value;
    delta += w * g.delta;
    gamma += w * g.gamma;
    // ∂σₙ/∂σ = σ/σₙ (σₙ = 0 only when σ = 0 and n = 0 or δ = 0; then σₙ = σ and the ratio is 1)
    vega += w * g.vega * (t.sn > 0 ? sigma / t.sn : 1);
    rho += w * g.rho;
    // d/dT of wₙ·B(T, rₙ(T), σₙ(T)):
    //   wₙ' = wₙ(n/T − λ'),  rₙ' = −n ln(1+κ)/T²,  σₙ' = −nδ²/(2T²σₙ)
    const bT = -365 * g.theta; // ∂B/∂T
    const bR = 100 * g.rho; // ∂B/∂r
    const bS = 100 * g.vega; // ∂B/∂σ
    const rnT = (-t.n * lnJ) / (T * T);
    const snT = t.sn > 0 ? (-t.n * d2) / (2 * T * T * t.sn) : 0;
    dVdT += w * (t.n / T - lp / T) * g.value + w * (bT + bR * rnT + bS * snT);
  });
  return { value, delta, gamma, vega, theta: -dVdT / 365, rho };
}

/**
 * The diffusion volatility σ at which the Merton value equals `price` (jumps fixed), with the
 * vega per vol point there. The value rises with σ from its σ = 0 level (jumps only) towards
 * S e^{−qT} (call) or K e^{−rT} (put); prices outside that range have no solution and return
 * ok:false naming the bound. Safeguarded Newton inside a bisection bracket on [0, 10].
 */
export function mertonImpliedVol(o: IvInputs, price: number, jumps: Jumps): IvResult {
  const { kind, S, K, T, r, q } = o;
  if (!(S > 0 && K > 0 && T > 0) || ![price, S, K, T, r, q, jumps.intensity, jumps.mean, jumps.sd].every(Number.isFinite) || jumps.intensity < 0 || jumps.sd < 0) {
    return { ok: false, bound: 'lower', boundValue: 0, message: 'implied vol needs a finite price, positive spot, strike and time to expiry, and valid jumps' };
  }
  const lowerV = mertonValue({ kind, S, K, T, r, q, sigma: 0 }, jumps);
  const upperV = kind === 'call' ? S * Math.exp(-q * T) : K * Math.exp(-r * T);
  const tol = 1e-12 * Math.max(1, S, K);
  if (!(price > lowerV + tol)) {
    return {
      ok: false,
      bound: 'lower',
      boundValue: lowerV,
      message: `price ${fmt(price)} is not above ${fmt(lowerV)}, the value with no diffusion volatility (jumps alone), so no volatility fits`,
    };
  }
  if (!(price < upperV - tol)) {
    return {
      ok: false,
      bound: 'upper',
      boundValue: upperV,
      message: `price ${fmt(price)} is not below the upper bound ${fmt(upperV)} (${kind === 'call' ? 'S e^{−qT}' : 'K e^{−rT}'})`,
    };
  }
  let lo = 0;
  let hi = 10;
  const vHi = mertonValue({ kind, S, K, T, r, q, sigma: hi }, jumps);
  if (!(vHi > price)) {
    return { ok: false, bound: 'upper', boundValue: vHi, message: `price ${fmt(price)} needs a volatility above 1000%` };
  }
  let s = 0.3;
  const at = { kind, S, K, T, r, q, sigma: s };
  for (let it = 0; it < 200; it++) {
    at.sigma = s;
    const g = mertonGreeks(at, jumps);
    const f = g.value - price;
    if (f > 0) hi = s;
    else lo = s;
    const vegaUnit = g.vega * 100; // ∂V/∂σ
    let next = vegaUnit > 0 ? s - f / vegaUnit : NaN;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - s) < 1e-12 * Math.max(1, s) || hi - lo < 1e-14) {
      s = next;
      break;
    }
    s = next;
  }
  at.sigma = s;
  const vega = mertonGreeks(at, jumps).vega;
  return { ok: true, iv: s, vega };
}

function fmt(v: number): string {
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-4 && a < 1e9) return String(Number(v.toPrecision(6)));
  return v.toExponential(4);
}
