/**
 * Implied volatility of a European option under Black-Scholes-Merton with a dividend yield.
 *
 * Method (after the normalisation of P. Jäckel, "Let's be rational", Wilmott 2015, with our own
 * simpler iteration):
 *
 * 1. Normalise. With F e^{−rT} = S e^{−qT}, x = ln(S e^{−qT} / K e^{−rT}) and
 *    N = √(S e^{−qT} · K e^{−rT}), a call is worth N·b(x, s) with s = σ√T and
 *    b = e^{x/2} Φ(x/s + s/2) − e^{−x/2} Φ(x/s − s/2). Subtracting the no-arbitrage lower bound
 *    (put-call parity) and using b(x, s, call) = b(−x, s, put) turns every input into an
 *    out-of-the-money call with x ≤ 0 and normalised price b* = (price − lower bound)/N; its
 *    distance to the upper bound is g* = (upper bound − price)/N = e^{x/2} − b*.
 * 2. Write both sides through the Mills ratio M(u) = Φ(−u)/φ(u) (no exponential, no underflow):
 *    with d1 = x/s + s/2, d2 = x/s − s/2 and b' = ∂b/∂s = e^{x/2} φ(d1),
 *      below the inflection point s_c = √(2|x|) (d1 < 0):  b = b'·(M(−d1) − M(−d2)),
 *      above it (d1 ≥ 0):                                  g = e^{x/2} − b = b'·(M(d1) + M(−d2)),
 *    and ln b' = x/2 − d1²/2 − ln√(2π). So ln b and ln g are exact even for prices far below the
 *    smallest double's square and the iteration works on logarithms, which are close to linear
 *    in s on each branch.
 *    Above s_c but with b* < e^{x/2}/4 (near the money with a small σ√T), g* has lost the digits
 *    b* carries, so there the iteration uses ln b with
 *      b = sinh(x/2) + e^{x/2}(Φ(d1) − ½) − e^{−x/2}(Φ(d2) − ½),
 *    where Φ − ½ comes straight from Cody's central rational function (normCdfMinusHalf).
 * 3. Initial guess: on the lower branch the leading asymptotic ln b ≈ −x²/(2s²), which lies to
 *    the left of the root; on the upper branch g ≈ (e^{x/2} + e^{−x/2}) Φ(−s/2), exact at x = 0.
 * 4. Halley's iteration on f = ln b − ln b* or ln g − ln g*, with analytic
 *    second derivative b''/b' = x²/s³ − s/4, kept inside a bracket (bisection if a step
 *    leaves it), until the step is below 1e−11·s (then taken: the error left is
 *    far below the rounding noise of the inputs).
 */
import type { IvInputs, OptionInputs } from './types.js';
import { normCdfMinusHalf, normInv, normMills } from './normal.js';

export type IvResult =
  | { ok: true; iv: number; vega: number }
  | { ok: false; message: string; bound: 'lower' | 'upper'; boundValue: number };

const LN_SQRT_2PI = 0.918938533204672741780329736406;
const MILLS_0 = 1.2533141373155002512078826424055; // M(0) = √(π/2)
const MAX_ITER = 60;
const SQRT_2PI = 2.506628274631000502415765284811;

/** No implied vol: the bound the price is at or beyond, its value, and why (shared by every solver). */
export function noIv(bound: 'lower' | 'upper', boundValue: number, message: string): IvResult {
  return { ok: false, bound, boundValue, message };
}

/**
 * The failure an implied-vol solver returns for inputs the request layer should never pass: S, K
 * or T not positive (T = 0 allowed when `expiredOk`), anything not finite, or `othersOk` false
 * (e.g. invalid jumps); undefined when the inputs are fine.
 */
export function badIvInputs(o: Pick<OptionInputs, 'S' | 'K' | 'T' | 'r' | 'q'>, price: number, expiredOk: boolean, othersOk = true): IvResult | undefined {
  const { S, K, T, r, q } = o;
  const tOk = expiredOk ? T >= 0 : T > 0;
  if (S > 0 && K > 0 && tOk && othersOk && [price, S, K, T, r, q].every(Number.isFinite)) return undefined;
  return noIv('lower', 0, 'implied vol needs a finite price and positive spot, strike and time to expiry');
}

function fmt(v: number): string {
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-4 && a < 1e9) return String(Number(v.toPrecision(6)));
  return v.toExponential(4);
}

/**
 * The volatility σ at which bsmValue({ ...o, sigma: σ }) equals `price`, with the vega per
 * vol point at that σ. Prices at or below the no-arbitrage lower bound (the discounted intrinsic
 * of the forward, max(±(S e^{−qT} − K e^{−rT}), 0)) or at or above the upper bound (S e^{−qT}
 * for a call, K e^{−rT} for a put) have no implied vol and return ok:false naming the bound.
 * Inputs the request layer should never pass (S, K or T not positive, anything not finite) also
 * return ok:false (bound 'lower') with a message saying so.
 */
export function impliedVol(o: IvInputs, price: number): IvResult {
  const bad = badIvInputs(o, price, false);
  if (bad) return bad;
  const { kind, S, K, T, r, q } = o;
  const fS = S * Math.exp(-q * T);
  const fK = K * Math.exp(-r * T);
  const isCall = kind === 'call';
  const lower = Math.max(isCall ? fS - fK : fK - fS, 0);
  const upper = isCall ? fS : fK;
  if (!(price > lower)) {
    return noIv(
      'lower',
      lower,
      `price ${fmt(price)} is at or below the no-arbitrage lower bound ${fmt(lower)} ` +
        `(the discounted intrinsic value of the forward, max(${isCall ? 'S·e^(−qT) − K·e^(−rT)' : 'K·e^(−rT) − S·e^(−qT)'}, 0)); ` +
        'no volatility gives a price that low',
    );
  }
  if (!(price < upper)) {
    return noIv(
      'upper',
      upper,
      `price ${fmt(price)} is at or above the no-arbitrage upper bound ${fmt(upper)} ` +
        `(${isCall ? 'the stock less its dividends, S·e^(−qT)' : 'the discounted strike, K·e^(−rT)'}); ` +
        'no volatility gives a price that high',
    );
  }
  const norm = Math.sqrt(fS) * Math.sqrt(fK);
  const x = -Math.abs(Math.log(fS / fK));
  const tv = (price - lower) / norm; // b*
  const hr = (upper - price) / norm; // g*
  const sol = solveNormalised(x, tv, hr);
  const sqT = Math.sqrt(T);
  return { ok: true, iv: sol.s / sqT, vega: norm * sqT * sol.dbds * 0.01 };
}

interface Solved {
  s: number;
  /** ∂b/∂s at the solution */
  dbds: number;
}

/** ln of b' = e^{x/2} φ(d1). */
function lnDbds(x: number, d1: number): number {
  return 0.5 * x - 0.5 * d1 * d1 - LN_SQRT_2PI;
}

/**
 * Solve b(x, s) = b* for s (x ≤ 0, 0 < b* < e^{x/2}); hr = e^{x/2} − b* supplied separately
 * at full precision.
 */
function solveNormalised(x: number, tv: number, hr: number): Solved {
  const lnTv = Math.log(tv);
  const sc = Math.sqrt(-2 * x);
  let lower = false;
  let lnBc = 0;
  if (x < 0) {
    // b at the inflection point s_c (d1 = 0): b' = e^{x/2} φ(0), M(0) − M(s_c)
    lnBc = 0.5 * x - LN_SQRT_2PI + Math.log(MILLS_0 - normMills(sc));
    lower = lnTv < lnBc;
  }
  const e = Math.exp(0.5 * x);
  // Above s_c with b* small against e^{x/2} (near the money, σ√T small) g* = e^{x/2} − b* has
  // lost the digits that b* carries: there iterate on ln b instead, with
  // b = sinh(x/2) + e^{x/2}(Φ(d1) − ½) − e^{−x/2}(Φ(d2) − ½), free of cancellation when |x| ≪ s.
  const central = !lower && tv < 0.25 * e;
  // The at-the-money guess: g ≈ (e^{x/2} + e^{−x/2}) Φ(−s/2), exact at x = 0 and good while
  // |x| ≪ s.
  let sAtm = -2 * normInv(hr / (e + 1 / e));
  if (!(sAtm < Infinity)) sAtm = Math.max(2 * sc, 1);
  const x2 = x * x;
  const sh = Math.sinh(0.5 * x);
  let s: number;
  let lo: number;
  let hi: number;
  if (lower) {
    lo = 0;
    hi = sc;
    // s² = 2x²/(|x| − 4 ln(b*/b_c)): equals s_c at b* = b_c and tends to the tail asymptotic
    // ln b ≈ −x²/(2s²) as b* → 0 (a lower estimate of the root there).
    const sTail = Math.sqrt((2 * x2) / (-x - 4 * (lnTv - lnBc)));
    s = sTail < -0.5 * x ? sTail : Math.max(sTail, Math.min(sAtm, sc));
  } else {
    lo = sc;
    hi = Infinity;
    // near the money b ≈ e^{x/2} s/√(2π) for small s
    s = Math.max(central ? Math.max(sAtm, (SQRT_2PI * tv) / e) : sAtm, sc);
  }
  if (!(s > 0)) s = Math.max(SQRT_2PI * tv, 1e-300);
  // f is increasing in s when it is ln b (lower, central) and decreasing when it is ln g
  const inc = lower || central;
  const lnTarget = inc ? lnTv : Math.log(hr);
  for (let i = 0; i < MAX_ITER; i++) {
    const h = x / s;
    const d1 = h + 0.5 * s;
    const d2 = h - 0.5 * s;
    // w = b/b' (lower, central) or g/b' (upper); f' = ±1/w
    const lnB1 = lnDbds(x, d1);
    const w = lower
      ? normMills(-d1) - normMills(-d2)
      : central
        ? (sh + e * normCdfMinusHalf(d1) - normCdfMinusHalf(d2) / e) / Math.exp(lnB1)
        : normMills(d1) + normMills(-d2);
    const f = lnB1 + Math.log(w) - lnTarget;
    if ((f < 0) === inc) lo = Math.max(lo, s);
    else hi = Math.min(hi, s);
    const inv = 1 / w;
    const fp = inc ? inv : -inv;
    const fpp = fp * (x2 / (s * s * s) - 0.25 * s) - inv * inv;
    const newton = -f / fp;
    const den = 1 + (0.5 * newton * fpp) / fp; // 1 − f f''/(2 f'²)
    const step = den > 0.5 ? newton / den : newton;
    if (!(w > 0 && w < Infinity) || f === 0) break;
    // Halley is cubic (Newton quadratic): after a step this small the next would be far below
    // the rounding of the inputs.
    if (Math.abs(step) <= 1e-11 * s) {
      if (s + step > 0) s += step;
      break;
    }
    const next = s + step;
    // a step leaving the bracket falls back to bisection (geometric when both ends are finite)
    s = next > lo && next < hi ? next : hi < Infinity ? (lo > 0 ? Math.sqrt(lo * hi) : 0.5 * hi) : 2 * s;
  }
  const dbds = Math.exp(lnDbds(x, x / s + 0.5 * s));
  return { s, dbds: dbds < Infinity ? dbds : 0 };
}
