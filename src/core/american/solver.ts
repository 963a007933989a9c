/**
 * One backward solve of the (integro-)differential equation from expiry to τ = T on a grid of
 * nodes in x = ln S: the spatial operator (three-point non-uniform differences, upwinded where the
 * central form would lose the M-matrix signs), the graded time steps, and the implicit steps with
 * the early-exercise constraint (Brennan-Schwartz or projected SOR) and the jump integral treated
 * explicitly.
 */
import { activeJumps } from '../jumps.js';
import { projectedSor, solveFromHigh, solveFromLow, type TridiagonalSystem, type TridiagonalWork } from '../numeric/tridiagonal.js';
import type { FdCache } from './grid.js';
import { jumpIntegral, jumpOperator, type JumpOp } from './jump-integral.js';
import { boundaryValue, payoff, type Problem } from './problem.js';

/** What a backward solve computes: an option under the walk (r, q, σ, optional Merton jumps). */
export type BackwardProblem = Problem;

export interface BackwardOptions {
  /** time steps */
  nt: number;
  /** with the early-exercise constraint (default true); false solves the European problem */
  american?: boolean;
  /** grading of the steps: τ_k = T·((1−β)u + βu²), u = k/nt (default 1) */
  beta?: number;
  /** start-up steps (default 4): implicit Euler for max(2, rannacher/2) steps (BDF2), or pairs of implicit half steps (CN) */
  rannacher?: number;
  /** start from the payoff averaged over the strike node's cell (default true) */
  smoothKink?: boolean;
  /** 'bdf2' (default) or Crank-Nicolson 'cn' */
  scheme?: 'cn' | 'bdf2';
  /** grids' jump weights already built (kept by the caller) */
  cache?: FdCache;
}

export interface Solution {
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

/** The spatial operator L V_i = a_i V_{i−1} + b_i V_i + c_i V_{i+1} (with −(r + λ)V). */
function spatialOperator(p: Problem, x: Float64Array, jop: JumpOp | null): { a: Float64Array; b: Float64Array; c: Float64Array } {
  const n = x.length;
  const a = new Float64Array(n);
  const b = new Float64Array(n);
  const c = new Float64Array(n);
  const hs = 0.5 * p.sigma * p.sigma;
  const lam = jop ? jop.lam : 0;
  // with jumps: compensated drift, and the −λV of the jump term kept implicit with the rest
  const mu = p.r - p.q - hs - (jop ? lam * jop.kappa : 0);
  for (let i = 1; i < n - 1; i++) {
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
    b[i] = -am - cp + bc - p.r - lam;
    c[i] = cp + cc;
  }
  return { a, b, c };
}

/** Projection: 0 none, 1 exercise region at the low end (put), 2 at the high end (call), 3 PSOR. */
function exerciseMethod(p: Problem, american: boolean): 0 | 1 | 2 | 3 {
  if (!american) return 0;
  const { r, q } = p;
  // (a call with q ≤ 0 ≤ … and r ≥ q is never exercised early (Merton), nor a put with r ≤ 0
  // and q ≥ r: the projection would never bind)
  if (p.kind === 'put') return r > 0 ? 1 : q >= r ? 0 : 3;
  return q > 0 ? 2 : r >= q ? 0 : 3;
}

/**
 * The values at expiry: the payoff, and at a node on the strike the payoff averaged over the
 * node's cell [x − h₋/2, x + h₊/2] (smoothing of the initial data, with the implicit start).
 */
function initialValues(p: Problem, x: Float64Array, g: Float64Array, smoothKink: boolean): Float64Array {
  const v = Float64Array.from(g);
  if (!smoothKink) return v;
  const { kind, K } = p;
  const xK = Math.log(K);
  for (let i = 1; i < x.length - 1; i++) {
    if (Math.abs(x[i] - xK) > 1e-12) continue;
    const am = 0.5 * (x[i] - x[i - 1]);
    const ap = 0.5 * (x[i + 1] - x[i]);
    // ∫ of (K − e^x)⁺ below the strike and (e^x − K)⁺ above, over the cell
    const integral = kind === 'put' ? K * (am - 1 + Math.exp(-am)) : K * (Math.exp(ap) - 1 - ap);
    v[i] = integral / (am + ap);
  }
  return v;
}

/**
 * The steps as triples (τ0, τ1, θ): θ = 1 implicit Euler, ½ Crank-Nicolson, 2 BDF2. Graded towards
 * expiry (τ_k = T·((1−β)u + βu²), u = k/nt).
 */
function stepSchedule(T: number, nt: number, beta: number, rannacher: number, scheme: 'cn' | 'bdf2'): number[] {
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
  return steps;
}

/** The state of a backward solve between steps: the last three levels and the work arrays. */
class Stepper {
  private readonly p: Problem;
  private readonly american: boolean;
  private readonly method: 0 | 1 | 2 | 3;
  private readonly jop: JumpOp | null;
  private readonly g: Float64Array;
  private readonly sys: TridiagonalSystem;
  private readonly work: TridiagonalWork;
  private readonly S0: number;
  private readonly Sn: number;
  private v: Float64Array;
  private v1: Float64Array;
  private v2: Float64Array;
  private next: Float64Array;
  private t1 = 0;
  private t2 = 0;
  /** the jump integral at the current and the previous level, and the previous step */
  private jNow: Float64Array;
  private jPrev: Float64Array;
  private dtPrev = 0;

  constructor(
    bp: BackwardProblem,
    private readonly x: Float64Array,
    o: BackwardOptions,
  ) {
    const n = x.length;
    this.p = { kind: bp.kind, K: bp.K, T: bp.T, r: bp.r, q: bp.q, sigma: bp.sigma };
    this.american = o.american ?? true;
    const jumps = activeJumps(bp.jumps);
    this.jop = jumps ? jumpOperator(x, jumps, o.cache) : null;
    this.S0 = Math.exp(x[0]);
    this.Sn = Math.exp(x[n - 1]);
    this.g = new Float64Array(n);
    for (let i = 0; i < n; i++) this.g[i] = payoff(bp.kind, Math.exp(x[i]), bp.K);
    const { a, b, c } = spatialOperator(this.p, x, this.jop);
    this.sys = { k: 0, a, b, c, rhs: new Float64Array(n), y0: 0, yn: 0 };
    this.work = { ib: new Float64Array(n), dp: new Float64Array(n) };
    this.method = exerciseMethod(this.p, this.american);
    this.v = initialValues(this.p, x, this.g, o.smoothKink ?? true);
    this.v1 = new Float64Array(n);
    this.v2 = new Float64Array(n);
    this.next = new Float64Array(n);
    this.jNow = new Float64Array(n);
    this.jPrev = new Float64Array(n);
  }

  /** One step from τ0 to τ1: θ = 1 implicit Euler, ½ Crank-Nicolson, 2 variable-step BDF2. */
  step(tau0: number, tau1: number, theta: number): void {
    const { v, v1, sys } = this;
    const { a, b, c, rhs } = sys;
    const last = v.length - 1;
    const dt = tau1 - tau0;
    const bdf = theta === 2;
    // BDF2 with variable steps, divided through by its leading coefficient c0:
    // (I − (Δt/c0) L) V¹ = (c1 V⁰ − c2 V⁻¹)/c0, ω = Δt/Δt_prev
    const w = bdf ? dt / (tau0 - this.t1) : 0;
    const c0 = bdf ? (1 + 2 * w) / (1 + w) : 1;
    const ex = bdf ? 0 : (1 - theta) * dt;
    const im = bdf ? dt / c0 : theta * dt;
    sys.k = im;
    sys.y0 = boundaryValue(this.p, this.S0, tau1, this.american);
    sys.yn = boundaryValue(this.p, this.Sn, tau1, this.american);
    this.next[0] = sys.y0;
    this.next[last] = sys.yn;
    if (bdf) {
      const c1 = (1 + w) / c0;
      const c2 = (w * w) / (1 + w) / c0;
      for (let i = 1; i < last; i++) rhs[i] = c1 * v[i] - c2 * v1[i];
    } else if (ex !== 0) {
      for (let i = 1; i < last; i++) rhs[i] = v[i] + ex * (a[i] * v[i - 1] + b[i] * v[i] + c[i] * v[i + 1]);
    } else {
      for (let i = 1; i < last; i++) rhs[i] = v[i];
    }
    if (this.jop) this.addJumps(this.jop, tau0, dt, theta, im);
    this.solveLevel();
    // rotate levels: v2 ← v1 ← v ← next
    const old2 = this.v2;
    this.v2 = v1;
    this.v1 = v;
    this.v = this.next;
    this.next = old2;
    this.t2 = this.t1;
    this.t1 = tau0;
  }

  /**
   * The jump integral explicitly: at τ0 for the implicit start-up steps, extrapolated linearly
   * (second order) to τ1 for BDF2 and to the middle of the step for Crank-Nicolson.
   */
  private addJumps(jop: JumpOp, tau0: number, dt: number, theta: number, im: number): void {
    const bdf = theta === 2;
    const rhs = this.sys.rhs;
    const last = rhs.length - 1;
    const lam = jop.lam;
    jumpIntegral(jop, this.p, this.american, this.p.kind === 'put' ? this.S0 : this.Sn, this.v, tau0, this.jNow);
    const { jNow, jPrev } = this;
    const dtPrev = this.dtPrev;
    const extra = dtPrev > 0 ? (theta === 0.5 ? (0.5 * dt) / dtPrev : bdf ? dt / dtPrev : 0) : 0;
    const jw = im * lam; // Δt·λ for θ-steps, (Δt/c0)·λ for BDF2 (the jump term at τ1)
    const jscale = bdf ? jw : dt * lam;
    for (let i = 1; i < last; i++) rhs[i] += jscale * (jNow[i] + extra * (jNow[i] - jPrev[i]));
    this.jPrev = jNow;
    this.jNow = jPrev;
    this.dtPrev = dt;
  }

  /** The new level from the right-hand side, with the exercise constraint. */
  private solveLevel(): void {
    const { sys, next, work, g } = this;
    switch (this.method) {
      case 1:
        // Brennan-Schwartz for the put: eliminate from the top, back-substitute upwards starting
        // in the exercise region, projecting on the payoff as each value is found
        return solveFromLow(sys, next, work, g);
      case 2:
        // the call: eliminate from the bottom, back-substitute downwards, projected
        return solveFromHigh(sys, next, work, g);
      case 0:
        return solveFromHigh(sys, next, work);
      case 3:
        // projected SOR started from the previous level
        return projectedSor(sys, next, this.v, g, 1e-12 * Math.max(1, this.p.K));
    }
  }

  solution(T: number): Solution {
    return { x: this.x, g: this.g, v: this.v, v1: this.v1, v2: this.v2, t0: T, t1: this.t1, t2: this.t2 };
  }
}

/**
 * One backward solve from expiry to τ = T on the nodes `x` with `o.nt` graded time steps
 * (τ_k = T·((1−β)u + βu²), u = k/nt). Scheme 'bdf2' (default): the first max(2, rannacher/2)
 * steps implicit Euler, then variable-step BDF2; 'cn': the first `rannacher` steps each as two
 * implicit half steps, the rest Crank-Nicolson. `american` false solves the European problem with
 * the same machinery (used to check the discretisation against BSM and the Merton series);
 * `jumps` adds the Merton jump integral (explicit: extrapolated to the new level for BDF2, to
 * mid-step for Crank-Nicolson).
 */
export function solveBackward(p: BackwardProblem, x: Float64Array, o: BackwardOptions): Solution {
  const stepper = new Stepper(p, x, o);
  const steps = stepSchedule(p.T, o.nt, o.beta ?? 1, o.rannacher ?? 4, o.scheme ?? 'bdf2');
  for (let s = 0; s < steps.length; s += 3) stepper.step(steps[s], steps[s + 1], steps[s + 2]);
  return stepper.solution(p.T);
}
