/**
 * The engine before expiry: the P&L is smooth between the strikes of expiring legs. Expectations
 * are integrated in log-spot with composite Gauss-Legendre on the mesh (mesh.ts); the quadrature
 * nodes double as samples of the P&L, with the local extrema between them added (samples.ts), so
 * that the P&L is monotone from sample to sample. The sets {P&L ≤ y} are found by bisection on
 * the monotone runs of samples and Brent's root finder, and their probabilities come from the spot
 * cdf (exact given the crossing points). Flat stretches of P&L (equal to 1e-13 of the scale over
 * ≥ 3 samples) are atoms.
 */
import { prob as spotProb } from '../dist.js';
import { brentRoot } from '../numeric/root.js';
import { dedupe } from '../numeric/sorted.js';
import { mergeAtoms, type Atom, type PnlEngine, type PnlFn } from './engine.js';
import { buildMesh, type MeshInput } from './mesh.js';
import { addLocalExtrema, monotoneRuns, Quadrature, sampleMesh } from './samples.js';
import { pointsAll, pointsBelow, type SplitDist } from './split-dist.js';

/** Tolerance in log-spot of the precise crossings. */
const TOL_X = 1e-11;

export interface SmoothInput extends MeshInput {
  pf: PnlFn;
}

/** What the engine of one walk and its twin share: the mesh, the samples and the panel integrals. */
interface Sampled {
  pa: number[];
  pb: number[];
  X0: number;
  X1: number;
  quad: Quadrature;
  sx: number[];
  sfv: number[];
  /** prefix sums of the panel integrals under the view ([0]) and the risk-neutral walk ([1]) */
  pref: [Float64Array, Float64Array];
  /** prefix sums under the input's third walk (`extra`), if any */
  prefE: Float64Array;
  runs: number[];
  /** P&L evaluations inside sample cells (SmoothEngine.crossing) */
  cells: Map<number, { x: number[]; f: number[] }>;
}

function sampleAll(input: SmoothInput): Sampled {
  const fx = input.pf.fx;
  const mesh = buildMesh(input);
  const quad = new Quadrature(input.view, input.rn, fx, input.extra);
  const s = sampleMesh(mesh, quad, fx);
  addLocalExtrema(s.sx, s.sfv, fx, 1e-13 * input.pf.scale);
  return { pa: mesh.pa, pb: mesh.pb, X0: mesh.X0, X1: mesh.X1, quad, sx: s.sx, sfv: s.sfv, pref: [s.prefV, s.prefR], prefE: s.prefE, runs: monotoneRuns(s.sfv), cells: new Map() };
}

export class SmoothEngine implements PnlEngine {
  readonly exact = false;
  private readonly f: (s: number) => number;
  private readonly fx: (x: number) => number;
  /** the walk whose figures this engine gives ("view" in PnlEngine), and the other one */
  private readonly view: SplitDist;
  private readonly rn: SplitDist;
  private readonly pf: PnlFn;
  private readonly pa: number[];
  private readonly pb: number[];
  private readonly X0: number;
  private readonly X1: number;
  private readonly quad: Quadrature;
  private readonly sx: number[];
  private readonly sfv: number[];
  private readonly prefV: Float64Array;
  private readonly prefR: Float64Array;
  private readonly runs: number[];
  /** 0: the primary walk is the view of the quadrature, 1: its risk-neutral walk */
  private readonly side: 0 | 1;

  /** the engine of the view (side 0), or of the risk-neutral walk sharing `shared` (side 1) */
  constructor(input: SmoothInput, side: 0 | 1 = 0, shared?: Sampled) {
    const sm = shared ?? sampleAll(input);
    this.side = side;
    this.f = input.pf.f;
    this.fx = input.pf.fx;
    this.view = side === 0 ? input.view : input.rn;
    this.rn = side === 0 ? input.rn : input.view;
    this.pf = input.pf;
    this.pa = sm.pa;
    this.pb = sm.pb;
    this.X0 = sm.X0;
    this.X1 = sm.X1;
    this.quad = sm.quad;
    this.sx = sm.sx;
    this.sfv = sm.sfv;
    this.prefV = sm.pref[side];
    this.prefR = sm.pref[1 - side];
    this.runs = sm.runs;
    this.input = input;
    this.sampled = sm;
  }

  private readonly input: SmoothInput;
  private readonly sampled: Sampled;

  /**
   * The engine of the risk-neutral walk on the same samples: no second revaluation (the mesh
   * already follows both walks' scales).
   */
  twin(): SmoothEngine {
    return new SmoothEngine(this.input, this.side === 0 ? 1 : 0, this.sampled);
  }

  private panelOf(x: number): number {
    const pa = this.pa;
    let lo = 0;
    let hi = pa.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (pa[mid] <= x) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  }

  /** ∫ P&L · f_view over the part [u, v] of panel k */
  private panelPart(u: number, v: number, k: number): number {
    if (!(v > u)) return 0;
    if (u === this.pa[k] && v === this.pb[k]) return this.prefV[k + 1] - this.prefV[k];
    return this.quad.panel(u, v)[this.side];
  }

  /** ∫ P&L · f_view over ln S ∈ [xa, xb] */
  private integView(xa: number, xb: number): number {
    const a = Math.max(xa, this.X0);
    const b = Math.min(xb, this.X1);
    if (!(b > a)) return 0;
    const i = this.panelOf(a);
    const j = this.panelOf(b);
    if (i === j) return this.panelPart(a, b, i);
    return this.panelPart(a, this.pb[i], i) + (this.prefV[j] - this.prefV[i + 1]) + this.panelPart(this.pa[j], b, j);
  }

  /**
   * The P&L evaluations made inside each sample cell (keyed by the cell's left sample index),
   * ascending in x, starting with the two samples: later solves in the same cell start from the
   * tightest bracket known, and chart-grade crossings interpolate in it without evaluating.
   */
  private get cells(): Map<number, { x: number[]; f: number[] }> {
    return this.sampled.cells;
  }

  private cellOf(lo: number): { x: number[]; f: number[] } {
    let c = this.cells.get(lo);
    if (!c) {
      c = { x: [this.sx[lo], this.sx[lo + 1]], f: [this.sfv[lo], this.sfv[lo + 1]] };
      this.cells.set(lo, c);
    }
    return c;
  }

  /** The crossing of level y in the cell starting at sample lo (the P&L is monotone there). */
  private crossing(lo: number, y: number, precise: boolean): number {
    const c = this.cellOf(lo);
    // the P&L is monotone in the cell: the last point on the first point's side of y, by bisection
    const s0 = c.f[0] - y;
    let i = 0;
    let j = c.x.length - 1;
    while (j - i > 1) {
      const m = (i + j) >> 1;
      if ((c.f[m] - y) * s0 > 0) i = m;
      else j = m;
    }
    const xa = c.x[i];
    const xb = c.x[i + 1];
    const fa = c.f[i] - y;
    const fb = c.f[i + 1] - y;
    if (!precise) return fa === fb ? xa : xa + ((xb - xa) * fa) / (fa - fb);
    const g = (x: number): number => {
      const v = this.fx(x);
      let k = i + 1;
      while (k < c.x.length && c.x[k] < x) k++;
      while (k > 0 && c.x[k - 1] > x) k--;
      c.x.splice(k, 0, x);
      c.f.splice(k, 0, v);
      return v - y;
    };
    return brentRoot(g, xa, xb, fa, fb, TOL_X);
  }

  /** ln-spot intervals where P&L ≤ y (strict: < y), ends at ±Infinity beyond the samples */
  private below(y: number, strict: boolean, precise: boolean): [number, number][] {
    const { sfv, runs } = this;
    const out: [number, number][] = [];
    const isIn = (v: number): boolean => (strict ? v < y : v <= y);
    let inside = isIn(sfv[0]);
    let start = -Infinity;
    for (let k = 0; k < runs.length; k += 2) {
      let lo = runs[k];
      let hi = runs[k + 1];
      const a = isIn(sfv[lo]);
      if (a === isIn(sfv[hi])) continue;
      while (hi - lo > 1) {
        const mid = (lo + hi) >> 1;
        if (isIn(sfv[mid]) === a) lo = mid;
        else hi = mid;
      }
      const r = this.crossing(lo, y, precise);
      if (inside) out.push([start, r]);
      else start = r;
      inside = !inside;
    }
    if (inside) out.push([start, Infinity]);
    return out;
  }

  probBelow(y: number, strict: boolean, precise = true): number {
    let t = 0;
    for (const [a, b] of this.below(y, strict, precise)) t += spotProb(this.view.cont, Math.exp(a), Math.exp(b));
    return Math.min(1, t + pointsBelow(this.f, this.view, y, strict, false));
  }

  expectBelow(y: number, strict: boolean): number {
    let t = 0;
    for (const [a, b] of this.below(y, strict, true)) t += this.integView(a, b);
    return t + pointsBelow(this.f, this.view, y, strict, true);
  }

  expectView(): number {
    return this.prefV[this.pa.length] + pointsAll(this.f, this.view);
  }

  expectRiskNeutral(): number {
    return this.prefR[this.pa.length] + pointsAll(this.f, this.rn);
  }

  /** E[P&L] under the input's third walk (`extra`), from the same samples; undefined without one */
  expectExtra(): number | undefined {
    const e = this.input.extra;
    return e ? this.sampled.prefE[this.pa.length] + pointsAll(this.f, e) : undefined;
  }

  /** sign of a P&L with |P&L| within 1e-13 of the scale counted as zero */
  private sgn(v: number): number {
    const zt = 1e-13 * this.pf.scale;
    return v > zt ? 1 : v < -zt ? -1 : 0;
  }

  breakevens(): number[] {
    const out: number[] = [];
    const { f, sfv } = this;
    // left tail (0, e^{X0}]
    const f0 = f(0);
    if (this.sgn(f0) * this.sgn(sfv[0]) < 0) {
      out.push(brentRoot(f, 0, Math.exp(this.X0), f0, sfv[0], 1e-15 * Math.exp(this.X0)));
    }
    this.sampleCrossings(out);
    const r = this.rightTailCrossing();
    if (r !== null) out.push(r);
    return dedupe(out);
  }

  /** crossings of zero between the samples; a flat zero stretch reports its ends */
  private sampleCrossings(out: number[]): void {
    const { fx, sx, sfv } = this;
    const ns = sx.length;
    for (let j = 0; j < ns; ) {
      const sj = this.sgn(sfv[j]);
      if (sj !== 0) {
        if (j > 0 && this.sgn(sfv[j - 1]) * sj < 0) {
          out.push(Math.exp(brentRoot(fx, sx[j - 1], sx[j], sfv[j - 1], sfv[j], TOL_X)));
        }
        j++;
        continue;
      }
      let k = j;
      while (k + 1 < ns && this.sgn(sfv[k + 1]) === 0) k++;
      if (k === j) {
        const sl = j > 0 ? this.sgn(sfv[j - 1]) : 0;
        const sr = j + 1 < ns ? this.sgn(sfv[j + 1]) : 0;
        out.push(sl * sr < 0 ? Math.exp(brentRoot(fx, sx[j - 1], sx[j + 1], sfv[j - 1], sfv[j + 1], TOL_X)) : Math.exp(sx[j]));
      } else {
        if (j > 0) out.push(Math.exp(sx[j]));
        if (k < ns - 1) out.push(Math.exp(sx[k]));
      }
      j = k + 1;
    }
  }

  /** the crossing beyond e^{X1}, where P&L ≈ A + B·S, or null */
  private rightTailCrossing(): number | null {
    const { pf, fx, sfv } = this;
    const sInf = pf.B > pf.tolB ? 1 : pf.B < -pf.tolB ? -1 : this.sgn(pf.A);
    const sLast = this.sgn(sfv[sfv.length - 1]);
    if (!(sInf * sLast < 0)) return null;
    let xa = this.X1;
    let xb = this.X1;
    let fb = sfv[sfv.length - 1];
    for (let k = 0; k < 200 && this.sgn(fb) === sLast; k++) {
      xa = xb;
      xb += Math.LN2;
      fb = fx(xb);
    }
    return this.sgn(fb) !== sLast ? Math.exp(brentRoot(fx, xa, xb, fx(xa), fb, TOL_X)) : null;
  }

  extremes(): { max: number | null; min: number | null } {
    const { sfv, pf } = this;
    let hiI = 0;
    let loI = 0;
    for (let j = 1; j < sfv.length; j++) {
      if (sfv[j] > sfv[hiI]) hiI = j;
      if (sfv[j] < sfv[loI]) loI = j;
    }
    // the samples include the located local extrema
    const f0 = this.f(0);
    const max = Math.max(sfv[hiI], f0);
    const min = Math.min(sfv[loI], f0);
    if (pf.B > pf.tolB) return { max: null, min };
    if (pf.B < -pf.tolB) return { max, min: null };
    return { max: Math.max(max, pf.A), min: Math.min(min, pf.A) };
  }

  atoms(): Atom[] {
    // point masses of the spot, and flat stretches of P&L (e.g. where every live leg is
    // worthless to the last digit): runs of ≥ 3 samples equal within 1e-13 of the scale, taken
    // out to 0 or ∞ when they reach the end of the samples
    const { sx, sfv } = this;
    const ns = sx.length;
    const out: Atom[] = this.view.points.map((a) => ({ x: this.f(a.S), prob: a.w }));
    const flat = 1e-13 * this.pf.scale;
    let i = 0;
    while (i < ns - 1) {
      let j = i;
      let lo = sfv[i];
      let hi = sfv[i];
      while (j + 1 < ns && Math.max(hi, sfv[j + 1]) - Math.min(lo, sfv[j + 1]) <= flat) {
        j++;
        lo = Math.min(lo, sfv[j]);
        hi = Math.max(hi, sfv[j]);
      }
      if (j - i >= 2) {
        const a = i === 0 ? 0 : Math.exp(sx[i]);
        const b = j === ns - 1 ? Infinity : Math.exp(sx[j]);
        out.push({ x: hi, prob: spotProb(this.view.cont, a, b), lo });
        i = j;
      } else i++;
    }
    return mergeAtoms(out);
  }

  yRange(): [number, number] {
    let lo = Infinity;
    let hi = -Infinity;
    for (const v of this.sfv) {
      lo = Math.min(lo, v);
      hi = Math.max(hi, v);
    }
    for (const a of this.view.points) {
      const v = this.f(a.S);
      lo = Math.min(lo, v);
      hi = Math.max(hi, v);
    }
    return [lo, hi];
  }
}
