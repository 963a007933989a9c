/**
 * American options by finite differences on the Kolmogorov backward (Black-Scholes-Merton)
 * equation, optionally with Merton jumps (then a partial integro-differential equation).
 *
 * In x = ln S and τ = time to expiry the value V(x, τ) solves
 *
 *     V_τ = ½σ² V_xx + (r − q − λκ − ½σ²) V_x − (r + λ) V + λ ∫ V(x + y) f(y) dy,
 *     V(x, 0) = payoff,   V ≥ payoff (early exercise),
 *
 * with λ = 0 without jumps (f: the normal density of the log jump, κ = e^{m+δ²/2} − 1). Method:
 *
 * - grid in x stretched by sinh around ln K (x = ln K + c·sinh ξ, ξ uniform), with the strike
 *   exactly on a node and the spacing adjusted so that the spot is a node too (no interpolation
 *   at the spot); three-point non-uniform differences (upwinded convection only at a node where the
 *   central form would lose the M-matrix signs); the payoff at the strike node averaged over its
 *   cell (smoothing of the initial data);
 * - time steps graded towards expiry (τ_k = T·(k/M)²). Default: two fully implicit start-up steps
 *   (they damp the payoff's kink) then variable-step BDF2, second order and L-stable. The
 *   alternative kept in solveBackward, Crank-Nicolson with the first four steps replaced by pairs
 *   of implicit half steps (Rannacher smoothing), prices as well but leaves undamped
 *   high-frequency noise from the exercise boundary moving across nodes (Crank-Nicolson's
 *   amplification factor tends to −1 for stiff modes), about ±0.2% in gamma at normal accuracy
 *   and worse as the grid is refined at a fixed number of steps; BDF2 damps it;
 * - the early-exercise constraint by the Brennan-Schwartz algorithm (Thomas elimination in the
 *   direction that ends in the exercise region, projecting during back substitution) whenever the
 *   exercise region is a single interval at one end of the grid (a put with r > 0, a call with
 *   q > 0); by projected SOR otherwise (negative rates with q < r for a put, r < q for a call, where
 *   the continuation region can be an interval between two boundaries); no projection where early
 *   exercise is never optimal;
 * - Dirichlet boundaries at both ends from the asymptotes: far out of the money 0, deep in the
 *   money max(intrinsic, S e^{−qτ} − K e^{−rτ}) for a call, max(intrinsic, K e^{−rτ} − S e^{−qτ})
 *   for a put;
 * - jumps: the integral of the piecewise-linear node values against the normal density in closed
 *   form (Φ and φ at the nodes: weights computed once per grid), plus the parts beyond the grid
 *   where V follows its asymptote (closed form too); treated explicitly, at the old level in the
 *   implicit start-up steps and extrapolated linearly in the BDF2 steps;
 * - the figure at the spot: Richardson extrapolation (4·V_fine − V_coarse)/3 over two solves whose
 *   space steps differ by exactly 2 and time steps by 2 (both errors are O(h²) and O(Δt²)).
 *
 * Accuracy ('normal': 140/280 space intervals, 70/140 time steps): a few 1e-6 typically and
 * within 1e-4 (worst seen 7e-5) of a Broadie-Detemple tree on random cases; spots within a few
 * percent of the exercise boundary are the hardest. Units of the Greeks follow DESIGN.md §3
 * (per share; vega per vol point of the diffusion σ; theta per calendar day; rho per 1% of rate).
 */
import type { IvResult } from './iv.js';
import { normCdf, normPdf } from './normal.js';
import type { Greeks, Jumps, OptionKind } from './types.js';
import { brentRoot } from './numeric.js';

export interface AmericanOptions {
  /** 'normal': about 1e-4 absolute on typical cases; 'fine': about 1e-5, several times slower. */
  accuracy?: 'normal' | 'fine';
  /**
   * Merton jumps (intensity per year, mean and s.d. of the log jump); σ is then the diffusion's
   * volatility and the drift is compensated. The backward equation gains the jump integral
   * (a PIDE), treated explicitly.
   */
  jumps?: Jumps;
}

/** Grid sizes: space intervals and time steps. */
export interface FdSize {
  nx: number;
  nt: number;
}

// ---------------------------------------------------------------------------------------------
// grid

/**
 * Nodes in x: ln K + c·sinh(ξ), ξ uniform with spacing chosen from `n` intervals over the
 * requested span, extended outwards so that ξ = 0 (the strike) is exactly a node. With `xOn`
 * given, the spacing is shrunk (never widened) so that xOn is a node too, unless it lies within
 * half a step of the strike (then the caller interpolates). `refine` divides the spacing so chosen (and keeps both
 * nodes).
 */
function sinhGrid(xK: number, xLo: number, xHi: number, n: number, c: number, xOn?: number, refine = 1): Float64Array {
  const lo = Math.asinh((xLo - xK) / c);
  const hi = Math.asinh((xHi - xK) / c);
  let d = (hi - lo) / n;
  let kOn = 0;
  let xiOn = 0;
  if (xOn !== undefined) {
    xiOn = Math.asinh((xOn - xK) / c);
    const ratio = Math.abs(xiOn) / d;
    const k = Math.ceil(ratio - 1e-9);
    if (ratio >= 0.5) {
      d = Math.abs(xiOn) / k;
      kOn = xiOn > 0 ? k : -k;
    }
  }
  // a refined grid divides exactly the spacing of the base one, as Richardson needs
  d /= refine;
  kOn *= refine;
  const nLo = Math.max(1, Math.ceil(-lo / d - 1e-9));
  const nHi = Math.max(1, Math.ceil(hi / d - 1e-9));
  const x = new Float64Array(nLo + nHi + 1);
  for (let i = -nLo; i <= nHi; i++) x[i + nLo] = xK + c * Math.sinh(i * d);
  x[nLo] = xK;
  if (kOn !== 0 && xOn !== undefined) x[nLo + kOn] = xOn;
  return x;
}

interface Problem {
  kind: OptionKind;
  K: number;
  T: number;
  r: number;
  q: number;
  sigma: number;
  jumps?: Jumps;
}

/** Jumps that matter (intensity > 0), else undefined. */
function activeJumps(j: Jumps | undefined): Jumps | undefined {
  return j && j.intensity > 0 ? j : undefined;
}

/** Standard deviation of ln S_T: diffusion and jumps together. */
function totalSd(p: Problem): number {
  const j = p.jumps;
  const v = p.sigma * p.sigma + (j ? j.intensity * (j.mean * j.mean + j.sd * j.sd) : 0);
  return Math.sqrt(v * p.T);
}

/** Half-width of the grid in x (from ln K), enough that the boundaries do not matter. */
function halfWidth(p: Problem, sds: number): number {
  const s = totalSd(p);
  const j = p.jumps;
  const comp = j ? j.intensity * Math.expm1(j.mean + 0.5 * j.sd * j.sd) : 0;
  const nu = Math.abs(p.r - p.q - 0.5 * p.sigma * p.sigma - comp) * p.T;
  return sds * s + nu + 0.02;
}

// ---------------------------------------------------------------------------------------------
// the jump integral (Merton jumps): ∫ V(x + y) f(y) dy with y ~ N(m, δ²)

/**
 * The jump integral as weights on the node values (V piecewise linear between nodes, integrated
 * exactly against the normal density: Φ and φ at the nodes) plus the parts beyond the grid, where
 * V follows its asymptote A − B·e^x below (put) or B·e^x − A above (call): those are kept as the
 * mass and the e^x-moment of the density beyond each end.
 */
interface JumpOp {
  lam: number;
  kappa: number;
  /** for interior node i: weights w[off[i] .. off[i] + len[i]) on nodes from[i] … */
  from: Int32Array;
  len: Int32Array;
  off: Int32Array;
  w: Float64Array;
  /** beyond the low end: P(x + y < x₀) and E[e^{x+y}; x + y < x₀]; likewise beyond the high end */
  lo0: Float64Array;
  lo1: Float64Array;
  hi0: Float64Array;
  hi1: Float64Array;
}

const jumpCache = new WeakMap<Float64Array, { m: number; d: number; lam: number; op: JumpOp }>();

function jumpOperator(x: Float64Array, j: Jumps): JumpOp {
  const hit = jumpCache.get(x);
  if (hit && hit.m === j.mean && hit.d === j.sd && hit.lam === j.intensity) return hit.op;
  const n = x.length;
  const last = n - 1;
  const m = j.mean;
  const d = j.sd;
  const from = new Int32Array(n);
  const len = new Int32Array(n);
  const off = new Int32Array(n);
  const lo0 = new Float64Array(n);
  const lo1 = new Float64Array(n);
  const hi0 = new Float64Array(n);
  const hi1 = new Float64Array(n);
  const rows: Float64Array[] = [];
  let total = 0;
  const Phi = new Float64Array(n);
  const phi = new Float64Array(n);
  const growth = Math.exp(m + 0.5 * d * d);
  for (let i = 1; i < last; i++) {
    const c = x[i] + m; // centre of x + y
    const row = new Float64Array(n);
    let kLo = last;
    let kHi = 0;
    if (d > 1e-10) {
      const zLo = (x[0] - c) / d;
      const zHi = (x[last] - c) / d;
      lo0[i] = normCdf(zLo);
      lo1[i] = Math.exp(x[i]) * growth * normCdf(zLo - d);
      hi0[i] = normCdf(-zHi);
      hi1[i] = Math.exp(x[i]) * growth * normCdf(d - zHi);
      for (let k = 0; k < n; k++) {
        const u = (x[k] - c) / d;
        Phi[k] = normCdf(u);
        phi[k] = normPdf(u);
      }
      for (let k = 0; k < last; k++) {
        const P = Phi[k + 1] - Phi[k];
        if (P < 1e-300 && phi[k] === 0 && phi[k + 1] === 0) continue;
        const h = x[k + 1] - x[k];
        const Q = d * (phi[k] - phi[k + 1]);
        const wk1 = ((c - x[k]) * P + Q) / h; // ∫ t over the cell, t = (x − x_k)/h
        row[k] += P - wk1;
        row[k + 1] += wk1;
        if (k < kLo) kLo = k;
        if (k + 1 > kHi) kHi = k + 1;
      }
    } else {
      // a fixed jump size: V(x_i + m), linear between nodes
      if (c < x[0]) {
        lo0[i] = 1;
        lo1[i] = Math.exp(c);
      } else if (c > x[last]) {
        hi0[i] = 1;
        hi1[i] = Math.exp(c);
      } else {
        let k = 0;
        while (k < last - 1 && x[k + 1] < c) k++;
        const t = (c - x[k]) / (x[k + 1] - x[k]);
        row[k] = 1 - t;
        row[k + 1] = t;
        kLo = k;
        kHi = k + 1;
      }
    }
    if (kHi >= kLo) {
      from[i] = kLo;
      len[i] = kHi - kLo + 1;
      rows[i] = row.subarray(kLo, kHi + 1);
      total += len[i];
    }
  }
  const w = new Float64Array(total);
  let o = 0;
  for (let i = 1; i < last; i++) {
    off[i] = o;
    if (len[i] > 0) {
      w.set(rows[i], o);
      o += len[i];
    }
  }
  const op: JumpOp = { lam: j.intensity, kappa: Math.expm1(m + 0.5 * d * d), from, len, off, w, lo0, lo1, hi0, hi1 };
  jumpCache.set(x, { m, d: j.sd, lam: j.intensity, op });
  return op;
}

// ---------------------------------------------------------------------------------------------
// solver

interface Solution {
  x: Float64Array;
  /** payoff (the obstacle) at the nodes */
  g: Float64Array;
  /** values at τ = T */
  v: Float64Array;
  /** values at the two previous time levels (for theta), newest first */
  v1: Float64Array;
  v2: Float64Array;
  /** τ of v, v1, v2 */
  t0: number;
  t1: number;
  t2: number;
}

function payoff(kind: OptionKind, S: number, K: number): number {
  return kind === 'call' ? Math.max(S - K, 0) : Math.max(K - S, 0);
}

/** Value on the boundary nodes at time to expiry τ. */
function boundaryValue(p: Problem, S: number, tau: number, american: boolean): number {
  const { kind, K, r, q } = p;
  const fwd = kind === 'call' ? S * Math.exp(-q * tau) - K * Math.exp(-r * tau) : K * Math.exp(-r * tau) - S * Math.exp(-q * tau);
  const eu = Math.max(fwd, 0);
  return american ? Math.max(eu, payoff(kind, S, K)) : eu;
}

/**
 * One backward solve from expiry to τ = T on the nodes `x` with `nt` graded time steps
 * (τ_k = T·((1−β)u + βu²), u = k/nt). Scheme 'bdf2' (default): the first max(2, rannacher/2)
 * steps implicit Euler, then variable-step BDF2; 'cn': the first `rannacher` steps each as two
 * implicit half steps, the rest Crank-Nicolson. `american` false solves the European problem with
 * the same machinery (used to check the discretisation against BSM and the Merton series);
 * `jumps` adds the Merton jump integral (explicit: extrapolated to the new level for BDF2, to
 * mid-step for Crank-Nicolson).
 */
export function solveBackward(
  kind: OptionKind,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  x: Float64Array,
  nt: number,
  american = true,
  beta = 1,
  rannacher = 4,
  smoothKink = true,
  jumps?: Jumps,
  scheme: 'cn' | 'bdf2' = 'bdf2',
): Solution {
  const p: Problem = { kind, K, T, r, q, sigma };
  const n = x.length;
  const last = n - 1;
  const S0 = Math.exp(x[0]);
  const Sn = Math.exp(x[last]);
  const g = new Float64Array(n);
  for (let i = 0; i < n; i++) g[i] = payoff(kind, Math.exp(x[i]), K);
  // spatial operator L V_i = a_i V_{i-1} + b_i V_i + c_i V_{i+1}
  const a = new Float64Array(n);
  const b = new Float64Array(n);
  const c = new Float64Array(n);
  const hs = 0.5 * sigma * sigma;
  const jop = jumps && jumps.intensity > 0 ? jumpOperator(x, jumps) : null;
  const lam = jop ? jop.lam : 0;
  // with jumps: compensated drift, and the −λV of the jump term kept implicit with the rest
  const mu = r - q - hs - (jop ? lam * jop.kappa : 0);
  for (let i = 1; i < last; i++) {
    const hm = x[i] - x[i - 1];
    const hp = x[i + 1] - x[i];
    const am = (2 * hs) / (hm * (hm + hp));
    const cp = (2 * hs) / (hp * (hm + hp));
    let ac = (-mu * hp) / (hm * (hm + hp));
    let bc = (mu * (hp - hm)) / (hm * hp);
    let cc = (mu * hm) / (hp * (hm + hp));
    if (am + ac < 0 || cp + cc < 0) {
      // convection dominates: one-sided difference in the upwind direction
      if (mu > 0) {
        ac = 0;
        bc = -mu / hp;
        cc = mu / hp;
      } else {
        ac = -mu / hm;
        bc = mu / hm;
        cc = 0;
      }
    }
    a[i] = am + ac;
    b[i] = -am - cp + bc - r - lam;
    c[i] = cp + cc;
  }

  // projection: 0 none, 1 exercise region at the low end (put), 2 at the high end (call), 3 PSOR
  let method = 0;
  if (american) {
    if (kind === 'put') method = r > 0 ? 1 : q >= r ? 0 : 3;
    else method = q > 0 ? 2 : r >= q ? 0 : 3;
    // (a call with q ≤ 0 ≤ … and r ≥ q is never exercised early (Merton), nor a put with r ≤ 0
    // and q ≥ r: the projection would never bind)
  }

  let v = Float64Array.from(g);
  // the payoff's kink: at a node on the strike start from the payoff averaged over the node's
  // cell [x − h₋/2, x + h₊/2] (smoothing of the initial data, with the implicit start below)
  if (smoothKink) {
    const xK = Math.log(K);
    for (let i = 1; i < last; i++) {
      if (Math.abs(x[i] - xK) > 1e-12) continue;
      const am = 0.5 * (x[i] - x[i - 1]);
      const ap = 0.5 * (x[i + 1] - x[i]);
      // ∫ of (K − e^x)⁺ below the strike and (e^x − K)⁺ above, over the cell
      const integral = kind === 'put' ? K * (am - 1 + Math.exp(-am)) : K * (Math.exp(ap) - 1 - ap);
      v[i] = integral / (am + ap);
    }
  }
  let v1 = new Float64Array(n);
  let v2 = new Float64Array(n);
  let next = new Float64Array(n);
  let t1 = 0;
  let t2 = 0;
  const rhs = new Float64Array(n);
  const ib = new Float64Array(n); // 1 / eliminated diagonal
  const dp = new Float64Array(n); // eliminated right-hand side

  // the sequence of (τ0, τ1, θ) steps
  const steps: number[] = [];
  let tau = 0;
  for (let k = 1; k <= nt; k++) {
    const u = k / nt;
    const tNext = k === nt ? T : T * ((1 - beta) * u + beta * u * u);
    if (scheme === 'bdf2') {
      // implicit Euler start (BDF2 needs two levels; whole steps keep the step ratio small)
      steps.push(tau, tNext, k <= Math.max(2, rannacher >> 1) ? 1 : 2);
    } else if (k <= rannacher) {
      const mid = 0.5 * (tau + tNext);
      steps.push(tau, mid, 1, mid, tNext, 1);
    } else {
      steps.push(tau, tNext, 0.5);
    }
    tau = tNext;
  }

  // the jump integral at the current and the previous level, and its value beyond the grid
  let jNow = new Float64Array(n);
  let jPrev = new Float64Array(n);
  let dtPrev = 0;
  const jumpIntegral = (op: JumpOp, vv: Float64Array, tau: number, out: Float64Array): void => {
    // asymptote beyond the in-the-money end: A − B·e^x (put, below) or B·e^x − A (call, above)
    const xEnd = kind === 'put' ? S0 : Sn;
    const fwdA = K * Math.exp(-r * tau);
    const fwdB = Math.exp(-q * tau);
    const useIntrinsic = american && payoff(kind, xEnd, K) >= Math.max(kind === 'put' ? fwdA - fwdB * xEnd : fwdB * xEnd - fwdA, 0);
    const A = useIntrinsic ? K : fwdA;
    const B = useIntrinsic ? 1 : fwdB;
    const { w, off, from, len, lo0, lo1, hi0, hi1 } = op;
    const put = kind === 'put';
    for (let i = 1; i < last; i++) {
      let sum = put ? A * lo0[i] - B * lo1[i] : B * hi1[i] - A * hi0[i];
      const o = off[i] - from[i];
      const end = from[i] + len[i];
      for (let k = from[i]; k < end; k++) sum += w[o + k] * vv[k];
      out[i] = sum;
    }
  };

  for (let s = 0; s < steps.length; s += 3) {
    const tau0 = steps[s];
    const tau1 = steps[s + 1];
    const theta = steps[s + 2];
    const dt = tau1 - tau0;
    const bdf = theta === 2;
    // BDF2 with variable steps, divided through by its leading coefficient c0:
    // (I − (Δt/c0) L) V¹ = (c1 V⁰ − c2 V⁻¹)/c0, ω = Δt/Δt_prev
    const w = bdf ? dt / (tau0 - t1) : 0;
    const c0 = bdf ? (1 + 2 * w) / (1 + w) : 1;
    const ex = bdf ? 0 : (1 - theta) * dt;
    const im = bdf ? dt / c0 : theta * dt;
    const v0 = boundaryValue(p, S0, tau1, american);
    const vn = boundaryValue(p, Sn, tau1, american);
    next[0] = v0;
    next[last] = vn;
    if (bdf) {
      const c1 = (1 + w) / c0;
      const c2 = (w * w) / (1 + w) / c0;
      for (let i = 1; i < last; i++) rhs[i] = c1 * v[i] - c2 * v1[i];
    } else if (ex !== 0) {
      for (let i = 1; i < last; i++) rhs[i] = v[i] + ex * (a[i] * v[i - 1] + b[i] * v[i] + c[i] * v[i + 1]);
    } else {
      for (let i = 1; i < last; i++) rhs[i] = v[i];
    }
    if (jop) {
      // the jump integral explicitly: at τ0 for the implicit start-up steps, extrapolated
      // linearly (second order) to τ1 for BDF2 and to the middle of the step for Crank-Nicolson
      jumpIntegral(jop, v, tau0, jNow);
      const extra = dtPrev > 0 ? (theta === 0.5 ? (0.5 * dt) / dtPrev : bdf ? dt / dtPrev : 0) : 0;
      const jw = im * lam; // Δt·λ for θ-steps, (Δt/c0)·λ for BDF2 (the jump term at τ1)
      const jscale = bdf ? jw : dt * lam;
      for (let i = 1; i < last; i++) rhs[i] += jscale * (jNow[i] + extra * (jNow[i] - jPrev[i]));
      const swap = jPrev;
      jPrev = jNow;
      jNow = swap;
      dtPrev = dt;
    }
    if (method === 1) {
      // Brennan-Schwartz for the put: eliminate from the top, back-substitute upwards starting
      // in the exercise region, projecting on the payoff as each value is found
      let ibp = 1 / (1 - im * b[last - 1]);
      ib[last - 1] = ibp;
      let dpp = rhs[last - 1] + im * c[last - 1] * vn;
      dp[last - 1] = dpp;
      for (let i = last - 2; i >= 1; i--) {
        const m = -im * c[i] * ibp;
        ibp = 1 / (1 - im * b[i] + m * im * a[i + 1]);
        dpp = rhs[i] - m * dpp;
        ib[i] = ibp;
        dp[i] = dpp;
      }
      let prev = v0;
      for (let i = 1; i < last; i++) {
        let y = (dp[i] + im * a[i] * prev) * ib[i];
        if (y < g[i]) y = g[i];
        next[i] = y;
        prev = y;
      }
    } else if (method === 0 || method === 2) {
      // Thomas elimination from the bottom, back substitution downwards (projected for the call)
      let ibp = 1 / (1 - im * b[1]);
      ib[1] = ibp;
      let dpp = rhs[1] + im * a[1] * v0;
      dp[1] = dpp;
      for (let i = 2; i < last; i++) {
        const m = -im * a[i] * ibp;
        ibp = 1 / (1 - im * b[i] + m * im * c[i - 1]);
        dpp = rhs[i] - m * dpp;
        ib[i] = ibp;
        dp[i] = dpp;
      }
      let prev = vn;
      if (method === 2) {
        for (let i = last - 1; i >= 1; i--) {
          let y = (dp[i] + im * c[i] * prev) * ib[i];
          if (y < g[i]) y = g[i];
          next[i] = y;
          prev = y;
        }
      } else {
        for (let i = last - 1; i >= 1; i--) {
          const y = (dp[i] + im * c[i] * prev) * ib[i];
          next[i] = y;
          prev = y;
        }
      }
    } else {
      // projected SOR started from the previous level
      for (let i = 1; i < last; i++) next[i] = Math.max(v[i], g[i]);
      const omega = 1.3;
      const tol = 1e-12 * Math.max(1, K);
      for (let it = 0; it < 5000; it++) {
        let change = 0;
        for (let i = 1; i < last; i++) {
          const y = (rhs[i] + im * (a[i] * next[i - 1] + c[i] * next[i + 1])) / (1 - im * b[i]);
          let z = next[i] + omega * (y - next[i]);
          if (z < g[i]) z = g[i];
          const d = Math.abs(z - next[i]);
          if (d > change) change = d;
          next[i] = z;
        }
        if (change < tol) break;
      }
    }
    // rotate levels: v2 ← v1 ← v ← next
    const old2 = v2;
    v2 = v1;
    v1 = v;
    v = next;
    next = old2;
    t2 = t1;
    t1 = tau0;
  }
  return { x, g, v, v1, v2, t0: T, t1, t2 };
}

// ---------------------------------------------------------------------------------------------
// interpolation at a point

/** Index j such that the four nodes j..j+3 surround x as centrally as possible. */
function stencil4(x: Float64Array, xs: number): number {
  let lo = 0;
  let hi = x.length - 1;
  while (hi - lo > 1) {
    const m = (lo + hi) >> 1;
    if (x[m] <= xs) lo = m;
    else hi = m;
  }
  return Math.min(Math.max(lo - 1, 0), x.length - 4);
}

/** Value, first and second derivative at xs of the cubic through four nodes starting at j. */
function lagrange4(x: Float64Array, v: Float64Array, j: number, xs: number): [number, number, number] {
  let f = 0;
  let f1 = 0;
  let f2 = 0;
  for (let k = 0; k < 4; k++) {
    const xk = x[j + k];
    let den = 1;
    const d: number[] = [];
    for (let m = 0; m < 4; m++) {
      if (m === k) continue;
      den *= xk - x[j + m];
      d.push(xs - x[j + m]);
    }
    const w = v[j + k] / den;
    f += w * d[0] * d[1] * d[2];
    f1 += w * (d[0] * d[1] + d[0] * d[2] + d[1] * d[2]);
    f2 += w * 2 * (d[0] + d[1] + d[2]);
  }
  return [f, f1, f2];
}

// ---------------------------------------------------------------------------------------------
// public functions

function checkInputs(S: number | null, K: number, T: number, r: number, q: number, sigma: number, jumps?: Jumps): void {
  if (jumps && !(Number.isFinite(jumps.intensity) && jumps.intensity >= 0 && Number.isFinite(jumps.mean) && Number.isFinite(jumps.sd) && jumps.sd >= 0)) {
    throw new RangeError(`american: jumps need a finite intensity ≥ 0, a finite mean and an s.d. ≥ 0 (got ${jumps.intensity}, ${jumps.mean}, ${jumps.sd})`);
  }
  const bad = (what: string, v: number): never => {
    throw new RangeError(`american: ${what} must be ${what === 'T' ? 'finite and ≥ 0' : 'finite and > 0'} (got ${v})`);
  };
  if (S !== null && !(Number.isFinite(S) && S > 0)) bad('S', S);
  if (!(Number.isFinite(K) && K > 0)) bad('K', K);
  if (!(Number.isFinite(T) && T >= 0)) bad('T', T);
  if (!Number.isFinite(r) || !Number.isFinite(q)) throw new RangeError(`american: rate and yield must be finite (got ${r}, ${q})`);
  if (!(Number.isFinite(sigma) && sigma >= 0)) throw new RangeError(`american: sigma must be finite and ≥ 0 (got ${sigma})`);
}

/**
 * Grid sizes for an accuracy level: the value is the Richardson combination (4·V_fine − V_coarse)/3
 * of a fine solve (2·nx space intervals, nt time steps) and a coarse one (nx, nt/2).
 */
/**
 * A spot within a few nodes of the exercise boundary: the error there depends erratically on where
 * the boundary falls between nodes (space) and steps (time), and the two solves of the Richardson
 * pair need not share it. Such spots (deep in the money, a small time value) are re-solved on
 * grids twice as fine in both directions.
 */
function nearSize(size: FdSize): FdSize {
  return { nx: 2 * size.nx, nt: 2 * size.nt };
}

function sizeFor(accuracy: 'normal' | 'fine'): FdSize {
  return accuracy === 'fine' ? { nx: 400, nt: 400 } : { nx: 140, nt: 140 };
}

/**
 * With no volatility the path is deterministic: the holder exercises at the best time on
 * S e^{(r−q)t}. Value = max over t ∈ [0, T] of e^{−rt}·payoff(S e^{(r−q)t}).
 */
function deterministicValue(kind: OptionKind, S: number, K: number, T: number, r: number, q: number): number {
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

/** Value and x-derivatives at the spot from one solve, plus the time levels for theta. */
interface AtSpot {
  f: number;
  fx: number;
  fxx: number;
  /** ∂V/∂τ at τ = T, one-sided through the last three levels */
  ft: number;
  /** the spot is in the continuation region with an exercised node within NEAR nodes of it */
  near: boolean;
}

/** Nodes from the spot within which an exercised node marks the spot as near the boundary. */
const NEAR = 4;

function solveAtSpot(p: Problem, S: number, nx: number, refine: number, nt: number, withTheta: boolean, layout: Problem): AtSpot {
  const x = gridFor(layout, S, nx, refine);
  const xs = Math.log(S);
  const sol = solveBackward(p.kind, p.K, p.T, p.r, p.q, p.sigma, x, nt, true, 1, 4, true, p.jumps);
  // the spot is a node unless it lies within half a step of the strike: then interpolate
  const i = x.indexOf(xs);
  let at: (v: Float64Array) => [number, number, number];
  if (i > 0 && i < x.length - 1) {
    const hm = x[i] - x[i - 1];
    const hp = x[i + 1] - x[i];
    at = (v) => [
      v[i],
      (-hp / (hm * (hm + hp))) * v[i - 1] + ((hp - hm) / (hm * hp)) * v[i] + (hm / (hp * (hm + hp))) * v[i + 1],
      2 * (v[i - 1] / (hm * (hm + hp)) - v[i] / (hm * hp) + v[i + 1] / (hp * (hm + hp))),
    ];
  } else {
    const j = stencil4(x, xs);
    at = (v) => lagrange4(x, v, j, xs);
  }
  const [f, fx, fxx] = at(sol.v);
  let near = false;
  const ic = i > 0 ? i : stencil4(x, xs) + 1;
  if (sol.v[ic] > sol.g[ic]) {
    for (let k = Math.max(0, ic - NEAR); k <= Math.min(x.length - 1, ic + NEAR); k++) if (sol.v[k] <= sol.g[k]) near = true;
  }
  let ft = 0;
  if (withTheta) {
    const f1 = at(sol.v1)[0];
    const f2 = at(sol.v2)[0];
    const h1 = sol.t0 - sol.t1;
    const h2 = sol.t1 - sol.t2;
    ft = ((2 * h1 + h2) / (h1 * (h1 + h2))) * f - ((h1 + h2) / (h1 * h2)) * f1 + (h1 / (h2 * (h1 + h2))) * f2;
  }
  return { f, fx, fxx, ft, near };
}


/**
 * Richardson combination of a coarse solve (space step 2h, nt/2 time steps) and a fine one (h, nt):
 * both errors are O(h²) and O(Δt²), so both shrink 4× together and (4·fine − coarse)/3 cancels
 * their leading terms.
 */
function richardson(p: Problem, S: number, size: FdSize, withTheta: boolean, layout: Problem = p): AtSpot {
  const c = solveAtSpot(p, S, size.nx, 1, Math.max(8, Math.round(size.nt / 2)), withTheta, layout);
  const f = solveAtSpot(p, S, size.nx, 2, size.nt, withTheta, layout);
  const ex = (a: number, b: number): number => b + (b - a) / 3;
  return { f: ex(c.f, f.f), fx: ex(c.fx, f.fx), fxx: ex(c.fxx, f.fxx), ft: ex(c.ft, f.ft), near: f.near };
}

/** Value of the American option on grids of the given size (Richardson over n and 2n). */
export function americanFdValue(
  kind: OptionKind,
  S: number,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  size: FdSize,
  jumps?: Jumps,
): number {
  checkInputs(S, K, T, r, q, sigma, jumps);
  const j = activeJumps(jumps);
  if (T === 0) return payoff(kind, S, K);
  if (!j && sigma * Math.sqrt(T) < 1e-4) return deterministicValue(kind, S, K, T, r, q);
  const p: Problem = { kind, K, T, r, q, sigma, jumps: j };
  let res = richardson(p, S, size, false);
  if (res.near) res = richardson(p, S, nearSize(size), false);
  return Math.max(res.f, payoff(kind, S, K));
}

/** Value of the American option, 'normal' or 'fine' accuracy. */
export function americanValue(
  kind: OptionKind,
  S: number,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  opts: AmericanOptions = {},
): number {
  return americanFdValue(kind, S, K, T, r, q, sigma, sizeFor(opts.accuracy ?? 'normal'), opts.jumps);
}

/** Grid for a problem seen from spot S: spans ln K ± w and S ± w/2 at least. */
/** Recent grids, so that re-solves on the same layout (bumps) reuse the grid and its jump weights. */
const gridCache = new Map<string, Float64Array>();

function gridFor(p: Problem, S: number, nx: number, refine = 1): Float64Array {
  const j = p.jumps;
  const key = `${p.kind}|${p.K}|${p.T}|${p.r}|${p.q}|${p.sigma}|${j ? `${j.intensity}|${j.mean}|${j.sd}` : ''}|${S}|${nx}|${refine}`;
  const hit = gridCache.get(key);
  if (hit) return hit;
  if (gridCache.size > 32) gridCache.clear();
  const x = makeGrid(p, S, nx, refine);
  gridCache.set(key, x);
  return x;
}

function makeGrid(p: Problem, S: number, nx: number, refine: number): Float64Array {
  const xK = Math.log(p.K);
  const xs = Math.log(S);
  const w = halfWidth(p, 5);
  const xLo = Math.min(xK - w, xs - 0.6 * w);
  const xHi = Math.max(xK + w, xs + 0.6 * w);
  const conc = Math.max(0.5 * p.sigma * Math.sqrt(p.T), 0.25 * totalSd(p), 0.01);
  // keep the density of nodes near the strike when the span is widened for a far spot
  const n = Math.round(nx * Math.max(1, (Math.asinh((xHi - xK) / conc) - Math.asinh((xLo - xK) / conc)) / (2 * Math.asinh(w / conc))));
  return sinhGrid(xK, xLo, xHi, n, conc, xs, refine);
}

/**
 * Value and Greeks of an American option (per share; DESIGN.md §3 units). Value, delta and gamma
 * from the grid at the spot; theta from the last three time levels; vega and rho by central
 * bumps of ±0.5 vol point and ±0.5% of rate, re-solved on the same grids (so the discretisation
 * error largely cancels in the differences). Every figure is the Richardson combination over the
 * two grid sizes.
 */
export function americanGreeks(
  kind: OptionKind,
  S: number,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  opts: AmericanOptions = {},
): Greeks {
  checkInputs(S, K, T, r, q, sigma, opts.jumps);
  const j = activeJumps(opts.jumps);
  let size = sizeFor(opts.accuracy ?? 'normal');
  const intrinsic = payoff(kind, S, K);
  if (T === 0) {
    const itm = kind === 'call' ? S > K : S < K;
    return { value: intrinsic, delta: itm ? (kind === 'call' ? 1 : -1) : 0, gamma: 0, vega: 0, theta: 0, rho: 0 };
  }
  const p: Problem = { kind, K, T, r, q, sigma, jumps: j };
  if (!j && sigma * Math.sqrt(T) < 1e-4) return deterministicGreeks(kind, S, K, T, r, q);
  let base = richardson(p, S, size, true);
  if (base.near) {
    size = nearSize(size);
    base = richardson(p, S, size, true);
  }
  const value = Math.max(base.f, intrinsic);
  let delta = base.fx / S;
  let gamma = (base.fxx - base.fx) / (S * S);
  let theta = -base.ft / 365;
  if (base.f <= intrinsic) {
    // exercise region: V = payoff
    delta = intrinsic > 0 ? (kind === 'call' ? 1 : -1) : 0;
    gamma = 0;
    theta = 0;
  } else {
    // bounds of the American value (convex in S, between the payoff and its asymptotes):
    // |delta| ≤ max(1, e^{−qT}) with the option's sign, gamma ≥ 0. Only differences across the
    // exercise boundary (where V_SS jumps) can step outside them, and only by a little.
    const dMax = Math.max(1, Math.exp(-q * T));
    delta = kind === 'call' ? Math.min(Math.max(delta, 0), dMax) : Math.min(Math.max(delta, -dMax), 0);
    if (gamma < 0) gamma = 0;
  }
  const at = (sig: number, rate: number): number => richardson({ ...p, sigma: sig, r: rate }, S, size, false, p).f;
  const hv = 0.005;
  // central ±0.5 vol point; forward from σ when σ is below the bump
  const vega = sigma >= hv ? (at(sigma + hv, r) - at(sigma - hv, r)) / (2 * hv) * 0.01 : ((at(sigma + hv, r) - at(sigma, r)) / hv) * 0.01;
  const hr = 0.005;
  const rho = ((at(sigma, r + hr) - at(sigma, r - hr)) / (2 * hr)) * 0.01;
  return { value, delta, gamma, vega, theta, rho };
}

function deterministicGreeks(kind: OptionKind, S: number, K: number, T: number, r: number, q: number): Greeks {
  const v = (s: number, t: number, rate: number): number => deterministicValue(kind, s, K, t, rate, q);
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

// ---------------------------------------------------------------------------------------------
// value curve

/**
 * One backward solve (in fact a pair, n and 2n space steps, combined by Richardson) giving the
 * American value at every spot, for revaluing a live leg across a distribution of spots; with
 * `jumps`, under Merton jumps (the PIDE). Inside the grid: a natural cubic spline in ln S through
 * the node values (floored at intrinsic); outside it the asymptotes (deep in the money max(intrinsic, forward
 * intrinsic), far out of the money 0). The grid spans [sLo, sHi] as far as it matters: beyond
 * about 8 standard deviations from the strike the asymptotes are exact to far below 1e-8·K.
 */
export function americanValueCurve(
  kind: OptionKind,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  sLo: number,
  sHi: number,
  jumps?: Jumps,
): (S: number) => number {
  checkInputs(null, K, T, r, q, sigma, jumps);
  const j = activeJumps(jumps);
  if (!(Number.isFinite(sLo) && Number.isFinite(sHi) && sLo > 0 && sHi > sLo)) {
    throw new RangeError(`americanValueCurve: need 0 < sLo < sHi, finite (got ${sLo}, ${sHi})`);
  }
  if (T === 0) return (S: number) => payoff(kind, Math.max(S, 0), K);
  if (!j && sigma * Math.sqrt(T) < 1e-4) {
    return (S: number) => (S > 0 ? deterministicValue(kind, S, K, T, r, q) : payoff(kind, 0, K));
  }
  const p: Problem = { kind, K, T, r, q, sigma, jumps: j };
  const xK = Math.log(K);
  const wMax = halfWidth(p, 8);
  const xLo = Math.max(Math.min(Math.log(sLo), xK - halfWidth(p, 6)), xK - wMax);
  const xHi = Math.min(Math.max(Math.log(sHi), xK + halfWidth(p, 6)), xK + wMax);
  const conc = Math.max(0.8 * sigma * Math.sqrt(T), 0.4 * totalSd(p), 0.01);
  // Richardson over two solves (n intervals and nt/2 steps, 2n and nt): the fine node values
  // corrected by the difference to the coarse solution (interpolated by its spline) over 3
  const xc = sinhGrid(xK, xLo, xHi, CURVE_NX, conc);
  const x = sinhGrid(xK, xLo, xHi, 2 * CURVE_NX, conc);
  const coarse = naturalSpline(xc, solveBackward(kind, K, T, r, q, sigma, xc, CURVE_NT / 2, true, 1, 4, true, j).v);
  const fine = solveBackward(kind, K, T, r, q, sigma, x, CURVE_NT, true, 1, 4, true, j).v;
  const vx = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) {
    const g = payoff(kind, Math.exp(x[i]), K);
    const e = fine[i] + (fine[i] - coarse(x[i])) / 3;
    vx[i] = e > g ? e : g;
  }
  const spline = naturalSpline(x, vx);
  const x0 = x[0];
  const xn = x[x.length - 1];
  const asym = (S: number): number => boundaryValue(p, S, T, true);
  return (S: number): number => {
    if (!(S > 0)) return kind === 'put' ? K : 0;
    const xs = Math.log(S);
    const intrinsic = payoff(kind, S, K);
    if (xs <= x0 || xs >= xn) return asym(S);
    const v = spline(xs);
    return v > intrinsic ? v : intrinsic;
  };
}

/** Space intervals (coarse solve) and time steps of americanValueCurve. */
const CURVE_NX = 200;
const CURVE_NT = 160;

/** Natural cubic spline through (x_i, y_i). */
function naturalSpline(x: Float64Array, y: Float64Array): (t: number) => number {
  const n = x.length;
  const m = new Float64Array(n); // second derivatives
  const cp = new Float64Array(n);
  const dp = new Float64Array(n);
  for (let i = 1; i < n - 1; i++) {
    const hm = x[i] - x[i - 1];
    const hp = x[i + 1] - x[i];
    const aa = hm / 6;
    const bb = (hm + hp) / 3;
    const cc = hp / 6;
    const dd = (y[i + 1] - y[i]) / hp - (y[i] - y[i - 1]) / hm;
    const den = bb - aa * cp[i - 1];
    cp[i] = cc / den;
    dp[i] = (dd - aa * dp[i - 1]) / den;
  }
  for (let i = n - 2; i >= 1; i--) m[i] = dp[i] - cp[i] * m[i + 1];
  return (t: number): number => {
    let lo = 0;
    let hi = n - 1;
    while (hi - lo > 1) {
      const k = (lo + hi) >> 1;
      if (x[k] <= t) lo = k;
      else hi = k;
    }
    const h = x[hi] - x[lo];
    const A = (x[hi] - t) / h;
    const B = 1 - A;
    return A * y[lo] + B * y[hi] + ((A * A * A - A) * m[lo] + (B * B * B - B) * m[hi]) * (h * h) / 6;
  };
}

// ---------------------------------------------------------------------------------------------
// implied volatility

/**
 * The volatility at which the American value equals `price`. Fails (with the bound) when the
 * price is at or below intrinsic value (the American lower bound) or at or above the upper bound
 * (S for a call, K for a put). Brent's method on σ ∈ [0.0005, 5]. With `jumps`, the diffusion's
 * volatility under Merton jumps.
 */
export function americanImpliedVol(
  kind: OptionKind,
  price: number,
  S: number,
  K: number,
  T: number,
  r: number,
  q: number,
  jumps?: Jumps,
): IvResult {
  const badJumps = !!jumps && !(Number.isFinite(jumps.intensity) && jumps.intensity >= 0 && Number.isFinite(jumps.mean) && Number.isFinite(jumps.sd) && jumps.sd >= 0);
  if (!(S > 0 && K > 0 && T >= 0) || ![price, S, K, T, r, q].every(Number.isFinite) || badJumps) {
    return {
      ok: false,
      bound: 'lower',
      boundValue: 0,
      message: 'implied vol needs a finite price and positive spot, strike and time to expiry',
    };
  }
  const intrinsic = payoff(kind, S, K);
  const lower = Math.max(intrinsic, kind === 'call' ? S * Math.exp(-q * T) - K * Math.exp(-r * T) : K * Math.exp(-r * T) - S * Math.exp(-q * T), 0);
  const upper = kind === 'call' ? S : K;
  const size = sizeFor('normal');
  if (T === 0 || price <= lower + 1e-9 * Math.max(1, K)) {
    return {
      ok: false,
      message: `price ${price} is not above the American lower bound ${round6(lower)} (no time value), so no volatility fits`,
      bound: 'lower',
      boundValue: lower,
    };
  }
  if (price >= upper) {
    return { ok: false, message: `price ${price} is at or above the upper bound ${round6(upper)} (${kind === 'call' ? 'the spot' : 'the strike'})`, bound: 'upper', boundValue: upper };
  }
  const sMin = 0.0005;
  const sMax = 5;
  const f = (s: number): number => americanFdValue(kind, S, K, T, r, q, s, size, jumps) - price;
  const a = sMin;
  const b = sMax;
  const fa = f(a);
  const fb = f(b);
  if (fa >= 0) {
    return { ok: false, message: `price ${price} is below the value at ${sMin * 100}% volatility (${round6(fa + price)})`, bound: 'lower', boundValue: fa + price };
  }
  if (fb <= 0) {
    return { ok: false, message: `price ${price} is above the value at ${sMax * 100}% volatility (${round6(fb + price)})`, bound: 'upper', boundValue: fb + price };
  }
  const iv = brentRoot(f, a, b, fa, fb, 2e-9);
  const h = Math.min(0.005, 0.5 * iv);
  const vega = ((f(iv + h) - f(iv - h)) / (2 * h)) * 0.01;
  return { ok: true, iv, vega };
}

function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6;
}
