/**
 * The American value across spots from one backward solve (a Richardson pair), for revaluing a
 * live leg across the distribution of the spot at a horizon.
 */
import { activeJumps } from '../jumps.js';
import { naturalSpline } from '../numeric/spline.js';
import type { Jumps, OptionTerms } from '../types.js';
import { deterministicValue } from './deterministic.js';
import { sinhGrid } from './grid.js';
import { boundaryValue, checkInputs, halfWidth, payoff, totalSd, type Problem } from './problem.js';
import { solveBackward } from './solver.js';

/** Space intervals (coarse solve) and time steps of americanValueCurve. */
const CURVE_NX = 200;
const CURVE_NT = 160;

/**
 * One backward solve (in fact a pair, n and 2n space steps, combined by Richardson) giving the
 * American value at every spot, for revaluing a live leg across a distribution of spots; with
 * `jumps`, under Merton jumps (the PIDE). Inside the grid: a natural cubic spline in ln S through
 * the node values (floored at intrinsic); outside it the asymptotes (deep in the money max(intrinsic, forward
 * intrinsic), far out of the money 0). The grid spans [sLo, sHi] as far as it matters: beyond
 * about 8 standard deviations from the strike the asymptotes are exact to far below 1e-8·K.
 */
export function americanValueCurve(o: OptionTerms, sLo: number, sHi: number, jumps?: Jumps): (S: number) => number {
  checkInputs(o, jumps);
  const { kind, K, T, r, q, sigma } = o;
  const j = activeJumps(jumps);
  if (!(Number.isFinite(sLo) && Number.isFinite(sHi) && sLo > 0 && sHi > sLo)) {
    throw new RangeError(`americanValueCurve: need 0 < sLo < sHi, finite (got ${sLo}, ${sHi})`);
  }
  if (T === 0) return (S: number) => payoff(kind, Math.max(S, 0), K);
  if (!j && sigma * Math.sqrt(T) < 1e-4) {
    return (S: number) => (S > 0 ? deterministicValue({ kind, S, K, T, r, q }) : payoff(kind, 0, K));
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
  const coarse = naturalSpline(xc, solveBackward(p, xc, { nt: CURVE_NT / 2 }).v);
  const fine = solveBackward(p, x, { nt: CURVE_NT }).v;
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
