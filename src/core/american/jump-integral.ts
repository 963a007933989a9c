/**
 * Merton's jump integral ∫ V(x + y) f(y) dy, y ~ N(m, δ²), on the nodes of a backward solve.
 */
import { jumpCompensator } from '../jumps.js';
import { normCdf, normPdf } from '../normal.js';
import type { Jumps } from '../types.js';
import type { FdCache } from './grid.js';
import { payoff, type Problem } from './problem.js';


/**
 * The jump integral as weights on the node values (V piecewise linear between nodes, integrated
 * exactly against the normal density: Φ and φ at the nodes) plus the parts beyond the grid, where
 * V follows its asymptote A − B·e^x below (put) or B·e^x − A above (call): those are kept as the
 * mass and the e^x-moment of the density beyond each end.
 */
export interface JumpOp {
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

/** The mass and e^x-moment of the jump density beyond each end of the grid, per node. */
interface Ends {
  lo0: Float64Array;
  lo1: Float64Array;
  hi0: Float64Array;
  hi1: Float64Array;
}

/**
 * Row of node i for log jumps N(m, d²), d > 0: the weights on nodes kLo … kHi (returned) in `row`,
 * the parts beyond the grid in `ends`. `Phi`, `phi` are scratch.
 */
function normalRow(x: Float64Array, i: number, m: number, d: number, ends: Ends, row: Float64Array, Phi: Float64Array, phi: Float64Array): [number, number] {
  const n = x.length;
  const last = n - 1;
  const c = x[i] + m; // centre of x + y
  const growth = Math.exp(m + 0.5 * d * d);
  let kLo = last;
  let kHi = 0;
  const zLo = (x[0] - c) / d;
  const zHi = (x[last] - c) / d;
  ends.lo0[i] = normCdf(zLo);
  ends.lo1[i] = Math.exp(x[i]) * growth * normCdf(zLo - d);
  ends.hi0[i] = normCdf(-zHi);
  ends.hi1[i] = Math.exp(x[i]) * growth * normCdf(d - zHi);
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
  return [kLo, kHi];
}

/** Row of node i for a fixed jump size m: V(x_i + m), linear between nodes. */
function fixedRow(x: Float64Array, i: number, m: number, ends: Ends, row: Float64Array): [number, number] {
  const last = x.length - 1;
  const c = x[i] + m;
  if (c < x[0]) {
    ends.lo0[i] = 1;
    ends.lo1[i] = Math.exp(c);
    return [last, 0];
  }
  if (c > x[last]) {
    ends.hi0[i] = 1;
    ends.hi1[i] = Math.exp(c);
    return [last, 0];
  }
  let k = 0;
  while (k < last - 1 && x[k + 1] < c) k++;
  const t = (c - x[k]) / (x[k + 1] - x[k]);
  row[k] = 1 - t;
  row[k + 1] = t;
  return [k, k + 1];
}

/** The weights for the grid `x` (from the cache when it has them for the same jumps). */
export function jumpOperator(x: Float64Array, j: Jumps, cache?: FdCache): JumpOp {
  const hit = cache?.jumpOps.get(x);
  if (hit && hit.m === j.mean && hit.d === j.sd && hit.lam === j.intensity) return hit.op;
  const n = x.length;
  const last = n - 1;
  const m = j.mean;
  const d = j.sd;
  const from = new Int32Array(n);
  const len = new Int32Array(n);
  const off = new Int32Array(n);
  const ends: Ends = { lo0: new Float64Array(n), lo1: new Float64Array(n), hi0: new Float64Array(n), hi1: new Float64Array(n) };
  const rows: Float64Array[] = [];
  let total = 0;
  const Phi = new Float64Array(n);
  const phi = new Float64Array(n);
  for (let i = 1; i < last; i++) {
    const row = new Float64Array(n);
    const [kLo, kHi] = d > 1e-10 ? normalRow(x, i, m, d, ends, row, Phi, phi) : fixedRow(x, i, m, ends, row);
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
  const op: JumpOp = { lam: j.intensity, kappa: jumpCompensator(j), from, len, off, w, ...ends };
  cache?.jumpOps.set(x, { m, d: j.sd, lam: j.intensity, op });
  return op;
}

/**
 * The jump integral at every interior node for the values `vv` at time to expiry τ, into `out`.
 * Beyond the in-the-money end of the grid (spot `sEnd` there) V follows its asymptote: A − B·e^x
 * for a put below the grid, B·e^x − A for a call above it (intrinsic value when the American
 * option is exercised there, else the discounted forward).
 */
export function jumpIntegral(op: JumpOp, p: Problem, american: boolean, sEnd: number, vv: Float64Array, tau: number, out: Float64Array): void {
  const { kind, K, r, q } = p;
  const fwdA = K * Math.exp(-r * tau);
  const fwdB = Math.exp(-q * tau);
  const useIntrinsic = american && payoff(kind, sEnd, K) >= Math.max(kind === 'put' ? fwdA - fwdB * sEnd : fwdB * sEnd - fwdA, 0);
  const A = useIntrinsic ? K : fwdA;
  const B = useIntrinsic ? 1 : fwdB;
  const { w, off, from, len, lo0, lo1, hi0, hi1 } = op;
  const put = kind === 'put';
  const last = vv.length - 1;
  for (let i = 1; i < last; i++) {
    let sum = put ? A * lo0[i] - B * lo1[i] : B * hi1[i] - A * hi0[i];
    const o = off[i] - from[i];
    const end = from[i] + len[i];
    for (let k = from[i]; k < end; k++) sum += w[o + k] * vv[k];
    out[i] = sum;
  }
}
