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

/** Chart-grade root in a sample cell of g = fx − y: one evaluation, then inverse quadratic interpolation. */
function quickRoot(g: (x: number) => number, a: number, b: number, fa: number, fb: number): number {
  if (fa === fb) return a;
  const m = a + ((b - a) * fa) / (fa - fb);
  if (!(m > a && m < b)) return m;
  const fm = g(m);
  const r =
    (a * fm * fb) / ((fa - fm) * (fa - fb)) + (m * fa * fb) / ((fm - fa) * (fm - fb)) + (b * fa * fm) / ((fb - fa) * (fb - fm));
  const [u, v, fu, fv] = fa * fm <= 0 ? [a, m, fa, fm] : [m, b, fm, fb];
  if (r >= u && r <= v && Number.isFinite(r)) return r;
  return fu === fv ? u : u + ((v - u) * fu) / (fu - fv);
}

export class SmoothEngine implements PnlEngine {
  readonly exact = false;
  private readonly f: (s: number) => number;
  private readonly fx: (x: number) => number;
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

  constructor(input: SmoothInput) {
    const f = input.pf.f;
    this.f = f;
    this.fx = (x: number): number => f(Math.exp(x));
    this.view = input.view;
    this.rn = input.rn;
    this.pf = input.pf;
    const mesh = buildMesh(input);
    this.pa = mesh.pa;
    this.pb = mesh.pb;
    this.X0 = mesh.X0;
    this.X1 = mesh.X1;
    this.quad = new Quadrature(input.view, input.rn, this.fx);
    const s = sampleMesh(mesh, this.quad, this.fx);
    addLocalExtrema(s.sx, s.sfv, this.fx, 1e-13 * input.pf.scale);
    this.sx = s.sx;
    this.sfv = s.sfv;
    this.prefV = s.prefV;
    this.prefR = s.prefR;
    this.runs = monotoneRuns(s.sfv);
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
    return this.quad.panel(u, v)[0];
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

  /** ln-spot intervals where P&L ≤ y (strict: < y), ends at ±Infinity beyond the samples */
  private below(y: number, strict: boolean, precise: boolean): [number, number][] {
    const { sx, sfv, runs } = this;
    const out: [number, number][] = [];
    const isIn = (v: number): boolean => (strict ? v < y : v <= y);
    const g = (x: number): number => this.fx(x) - y;
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
      const fa = sfv[lo] - y;
      const fb = sfv[hi] - y;
      const r = precise ? brentRoot(g, sx[lo], sx[hi], fa, fb, TOL_X) : quickRoot(g, sx[lo], sx[hi], fa, fb);
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

  /** sign of a P&L with |P&L| within 1e-13 of the scale counted as zero */
  private sgn(v: number): number {
    const zt = 1e-13 * this.pf.scale;
    return v > zt ? 1 : v < -zt ? -1 : 0;
  }

  breakevens(): number[] {
    const out: number[] = [];
    const { f, sx, sfv } = this;
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
