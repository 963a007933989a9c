/**
 * The outcome engine: one check of a position — per-leg figures today, position totals, and the
 * distribution of the P&L at the horizon under the view and under its risk-neutral twin.
 *
 * P&L(S_h) = Σ qty × mult × (V_leg(S_h) − entry), with V_leg from the pricer seam (pricer.ts):
 * intrinsic value for legs expiring at the horizon, the model value with the leg's own iv and the
 * remaining life for live legs (sticky strike), the spot for shares. Money at the horizon,
 * undiscounted, no financing.
 *
 * Two exact-where-possible engines share one interface:
 * - every option leg expires at the horizon: P&L is piecewise linear in S_h between strikes, so
 *   probabilities come from the spot cdf and expectations from partial expectations, exactly;
 * - otherwise: P&L is smooth between the strikes of expiring legs; expectations are integrated in
 *   log-spot with composite Gauss-Legendre on a mesh whose panels follow the local scale (each
 *   mixture component's s, each live leg's iv√τ near its strike), split at the kinks. The
 *   quadrature nodes double as samples of the P&L; local extrema between them are located
 *   (Brent's minimiser) and added, so that the P&L is monotone from sample to sample. The sets
 *   {P&L ≤ y} are then found by bisection on the monotone runs of samples and Brent's root finder,
 *   and their probabilities come from the spot cdf (exact given the crossing points). Flat
 *   stretches of P&L (equal to 1e-13 of the scale over ≥ 3 samples) are atoms.
 * Quantiles are lower quantiles inf{y : P(P&L ≤ y) ≥ p}, found by a bracketing (Illinois) solve on
 * the exact P&L cdf and snapped onto atoms (flat P&L regions, point masses of the spot).
 */
import {
  cdf as spotCdf,
  density as spotDensity,
  logDensity,
  partialExpectation,
  prob as spotProb,
  quantile as spotQuantile,
  sf as spotSf,
  walkDistribution,
  type SpotDist,
} from './dist.js';
import { brentRoot } from './numeric.js';
import { expiresBy, legAsymptote, legGreeks, legValuer, type LegModel } from './pricer.js';
import type { CheckCore, CheckInput, Curves, LegResult, Outcome, PositionTotals, Walk } from './types.js';

export interface RunOptions {
  /**
   * Integration refinement before expiry: panels per local scale (default 1). The benchmark
   * compares against 10 to measure the integration error.
   */
  refine?: number;
  /** also compute chance of profit, quantiles and worst-5% average under the risk-neutral twin (default true) */
  riskNeutralFigures?: boolean;
}

/** z-range kept on each side of a mixture component (Φ(−9.5) ≈ 1e-21). */
const Z_RANGE = 9.5;
/** Components lighter than this do not shape the integration mesh. */
const MESH_MIN_WEIGHT = 1e-17;
/** Widest panel in log-spot where no density or live leg sets a finer scale. */
const MAX_PANEL = 0.5;
/** Panel width in units of the local scale (before refinement). */
const PANEL_SCALES = 2;
/** Gauss-Legendre nodes per panel. */
const GL_N = 8;
/** Probability from which a P&L atom is listed for the chart. */
const ATOM_LIST_MIN = 1e-6;
const CURVE_POINTS = 200;
const PNL_BINS = 120;

// ---------------------------------------------------------------------------------------------
// numerical tools

/** Gauss-Legendre nodes and weights on [−1, 1] (Newton on the Legendre recurrence). */
function gaussLegendre(n: number): { t: number[]; w: number[] } {
  const t: number[] = [];
  const w: number[] = [];
  for (let i = 1; i <= n; i++) {
    let z = Math.cos((Math.PI * (i - 0.25)) / (n + 0.5));
    let dp = 1;
    for (let it = 0; it < 100; it++) {
      let p0 = 1;
      let p1 = z;
      for (let k = 2; k <= n; k++) {
        const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = (n * (z * p1 - p0)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    t.push(z);
    w.push(2 / ((1 - z * z) * dp * dp));
  }
  // ascending order
  const idx = t.map((_, i) => i).sort((a, b) => t[a] - t[b]);
  return { t: idx.map((i) => t[i]), w: idx.map((i) => w[i]) };
}
const GL = gaussLegendre(GL_N);

/** Brent's minimiser (golden section with parabolic steps, Brent 1973 ch. 5) on [a, b]. */
function brentMin(f: (x: number) => number, a: number, b: number, tol: number): { x: number; fx: number } {
  const CG = 0.381966011250105;
  let x = a + CG * (b - a);
  let w = x;
  let v = x;
  let fx = f(x);
  let fw = fx;
  let fv = fx;
  let d = 0;
  let e = 0;
  for (let it = 0; it < 200; it++) {
    const xm = 0.5 * (a + b);
    const tol1 = 1.5e-8 * Math.abs(x) + tol / 3;
    const tol2 = 2 * tol1;
    if (Math.abs(x - xm) <= tol2 - 0.5 * (b - a)) break;
    let useGolden = true;
    if (Math.abs(e) > tol1) {
      const r = (x - w) * (fx - fv);
      let q = (x - v) * (fx - fw);
      let p = (x - v) * q - (x - w) * r;
      q = 2 * (q - r);
      if (q > 0) p = -p;
      q = Math.abs(q);
      const etemp = e;
      e = d;
      if (!(Math.abs(p) >= Math.abs(0.5 * q * etemp) || p <= q * (a - x) || p >= q * (b - x))) {
        d = p / q;
        const u = x + d;
        if (u - a < tol2 || b - u < tol2) d = xm - x >= 0 ? tol1 : -tol1;
        useGolden = false;
      }
    }
    if (useGolden) {
      e = x >= xm ? a - x : b - x;
      d = CG * e;
    }
    const u = Math.abs(d) >= tol1 ? x + d : x + (d >= 0 ? tol1 : -tol1);
    const fu = f(u);
    if (fu <= fx) {
      if (u >= x) a = x;
      else b = x;
      v = w;
      fv = fw;
      w = x;
      fw = fx;
      x = u;
      fx = fu;
    } else {
      if (u < x) a = u;
      else b = u;
      if (fu <= fw || w === x) {
        v = w;
        fv = fw;
        w = u;
        fw = fu;
      } else if (fu <= fv || v === x || v === w) {
        v = u;
        fv = fu;
      }
    }
  }
  return { x, fx };
}

/** Evaluations of a nondecreasing function G (a P&L cdf), kept sorted to bracket later solves. */
class CdfCache {
  readonly ys: number[] = [];
  readonly gs: number[] = [];
  constructor(private readonly G: (y: number) => number) {}
  at(y: number): number {
    const g = this.G(y);
    let i = this.ys.length;
    while (i > 0 && this.ys[i - 1] > y) i--;
    this.ys.splice(i, 0, y);
    this.gs.splice(i, 0, g);
    return g;
  }
}

/**
 * Lower quantile inf{y : G(y) ≥ p} of a nondecreasing G (a P&L cdf, possibly with jumps), given
 * G(lo) < p ≤ G(hi) among the cached values: Illinois regula falsi with bisection safeguards, to a
 * bracket of width `tol`; a jump (atom) inside the final bracket is returned exactly.
 */
function lowerQuantile(cache: CdfCache, p: number, tol: number, atoms: number[]): number {
  const { ys, gs } = cache;
  // tightest bracket among the known evaluations (the first and last are the outer bracket)
  let lo = ys[0];
  let glo = gs[0] - p;
  let hi = ys[ys.length - 1];
  let ghi = gs[gs.length - 1] - p;
  for (let i = 0; i < ys.length; i++) {
    if (gs[i] < p) {
      lo = ys[i];
      glo = gs[i] - p;
    } else {
      hi = ys[i];
      ghi = gs[i] - p;
      break;
    }
  }
  if (glo >= 0) return lo;
  if (ghi < 0) return hi;
  let side = 0;
  let lastWidth = hi - lo;
  for (let it = 0; it < 300 && hi - lo > tol; it++) {
    let x = hi - (ghi * (hi - lo)) / (ghi - glo);
    const margin = 0.01 * (hi - lo);
    if (it % 4 === 3) {
      // force progress: bisect if the bracket did not halve over the last steps
      if (hi - lo > 0.5 * lastWidth) x = 0.5 * (lo + hi);
      lastWidth = hi - lo;
    }
    if (!(x > lo + margin && x < hi - margin)) x = x <= lo + margin ? lo + margin : hi - margin;
    if (!(x > lo && x < hi)) x = 0.5 * (lo + hi);
    if (!(x > lo && x < hi)) break;
    const gx = cache.at(x) - p;
    if (gx >= 0) {
      hi = x;
      ghi = gx;
      if (side === 1) glo *= 0.5;
      side = 1;
    } else {
      lo = x;
      glo = gx;
      if (side === -1) ghi *= 0.5;
      side = -1;
    }
  }
  let best = hi;
  for (const a of atoms) if (a > lo && a <= best && cache.at(a) >= p) best = a;
  return best;
}

// ---------------------------------------------------------------------------------------------
// the P&L engines

interface PnlEngine {
  readonly exact: boolean;
  /** P(P&L ≤ y) (strict: P(P&L < y)) under the view; `precise` false allows chart-grade roots */
  probBelow(y: number, strict: boolean, precise?: boolean): number;
  /** E_view[P&L · 1{P&L ≤ y}] (strict: < y) */
  expectBelow(y: number, strict: boolean): number;
  expectView(): number;
  expectRiskNeutral(): number;
  breakevens(): number[];
  /** sup and inf of P&L over S_h ∈ (0, ∞); null when unbounded */
  extremes(): { max: number | null; min: number | null };
  /** levels of P&L atoms under the view with their probabilities */
  atoms(): Atom[];
  /** P&L values bracketing everything except a negligible tail of the view */
  yRange(): [number, number];
}

interface SplitDist {
  cont: SpotDist;
  points: { S: number; w: number }[];
}

/**
 * Components narrower than this (in log-spot) are treated as point masses: a mesh cannot resolve
 * them next to ln S, and the error of doing so is of the order of s in the quantiles and s² in
 * the expectations.
 */
const POINT_S = 1e-8;

function splitDist(d: SpotDist): SplitDist {
  const cont = d.components.filter((c) => c.s >= POINT_S);
  const points = d.components.filter((c) => !(c.s >= POINT_S)).map((c) => ({ S: Math.exp(c.mu), w: c.weight }));
  return { cont: { components: cont }, points };
}

/** [lo, hi] of ln S outside which a split distribution has negligible mass (also for S·f). */
function logRange(d: SplitDist): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const c of d.cont.components) {
    if (c.weight < MESH_MIN_WEIGHT) continue;
    lo = Math.min(lo, c.mu - Z_RANGE * c.s);
    hi = Math.max(hi, c.mu + c.s * c.s + Z_RANGE * c.s);
  }
  for (const a of d.points) {
    lo = Math.min(lo, Math.log(a.S));
    hi = Math.max(hi, Math.log(a.S));
  }
  return [lo, hi];
}

interface Term {
  coef: number;
  v: (s: number) => number;
}

interface PnlFn {
  f: (s: number) => number;
  /** P&L(S) ≈ A + B·S as S → ∞ */
  A: number;
  B: number;
  tolB: number;
  scale: number;
}

/** Segments of the at-expiry P&L: on (a, b], P&L = alpha + beta·S exactly. */
interface Segment {
  a: number;
  b: number;
  alpha: number;
  beta: number;
}

/**
 * The point masses of a split distribution whose P&L is below y (≤ y unless strict): their
 * probability, or with `weighted` their P&L-weighted sum.
 */
function pointsBelow(f: (s: number) => number, d: SplitDist, y: number, strict: boolean, weighted: boolean): number {
  let t = 0;
  for (const a of d.points) {
    const v = f(a.S);
    if (strict ? v < y : v <= y) t += weighted ? a.w * v : a.w;
  }
  return t;
}

function linearEngine(segs: Segment[], view: SplitDist, rn: SplitDist, pf: PnlFn): PnlEngine {
  const f = pf.f;
  const [vlo, vhi] = logRange(view);
  const cdfEnd = [0, ...segs.map((g) => (g.b === Infinity ? view.cont.components.reduce((a, c) => a + c.weight, 0) : spotCdf(view.cont, g.b)))];
  const interval = (s: Segment, y: number, strict: boolean): [number, number] | null => {
    if (s.beta === 0) return (strict ? s.alpha < y : s.alpha <= y) ? [s.a, s.b] : null;
    const r = (y - s.alpha) / s.beta;
    if (s.beta > 0) return r > s.a ? [s.a, Math.min(s.b, r)] : null;
    return r < s.b ? [Math.max(s.a, r), s.b] : null;
  };
  const expectOn = (d: SplitDist, s: Segment, a: number, b: number): number =>
    s.alpha * spotProb(d.cont, a, b) + (s.beta !== 0 ? s.beta * partialExpectation(d.cont, a, b) : 0);
  const expectAll = (d: SplitDist): number => {
    let t = 0;
    for (const s of segs) t += expectOn(d, s, s.a, s.b);
    for (const a of d.points) t += a.w * f(a.S);
    return t;
  };
  return {
    exact: true,
    probBelow(y, strict) {
      // P(S ≤ ·) at the segment ends once; only a segment cut by the level needs a new cdf
      let t = 0;
      for (let i = 0; i < segs.length; i++) {
        const s = segs[i];
        if (s.beta === 0) {
          if (strict ? s.alpha < y : s.alpha <= y) t += cdfEnd[i + 1] - cdfEnd[i];
          continue;
        }
        const r = (y - s.alpha) / s.beta;
        if (s.beta > 0) {
          if (r >= s.b) t += cdfEnd[i + 1] - cdfEnd[i];
          else if (r > s.a) t += spotCdf(view.cont, r) - cdfEnd[i];
        } else if (r <= s.a) t += cdfEnd[i + 1] - cdfEnd[i];
        else if (r < s.b) t += cdfEnd[i + 1] - spotCdf(view.cont, r);
      }
      return Math.min(1, Math.max(0, t + pointsBelow(f, view, y, strict, false)));
    },
    expectBelow(y, strict) {
      let t = 0;
      for (const s of segs) {
        const iv = interval(s, y, strict);
        if (iv) t += expectOn(view, s, iv[0], iv[1]);
      }
      return t + pointsBelow(f, view, y, strict, true);
    },
    expectView: () => expectAll(view),
    expectRiskNeutral: () => expectAll(rn),
    breakevens() {
      const out: number[] = [];
      for (const s of segs) {
        if (s.beta !== 0) {
          const r = -s.alpha / s.beta;
          if (r > s.a && r <= s.b && r > 0 && Number.isFinite(r)) out.push(r);
        } else if (s.alpha === 0) {
          if (s.a > 0) out.push(s.a);
          if (Number.isFinite(s.b)) out.push(s.b);
        }
      }
      return dedupe(out);
    },
    extremes() {
      const vals = [segs[0].alpha];
      for (const s of segs) if (Number.isFinite(s.b)) vals.push(s.alpha + s.beta * s.b);
      const last = segs[segs.length - 1];
      let max: number | null = Math.max(...vals);
      let min: number | null = Math.min(...vals);
      if (last.beta > 0) max = null;
      else if (last.beta < 0) min = null;
      else {
        max = Math.max(max, last.alpha);
        min = Math.min(min, last.alpha);
      }
      return { max, min };
    },
    atoms() {
      const out: { x: number; prob: number }[] = [];
      for (const s of segs) if (s.beta === 0) out.push({ x: s.alpha, prob: spotProb(view.cont, s.a, s.b) });
      for (const a of view.points) out.push({ x: f(a.S), prob: a.w });
      return mergeAtoms(out);
    },
    yRange() {
      const lo = Math.exp(vlo);
      const hi = Math.exp(vhi);
      const pts = [lo, hi];
      for (const s of segs) if (s.b > lo && s.b < hi) pts.push(s.b);
      const ys = pts.map(f);
      return [Math.min(...ys), Math.max(...ys)];
    },
  };
}

interface Window {
  lo: number;
  hi: number;
  scale: number;
}

interface LiveInfo {
  /** ln of the strike shifted by the carry over the remaining life (centre of the smooth kink) */
  centre: number;
  /** iv·√τ, the log-width of the live leg's curvature */
  width: number;
}

function smoothEngine(
  view: SplitDist,
  rn: SplitDist,
  pf: PnlFn,
  kinks: number[],
  live: LiveInfo[],
  extraRange: [number, number],
  refine: number,
): PnlEngine {
  const f = pf.f;
  const fx = (x: number): number => f(Math.exp(x));
  // --- mesh: windows of local scale, breakpoints, panels
  const windows: Window[] = [];
  for (const d of [view, rn]) {
    for (const c of d.cont.components) {
      if (c.weight < MESH_MIN_WEIGHT) continue;
      windows.push({ lo: c.mu - Z_RANGE * c.s, hi: c.mu + c.s * c.s + Z_RANGE * c.s, scale: c.s });
    }
  }
  const breaks: number[] = [];
  for (const l of live) {
    if (l.width > 1e-9) windows.push({ lo: l.centre - 9 * l.width, hi: l.centre + 9 * l.width, scale: l.width });
    else breaks.push(l.centre);
  }
  let X0 = extraRange[0];
  let X1 = extraRange[1];
  for (const d of [view, rn]) {
    const [a, b] = logRange(d);
    X0 = Math.min(X0, a);
    X1 = Math.max(X1, b);
  }
  for (const w of windows) {
    X0 = Math.min(X0, w.lo);
    X1 = Math.max(X1, w.hi);
  }
  for (const k of kinks) breaks.push(Math.log(k));
  const bps = dedupe([X0, X1, ...breaks.filter((b) => b > X0 && b < X1)]);
  const edges = dedupe(windows.flatMap((w) => [w.lo, w.hi]));
  const scaleAt = (x: number): number => {
    let s = MAX_PANEL;
    for (const w of windows) if (x >= w.lo && x < w.hi && w.scale < s) s = w.scale;
    return Math.max(s, 1e-9);
  };
  const pa: number[] = [];
  const pb: number[] = [];
  let ei = 0;
  for (let i = 0; i + 1 < bps.length; i++) {
    const u = bps[i];
    const v = bps[i + 1];
    let x = u;
    while (x < v) {
      let next = x + (PANEL_SCALES * scaleAt(x)) / refine;
      while (ei < edges.length && edges[ei] <= x) ei++;
      if (ei < edges.length && edges[ei] < next) next = edges[ei];
      if (next > v || v - next < 1e-12 * Math.max(1, Math.abs(v))) next = v;
      pa.push(x);
      pb.push(next);
      x = next;
    }
  }
  // --- samples (panel ends and nodes, ascending) with P&L, and panel integrals
  const np = pa.length;
  const sx: number[] = [];
  const sfv: number[] = [];
  const prefV = new Float64Array(np + 1);
  const prefR = new Float64Array(np + 1);
  const glPanel = (u: number, v: number, store: boolean): [number, number] => {
    const half = 0.5 * (v - u);
    const mid = 0.5 * (u + v);
    let iv = 0;
    let ir = 0;
    for (let k = 0; k < GL_N; k++) {
      const x = mid + half * GL.t[k];
      const p = fx(x);
      if (store) {
        sx.push(x);
        sfv.push(p);
      }
      const wv = view.cont.components.length ? logDensity(view.cont, x) : 0;
      const wr = rn.cont.components.length ? logDensity(rn.cont, x) : 0;
      iv += GL.w[k] * p * wv;
      ir += GL.w[k] * p * wr;
    }
    return [iv * half, ir * half];
  };
  for (let i = 0; i < np; i++) {
    sx.push(pa[i]);
    sfv.push(fx(pa[i]));
    const [iv, ir] = glPanel(pa[i], pb[i], true);
    prefV[i + 1] = prefV[i] + iv;
    prefR[i + 1] = prefR[i] + ir;
  }
  sx.push(X1);
  sfv.push(fx(X1));
  // local extrema between samples: locate each (Brent's minimiser) and add it as a sample, so
  // that between neighbouring samples the P&L is monotone and every level set is bracketed
  {
    const noise = 1e-13 * pf.scale;
    const ins: [number, number][] = [];
    for (let j = 1; j + 1 < sx.length; j++) {
      const d1 = sfv[j] - sfv[j - 1];
      const d2 = sfv[j + 1] - sfv[j];
      if (Math.max(Math.abs(d1), Math.abs(d2)) <= noise) continue;
      const sign = d1 > 0 && d2 <= 0 ? -1 : d1 < 0 && d2 >= 0 ? 1 : 0;
      if (sign === 0) continue;
      const r = brentMin((x) => sign * fx(x), sx[j - 1], sx[j + 1], 1e-10);
      if (sign * r.fx < sign * sfv[j] && r.x !== sx[j] && r.x > sx[j - 1] && r.x < sx[j + 1]) ins.push([r.x, sign * r.fx]);
    }
    if (ins.length) {
      const all = sx.map((x, i) => [x, sfv[i]] as [number, number]).concat(ins).sort((a, b) => a[0] - b[0]);
      sx.length = 0;
      sfv.length = 0;
      for (const [x, v] of all) {
        sx.push(x);
        sfv.push(v);
      }
    }
  }
  const ns = sx.length;

  const panelOf = (x: number): number => {
    let lo = 0;
    let hi = np - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (pa[mid] <= x) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  };
  /** ∫ P&L · f_view over ln S ∈ [xa, xb] */
  const integView = (xa: number, xb: number): number => {
    const a = Math.max(xa, X0);
    const b = Math.min(xb, X1);
    if (!(b > a)) return 0;
    const i = panelOf(a);
    const j = panelOf(b);
    const part = (u: number, v: number, k: number): number => {
      if (!(v > u)) return 0;
      if (u === pa[k] && v === pb[k]) return prefV[k + 1] - prefV[k];
      return glPanel(u, v, false)[0];
    };
    if (i === j) return part(a, b, i);
    return part(a, pb[i], i) + (prefV[j] - prefV[i + 1]) + part(pa[j], b, j);
  };

  const tolX = 1e-11;
  // maximal monotone runs of the samples (neighbouring runs share their end sample): on each run
  // the set {P&L ≤ y} is a prefix or a suffix, found by bisection on the samples
  const runs: number[] = [];
  {
    let s0 = 0;
    let dir = 0;
    for (let j = 1; j < ns; j++) {
      const d = sfv[j] > sfv[j - 1] ? 1 : sfv[j] < sfv[j - 1] ? -1 : 0;
      if (d === 0) continue;
      if (dir === 0) dir = d;
      else if (d !== dir) {
        runs.push(s0, j - 1);
        s0 = j - 1;
        dir = d;
      }
    }
    runs.push(s0, ns - 1);
  }
  /** chart-grade root in a sample cell: one evaluation, then inverse quadratic interpolation */
  const quickRoot = (a: number, b: number, fa: number, fb: number, y: number): number => {
    if (fa === fb) return a;
    const m = a + ((b - a) * fa) / (fa - fb);
    if (!(m > a && m < b)) return m;
    const fm = fx(m) - y;
    const r =
      (a * fm * fb) / ((fa - fm) * (fa - fb)) + (m * fa * fb) / ((fm - fa) * (fm - fb)) + (b * fa * fm) / ((fb - fa) * (fb - fm));
    const [u, v, fu, fv] = fa * fm <= 0 ? [a, m, fa, fm] : [m, b, fm, fb];
    if (r >= u && r <= v && Number.isFinite(r)) return r;
    return fu === fv ? u : u + ((v - u) * fu) / (fu - fv);
  };
  /** ln-spot intervals where P&L ≤ y (strict: < y), ends at ±Infinity beyond the samples */
  const below = (y: number, strict: boolean, precise: boolean): [number, number][] => {
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
      const fa = sfv[lo] - y;
      const fb = sfv[hi] - y;
      const r = precise ? brentRoot((x) => fx(x) - y, sx[lo], sx[hi], fa, fb, tolX) : quickRoot(sx[lo], sx[hi], fa, fb, y);
      if (inside) out.push([start, r]);
      else start = r;
      inside = !inside;
    }
    if (inside) out.push([start, Infinity]);
    return out;
  };
  const pointsAll = (d: SplitDist): number => d.points.reduce((t, a) => t + a.w * f(a.S), 0);

  return {
    exact: false,
    probBelow(y, strict, precise = true) {
      let t = 0;
      for (const [a, b] of below(y, strict, precise)) t += spotProb(view.cont, Math.exp(a), Math.exp(b));
      return Math.min(1, t + pointsBelow(f, view, y, strict, false));
    },
    expectBelow(y, strict) {
      let t = 0;
      for (const [a, b] of below(y, strict, true)) t += integView(a, b);
      return t + pointsBelow(f, view, y, strict, true);
    },
    expectView: () => prefV[np] + pointsAll(view),
    expectRiskNeutral: () => prefR[np] + pointsAll(rn),
    breakevens() {
      const out: number[] = [];
      // |P&L| within 1e-13 of the scale counts as zero; a flat zero stretch reports its ends
      const zt = 1e-13 * pf.scale;
      const sgn = (v: number): number => (v > zt ? 1 : v < -zt ? -1 : 0);
      // left tail (0, e^{X0}]
      const f0 = f(0);
      if (sgn(f0) * sgn(sfv[0]) < 0) {
        out.push(brentRoot(f, 0, Math.exp(X0), f0, sfv[0], 1e-15 * Math.exp(X0)));
      }
      for (let j = 0; j < ns; ) {
        const sj = sgn(sfv[j]);
        if (sj !== 0) {
          if (j > 0 && sgn(sfv[j - 1]) * sj < 0) {
            out.push(Math.exp(brentRoot(fx, sx[j - 1], sx[j], sfv[j - 1], sfv[j], tolX)));
          }
          j++;
          continue;
        }
        let k = j;
        while (k + 1 < ns && sgn(sfv[k + 1]) === 0) k++;
        if (k === j) {
          const sl = j > 0 ? sgn(sfv[j - 1]) : 0;
          const sr = j + 1 < ns ? sgn(sfv[j + 1]) : 0;
          out.push(sl * sr < 0 ? Math.exp(brentRoot(fx, sx[j - 1], sx[j + 1], sfv[j - 1], sfv[j + 1], tolX)) : Math.exp(sx[j]));
        } else {
          if (j > 0) out.push(Math.exp(sx[j]));
          if (k < ns - 1) out.push(Math.exp(sx[k]));
        }
        j = k + 1;
      }
      // right tail beyond e^{X1}: P&L ≈ A + B·S
      const sInf = pf.B > pf.tolB ? 1 : pf.B < -pf.tolB ? -1 : sgn(pf.A);
      const sLast = sgn(sfv[ns - 1]);
      if (sInf * sLast < 0) {
        let xa = X1;
        let xb = X1;
        let fb = sfv[ns - 1];
        for (let k = 0; k < 200 && sgn(fb) === sLast; k++) {
          xa = xb;
          xb += Math.LN2;
          fb = fx(xb);
        }
        if (sgn(fb) !== sLast) out.push(Math.exp(brentRoot(fx, xa, xb, fx(xa), fb, tolX)));
      }
      return dedupe(out);
    },
    extremes() {
      let hiI = 0;
      let loI = 0;
      for (let j = 1; j < ns; j++) {
        if (sfv[j] > sfv[hiI]) hiI = j;
        if (sfv[j] < sfv[loI]) loI = j;
      }
      // the samples include the located local extrema
      let max = sfv[hiI];
      let min = sfv[loI];
      const f0 = f(0);
      max = Math.max(max, f0);
      min = Math.min(min, f0);
      let rmax: number | null = max;
      let rmin: number | null = min;
      if (pf.B > pf.tolB) rmax = null;
      else if (pf.B < -pf.tolB) rmin = null;
      else {
        rmax = Math.max(max, pf.A);
        rmin = Math.min(min, pf.A);
      }
      return { max: rmax, min: rmin };
    },
    atoms() {
      // point masses of the spot, and flat stretches of P&L (e.g. where every live leg is
      // worthless to the last digit): runs of ≥ 3 samples equal within 1e-13 of the scale, taken
      // out to 0 or ∞ when they reach the end of the samples
      const out: Atom[] = view.points.map((a) => ({ x: f(a.S), prob: a.w }));
      const flat = 1e-13 * pf.scale;
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
          out.push({ x: hi, prob: spotProb(view.cont, a, b), lo });
          i = j;
        } else i++;
      }
      return mergeAtoms(out);
    },
    yRange() {
      let lo = Infinity;
      let hi = -Infinity;
      for (let j = 0; j < ns; j++) {
        lo = Math.min(lo, sfv[j]);
        hi = Math.max(hi, sfv[j]);
      }
      for (const a of view.points) {
        const v = f(a.S);
        lo = Math.min(lo, v);
        hi = Math.max(hi, v);
      }
      return [lo, hi];
    },
  };
}

function dedupe(xs: number[]): number[] {
  // a typed array sorts numerically without a comparator call per comparison
  const s = Float64Array.from(xs.filter((x) => Number.isFinite(x))).sort();
  const out: number[] = [];
  for (const x of s) {
    if (out.length && Math.abs(x - out[out.length - 1]) <= 1e-12 * Math.max(1, Math.abs(x))) continue;
    out.push(x);
  }
  return out;
}

/** A P&L atom: level x (every P&L value of the atom is ≤ x and ≥ lo) and its probability. */
interface Atom {
  x: number;
  prob: number;
  lo?: number;
}

function mergeAtoms(atoms: Atom[]): Atom[] {
  const out: Atom[] = [];
  for (const a of [...atoms].sort((p, q) => p.x - q.x)) {
    if (!(a.prob > 0)) continue;
    const last = out[out.length - 1];
    if (last && last.x === a.x) {
      last.prob += a.prob;
      last.lo = Math.min(last.lo ?? last.x, a.lo ?? a.x);
    } else out.push({ ...a });
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// the check

/** Runs one check: legs, position totals, outcome at the horizon and the chart curves. */
export function runCheck(input: CheckInput, options: RunOptions = {}): CheckCore {
  const refine = Math.max(1, options.refine ?? 1);
  const { market, mult, view } = input;
  const { spot, rate, yield: q } = market;
  const h = Math.max(0, input.horizonYears);
  const model: LegModel = { market, style: input.style, jumps: view.jumps };
  const notes: string[] = [];
  const rnWalk: Walk = { drift: rate, vol: view.vol, jumps: view.jumps };
  const jumpsOn = !!(view.jumps && view.jumps.intensity > 0);

  // --- legs today
  const legs: LegResult[] = [];
  const pos: PositionTotals = { cost: 0, value: 0, delta: 0, gamma: 0, vega: 0, theta: 0, rho: 0 };
  const coefs: number[] = [];
  const entries: number[] = [];
  let price = 0;
  let hasShares = false;
  for (const leg of input.legs) {
    const g = legGreeks(leg, model);
    const m = leg.kind === 'shares' ? 1 : mult;
    const coef = leg.qty * m;
    const entry = leg.entry ?? g.value;
    coefs.push(coef);
    entries.push(entry);
    // shares have no strike: their in-the-money probabilities are shown as 1 (never NaN)
    let pRn = 1;
    let pView = 1;
    if (leg.kind === 'shares') {
      hasShares = true;
      price += coef * (spot * Math.exp((rate - q) * h) - entry);
    } else {
      const T = Math.max(0, leg.years);
      const dR = walkDistribution(spot, T, q, { drift: rate, vol: leg.iv, jumps: view.jumps });
      const dV = walkDistribution(spot, T, q, view);
      if (leg.kind === 'call') {
        pRn = spotSf(dR, leg.strike);
        pView = spotSf(dV, leg.strike);
      } else {
        pRn = spotCdf(dR, leg.strike);
        pView = spotCdf(dV, leg.strike);
      }
      price += coef * (g.value * Math.exp(rate * h) - entry);
    }
    legs.push({ ...g, probItmRiskNeutral: pRn, probItmView: pView });
    pos.cost += coef * entry;
    pos.value += coef * g.value;
    pos.delta += coef * g.delta;
    pos.gamma += coef * g.gamma;
    pos.vega += coef * g.vega;
    pos.theta += coef * g.theta;
    pos.rho += coef * g.rho;
  }

  // --- P&L at the horizon: grouped terms (identical legs merged so that exact offsets vanish)
  const groups = new Map<string, { leg: (typeof input.legs)[number]; coef: number }>();
  let c0 = 0;
  let absCoef = 0;
  input.legs.forEach((leg, i) => {
    c0 -= coefs[i] * entries[i];
    absCoef += Math.abs(coefs[i]);
    const key = leg.kind === 'shares' ? 'shares' : `${leg.kind}|${leg.strike}|${leg.years}|${leg.iv}`;
    const g0 = groups.get(key);
    if (g0) g0.coef += coefs[i];
    else groups.set(key, { leg, coef: coefs[i] });
  });
  const active = [...groups.values()].filter((g) => g.coef !== 0);
  const terms: Term[] = active.map((g) => ({ coef: g.coef, v: legValuer(g.leg, model, h) }));
  const pnl = (s: number): number => {
    let t = c0;
    for (const x of terms) t += x.coef * x.v(s);
    return t;
  };
  let A = c0;
  let B = 0;
  for (const g of active) {
    const as = legAsymptote(g.leg, model, h);
    A += g.coef * as.intercept;
    B += g.coef * as.slope;
  }
  const scale = absCoef > 0 ? absCoef * spot : Math.max(1, Math.abs(c0));
  const pf: PnlFn = { f: pnl, A, B, tolB: 1e-12 * Math.max(absCoef, 1e-300), scale };

  const dView = walkDistribution(spot, h, q, view);
  const dRn = walkDistribution(spot, h, q, rnWalk);
  const sView = splitDist(dView);
  const sRn = splitDist(dRn);

  const optionGroups = active.filter((g) => g.leg.kind !== 'shares');
  const liveGroups = optionGroups.filter((g) => !expiresBy(g.leg, h));
  const strikesAll = dedupe(input.legs.filter((l) => l.kind !== 'shares' && l.strike > 0).map((l) => l.strike));
  // exact distinct strikes: the at-expiry segments must put every strike on the right side
  const kinks = [...new Set(optionGroups.filter((g) => expiresBy(g.leg, h) && g.leg.strike > 0).map((g) => g.leg.strike))].sort((a, b) => a - b);

  let linearSegs: Segment[] | null = null;
  let liveInfo: { live: LiveInfo[]; ext: [number, number] } | null = null;
  if (liveGroups.length === 0) {
    const ends = [0, ...kinks, Infinity];
    const segs: Segment[] = [];
    for (let i = 0; i + 1 < ends.length; i++) {
      const a = ends[i];
      const b = ends[i + 1];
      let alpha = c0;
      let beta = 0;
      for (const g of active) {
        const leg = g.leg;
        if (leg.kind === 'shares') beta += g.coef;
        else if (leg.kind === 'call' && leg.strike <= a) {
          beta += g.coef;
          alpha -= g.coef * leg.strike;
        } else if (leg.kind === 'put' && leg.strike >= b) {
          beta -= g.coef;
          alpha += g.coef * leg.strike;
        }
      }
      if (Math.abs(beta) <= pf.tolB) beta = 0;
      segs.push({ a, b, alpha, beta });
    }
    linearSegs = segs;
    notes.push('outcome: exact closed forms (every option leg expires at the horizon)');
  } else {
    const live: LiveInfo[] = liveGroups.map((g) => {
      const tau = g.leg.years - h;
      return { centre: Math.log(g.leg.strike) - (rate - q) * tau, width: g.leg.iv * Math.sqrt(tau) };
    });
    const ext: [number, number] = [Math.log(spot) - 0.1, Math.log(spot) + 0.1];
    for (const k of strikesAll) {
      ext[0] = Math.min(ext[0], Math.log(k) - 0.1);
      ext[1] = Math.max(ext[1], Math.log(k) + 0.1);
    }
    liveInfo = { live, ext };
    notes.push('outcome: Gauss-Legendre integration between kinks; live legs revalued at the horizon with their own iv (sticky strike)');
  }
  const engineFor = (primary: typeof sView, twin: typeof sRn): PnlEngine =>
    linearSegs ? linearEngine(linearSegs, primary, twin, pf) : smoothEngine(primary, twin, pf, kinks, liveInfo!.live, liveInfo!.ext, refine);
  const eng = engineFor(sView, sRn);
  notes.unshift(
    input.style === 'american'
      ? `values: American exercise by finite differences on the backward equation${jumpsOn ? ' with Merton jumps (a PIDE)' : ''} (one solve per leg revalues it across the horizon)`
      : jumpsOn
        ? 'values: Merton jump diffusion (European), Poisson-weighted Black-Scholes-Merton series'
        : 'values: Black-Scholes-Merton (European)',
  );
  if (hasShares) notes.push('shares legs: probability in the money shown as 1; P&L is the price change (dividends left out)');

  // --- outcome figures
  const tolY = 1e-9 * scale;
  const alpha = 0.05;
  /** chance of profit, lower quantiles and worst-5% average under an engine's primary walk */
  const figuresOf = (e: PnlEngine) => {
    const atoms = e.atoms();
    const atomLevels = atoms.map((a) => a.x);
    const [y0, y1] = e.yRange();
    const pad = Math.max(1e-7 * scale, 1e-12 * Math.max(Math.abs(y0), Math.abs(y1)));
    const yLo = y0 - pad;
    const yHi = y1 + pad;
    const cache = new CdfCache((y) => e.probBelow(y, false));
    cache.at(yLo);
    cache.at(yHi);
    // seeds: atom levels and the P&L at the kinks, where the cdf may jump or bend
    for (const y of dedupe([...atomLevels, ...kinks.map(pnl)])) if (y > yLo && y < yHi) cache.at(y);
    const Q = (p: number): number => lowerQuantile(cache, p, tolY, atomLevels);
    // profit: P&L above rounding (1e-14 of the scale), so that a P&L flat at zero is not counted
    const probProfit = Math.min(1, Math.max(0, 1 - cache.at(1e-14 * scale)));
    const qs = [0.05, 0.25, 0.5, 0.75, 0.95].map(Q);
    const q05 = qs[0];
    const tailMean05 = (e.expectBelow(q05, true) + q05 * (alpha - e.probBelow(q05, true))) / alpha;
    return { atoms, cache, Q, probProfit, qs, tailMean05 };
  };
  const fv = figuresOf(eng);
  const { atoms, cache, Q, probProfit, qs, tailMean05 } = fv;

  const expectedPnl = eng.expectView();
  const expectedPnlRiskNeutral = eng.expectRiskNeutral();
  const viewEdge = expectedPnl - expectedPnlRiskNeutral;
  // a crossing below a billionth of the spot is rounding in a P&L that is flat near zero there
  const breakevens = eng.breakevens().filter((b) => b > 1e-9 * spot);
  const ext = eng.extremes();

  // the same figures under the risk-neutral twin (same P&L function, no second revaluation)
  let outcomeRiskNeutral: CheckCore['outcomeRiskNeutral'];
  if (options.riskNeutralFigures !== false) {
    const fr = figuresOf(engineFor(sRn, sRn));
    outcomeRiskNeutral = {
      probProfit: fr.probProfit,
      expectedPnl: expectedPnlRiskNeutral,
      pnlQuantiles: { p05: fr.qs[0], p25: fr.qs[1], p50: fr.qs[2], p75: fr.qs[3], p95: fr.qs[4] },
      tailMean05: fr.tailMean05,
    };
  }

  const outcome: Outcome = {
    probProfit,
    expectedPnl,
    expectedPnlRiskNeutral,
    viewEdge,
    attribution: { price, vol: expectedPnlRiskNeutral - price, drift: viewEdge },
    pnlQuantiles: { p05: qs[0], p25: qs[1], p50: qs[2], p75: qs[3], p95: qs[4] },
    tailMean05,
    breakevens,
    maxGain: ext.max,
    maxLoss: ext.min,
  };

  // --- curves for the chart
  const curves = buildCurves(dView, dRn, pnl, strikesAll, breakevens, spot, eng, Q, atoms, cache, tolY);

  const result: CheckCore = { legs, position: pos, outcome, curves, notes, ...(outcomeRiskNeutral ? { outcomeRiskNeutral } : {}) };
  if (sanitize(result)) notes.push('some figures could not be computed and are shown as 0');
  return result;
}

function buildCurves(
  dView: SpotDist,
  dRn: SpotDist,
  pnl: (s: number) => number,
  strikes: number[],
  breakevens: number[],
  spot: number,
  eng: PnlEngine,
  Q: (p: number) => number,
  atoms: Atom[],
  cache: CdfCache,
  tolY: number,
): Curves {
  const qlo = Math.min(spotQuantile(dView, 0.005), spotQuantile(dRn, 0.005), spot);
  const qhi = Math.max(spotQuantile(dView, 0.995), spotQuantile(dRn, 0.995), spot);
  // strikes and breakevens are covered, within a window that keeps the chart readable
  const marks = [...strikes, ...breakevens].filter((x) => x >= qlo / 4 && x <= qhi * 4);
  let lo = Math.min(qlo, ...marks);
  let hi = Math.max(qhi, ...marks);
  const margin = 0.03 * (hi - lo) || 0.05 * spot;
  lo = Math.max(lo - margin, lo * 0.5);
  hi = hi + margin;
  const n = CURVE_POINTS - marks.length;
  const xs: number[] = [];
  for (let i = 0; i < n; i++) xs.push(lo + ((hi - lo) * i) / (n - 1));
  const spotPts = dedupe([...xs, ...marks.filter((x) => x > lo && x < hi)]);
  const densityView = spotPts.map((s) => spotDensity(dView, s));
  const densityRiskNeutral = spotPts.map((s) => spotDensity(dRn, s));
  const pnlPts = spotPts.map(pnl);

  // P&L density under the view: histogram of the continuous part, atoms listed apart
  const listed = atoms.filter((a) => a.prob >= ATOM_LIST_MIN);
  let ya = Q(0.005);
  let yb = Q(0.995);
  if (!(yb - ya > 1e-9 * Math.max(1, Math.abs(ya), Math.abs(yb)))) {
    const w = 0.01 * Math.max(1, Math.abs(ya));
    ya -= w;
    yb += w;
  }
  const width = (yb - ya) / PNL_BINS;
  // interior edges use chart-grade crossings; the two outer ones are exact so that the bins carry
  // exactly the probability between the 0.5% and 99.5% quantiles
  const Gc = (y: number, precise = false): number => {
    let g = eng.probBelow(y, false, precise);
    for (const a of listed) if ((a.lo ?? a.x) <= y) g -= a.prob;
    return g;
  };
  const x: number[] = [];
  const dens: number[] = [];
  // the 0.5% quantile is known to a bracket (lo, ya]: start from P&L ≤ lo so that a near-atom
  // squeezed inside the bracket lands in the first bin
  let gPrev = Gc(ya, true);
  const below = cache.ys.findLastIndex((y) => y < ya);
  if (below >= 0 && ya - cache.ys[below] <= tolY) {
    gPrev = cache.gs[below];
    for (const a of listed) if ((a.lo ?? a.x) <= cache.ys[below]) gPrev -= a.prob;
  }
  for (let i = 0; i < PNL_BINS; i++) {
    const e = i === PNL_BINS - 1 ? yb : ya + width * (i + 1);
    const g = Gc(e, i === PNL_BINS - 1);
    x.push(ya + width * (i + 0.5));
    dens.push(Math.max(0, g - gPrev) / width);
    gPrev = g;
  }
  return {
    spot: spotPts,
    densityView,
    densityRiskNeutral,
    pnl: pnlPts,
    pnlDensity: { x, density: dens, atoms: listed.map((a) => ({ x: a.x, prob: a.prob })) },
  };
}

/** Replaces any non-finite number in place by 0; true when something was replaced. */
function sanitize(r: CheckCore): boolean {
  let hit = false;
  const rec = (o: Record<string, unknown>): void => {
    for (const k in o) {
      const v = o[k];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          o[k] = 0;
          hit = true;
        }
      } else if (Array.isArray(v)) arr(v);
      else if (v && typeof v === 'object') rec(v as Record<string, unknown>);
    }
  };
  const arr = (a: unknown[]): void => {
    for (let i = 0; i < a.length; i++) {
      const v = a[i];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          a[i] = 0;
          hit = true;
        }
      } else if (v && typeof v === 'object') rec(v as Record<string, unknown>);
    }
  };
  for (const l of r.legs) rec(l as unknown as Record<string, unknown>);
  rec(r.position as unknown as Record<string, unknown>);
  rec(r.outcome as unknown as Record<string, unknown>);
  const c = r.curves;
  for (const a of [c.spot, c.densityView, c.densityRiskNeutral, c.pnl, c.pnlDensity.x, c.pnlDensity.density]) arr(a);
  for (const a of c.pnlDensity.atoms) rec(a as unknown as Record<string, unknown>);
  return hit;
}
