/**
 * Targets and stops: the chance that the position's P&L reaches a profit level (target) or a loss
 * level (stop) first, before the horizon, and the expected P&L when it is closed at the first
 * level reached (else at the horizon). Monitoring is continuous.
 *
 * The P&L Π(S, t), every leg revalued at t (exit-region.ts), cuts the (x = ln S, t) plane into the
 * region D = {stop < Π < target} and its absorbing complement. Under a walk without jumps,
 * dX = ν dt + σ dW with ν = drift − q − σ²/2, the functions of (x, t)
 *
 *     u_T = P(target first by the horizon h),   u_S = P(stop first),   u_N = P(neither by h),
 *     u_E = E[P&L at exit],  exit at τ = first time Π(X_τ, τ) ∉ (stop, target), else at h,
 *
 * solve the Kolmogorov backward equation u_t + ½σ² u_xx + ν u_x = 0 in D, with the absorbing
 * values on ∂D (u_T, u_S, u_N, u_E) = (1, 0, 0, target) where Π = target and (0, 1, 0, stop) where
 * Π = stop, and at t = h inside D (0, 0, 1, Π(x, h)). The exit time's distribution comes from the
 * forward (Fokker-Planck) equation p_t = ½σ² p_xx − ν p_x in D, p = 0 on ∂D, p(·, 0) = δ(x − ln S):
 * P(τ > t) = ∫_D p(x, t) dx, whose crossing of ½ is the median time to exit when it falls before h.
 *
 * Scheme (both equations): a uniform grid in x with the spot on a node (and, for a position of
 * shares alone, whose levels are fixed spot levels, those levels on nodes too); the boundary of D,
 * which moves with t as the legs are revalued and may be several intervals, is located between
 * nodes at every time level (exit-region.ts) and imposed by cut cells: a node of D next to the
 * boundary uses the three-point non-uniform stencil through the boundary point itself, with the
 * absorbing value there (Shortley-Weller), and nodes outside D take their absorbing values. Time
 * levels t_k = h(1 − cos(πk/M))/2, graded towards both ends (the backward data jump at the corner
 * where the boundary meets the horizon; the forward data is a point mass at t = 0); two fully
 * implicit steps then variable-step BDF2, second order and L-stable (the boundary moving across
 * nodes excites stiff modes that Crank-Nicolson would leave undamped). Second order in space and
 * time; the convergence table is in test/bench/exits.bench.ts.
 *
 * With Merton jumps the walk can jump over a level; that case is handled by a seeded Monte Carlo
 * (exits-mc.ts), see there for why.
 */
import { segmentsAt, pnlSurface, type Levels, type PnlSurface, type Segments } from './exit-region.js';
import type { CheckInput, Walk } from './types.js';

export type { Levels } from './exit-region.js';

export interface ExitFigures {
  /** P(the P&L reaches the target before the stop and by the horizon) */
  probTarget: number;
  /** P(the P&L reaches the stop first, by the horizon) */
  probStop: number;
  /** P(neither level by the horizon) */
  probNeither: number;
  /** E[P&L when closed at the first level reached, else at the horizon] (money) */
  expectedPnl: number;
  /** median of the exit time (years from asof) when P(exit by the horizon) ≥ ½, else null */
  medianExitYears: number | null;
  /** 'pde': finite differences on the backward equation; 'monte-carlo': seeded simulation */
  method: 'pde' | 'monte-carlo';
  /** paths simulated (Monte Carlo only) */
  paths?: number;
  /** standard errors (Monte Carlo only) */
  stderr?: { probTarget: number; probStop: number; probNeither: number; expectedPnl: number };
}

export interface ExitOptions {
  /** grid intervals in x across the region's extent (default 400) */
  nx?: number;
  /** time steps from asof to the horizon (default 200) */
  nt?: number;
  /** levels where the region is found from the P&L (default nt / 4); the solver's levels between them interpolate the region's ends */
  ns?: number;
  /**
   * Discount rate r: the backward solve then gives E[e^{−rτ}·(exit value)] instead (u_T + u_S + u_N
   * = E[e^{−rτ}], u_E = E[e^{−rτ} Π_τ]); used to check optional stopping against today's value.
   */
  discount?: number;
}

/** The grid, the time levels and the region at each level: shared by both walks. */
export interface ExitGrid {
  x: Float64Array;
  /** index of the spot's node */
  i0: number;
  t: Float64Array;
  segs: Segments[];
  /** node kinds and stencils at each level */
  st: Stencils;
  /** a grid COARSE times coarser for the forward solve (the exit time's median needs less) */
  coarse: { x: Float64Array; i0: number; st: Stencils };
  /** number of levels where the region was found from the P&L */
  surfaceLevels: number;
  /** P&L at the two grid edges at each level (far-field values where D reaches an edge) */
  edgeL: Float64Array;
  edgeR: Float64Array;
  /** P&L at the horizon at every node */
  pnlH: Float64Array;
  levels: Levels;
  surface: PnlSurface;
}

const SCAN_STEP = 0.015;
const DEFAULT_NX = 100;
const DEFAULT_NT = 200;
/** at least this many grid intervals to one standard deviation of ln S over the horizon */
const NODES_PER_SD = 24;
/** solver steps per surface level */
const SUBSTEPS = 4;
/** the forward solve's grid is this many times coarser in x */
const COARSE = 2;
/** at most this many births or deaths of segments get graded levels */
const MAX_EVENTS = 12;
/** levels graded towards a birth or death of a segment */
const EVENT_LEVELS = 8;

function signature(s: Segments): string {
  return s.kinds.join(',');
}
const WIDTH_SDS = 7;

/** Time levels graded towards both ends. */
export function timeLevels(h: number, m: number): Float64Array {
  const t = new Float64Array(m + 1);
  for (let k = 0; k <= m; k++) t[k] = (h * (1 - Math.cos((Math.PI * k) / m))) / 2;
  t[0] = 0;
  t[m] = h;
  return t;
}

/** Uniform scan points on [lo, hi] plus the strikes' logs inside (kinks of the P&L at the horizon). */
function scanPoints(lo: number, hi: number, n: number, strikes: number[]): Float64Array {
  const sc: number[] = [];
  for (let i = 0; i <= n; i++) sc.push(lo + ((hi - lo) * i) / n);
  for (const k of strikes) {
    const xk = Math.log(k);
    if (xk > lo && xk < hi) sc.push(xk);
  }
  sc.sort((a, b) => a - b);
  return Float64Array.from(sc.filter((v, i) => i === 0 || v > sc[i - 1]));
}

/** Adds the 'in' segments of s to the hull [lo, hi]. */
function hullOf(s: Segments, hull: [number, number]): void {
  const m = s.cuts.length;
  for (let j = 0; j <= m; j++) {
    if (s.kinds[j] !== 'in') continue;
    hull[0] = Math.min(hull[0], j > 0 ? s.cuts[j - 1] : -Infinity);
    hull[1] = Math.max(hull[1], j < m ? s.cuts[j] : Infinity);
  }
}

/** The region at every solver level, shared by the finite differences and the Monte Carlo. */
export interface ExitRegion {
  surface: PnlSurface;
  /** solver levels (years from asof) and the segments of the line x = ln S at each */
  t: Float64Array;
  segs: Segments[];
  /** P&L at each surface level, and the surface index (fractional) of each solver level */
  pnls: ((S: number) => number)[];
  at: number[];
  /** the hull of the region over all levels (x), the spot's x and the half-width searched */
  hull: [number, number];
  x0: number;
  w: number;
}

/**
 * Finds the region at every time level for walks whose vols and drifts are given (the search
 * reaches WIDTH_SDS standard deviations under each): the P&L is scanned at `ns` surface levels
 * graded towards both ends, births and deaths of segments are located and graded towards, and
 * `nt` solver levels interpolate the ends of the segments between the surface levels.
 */
export function exitRegion(input: CheckInput, levels: Levels, walks: Walk[], opts: ExitOptions = {}): ExitRegion {
  const nt = Math.max(4, Math.floor(opts.nt ?? DEFAULT_NT));
  const surface = pnlSurface(input);
  const { spot, yield: q } = input.market;
  const h = input.horizonYears;
  const x0 = Math.log(spot);
  let w = 0.05;
  for (const wk of walks) {
    const nu = wk.drift - q - 0.5 * wk.vol * wk.vol;
    w = Math.max(w, WIDTH_SDS * wk.vol * Math.sqrt(h) + Math.abs(nu) * h + 0.02);
  }
  const ns = Math.max(4, Math.floor(opts.ns ?? Math.ceil(nt / SUBSTEPS)));
  const base = timeLevels(h, ns);
  // pass 1: every fourth level over the whole width, for the hull of the region
  const wide = scanPoints(x0 - w, x0 + w, Math.min(400, Math.max(40, Math.ceil((2 * w) / SCAN_STEP))), surface.strikes);
  const hull: [number, number] = [x0, x0];
  for (let k = 0; k < base.length; k += k + 4 < base.length || k === base.length - 1 ? 4 : base.length - 1 - k) {
    hullOf(segmentsAt(surface.at(base[k]), wide, levels), hull);
    if (k === base.length - 1) break;
  }
  const margin = 3 * ((2 * w) / Math.max(40, Math.ceil((2 * w) / SCAN_STEP)));
  const sLo = Math.max(x0 - w, hull[0] - margin);
  const sHi = Math.min(x0 + w, hull[1] + margin);
  // pass 2: every level over the hull, finer where the hull is narrow
  const scan = scanPoints(sLo, sHi, Math.min(200, Math.max(24, Math.ceil((sHi - sLo) / SCAN_STEP))), surface.strikes);
  const tl: number[] = [];
  const segs: Segments[] = [];
  const pnls: ((S: number) => number)[] = [];
  const segOf = (tk: number): Segments => segmentsAt(surface.at(tk), scan, levels);
  const segKeep = (tk: number): Segments => {
    const p = surface.at(tk);
    pnls.push(p);
    return segmentsAt(p, scan, levels);
  };
  let prev = segKeep(base[0]);
  tl.push(base[0]);
  segs.push(prev);
  let events = 0;
  for (let k = 1; k < base.length; k++) {
    const pendingT = base[k];
    const next = segmentsAt(surface.at(pendingT), scan, levels);
    if (events < MAX_EVENTS && signature(next) !== signature(prev)) {
      // a segment is born or dies between the two levels: its ends move like √|t − t*| from the
      // event time t*, so the levels are graded towards t* on the side where it exists
      events++;
      const sa = signature(prev);
      let ta = base[k - 1];
      let tb = base[k];
      for (let it = 0; it < 40 && tb - ta > 1e-7 * (base[k] - base[k - 1]); it++) {
        const tm = 0.5 * (ta + tb);
        if (signature(segOf(tm)) === sa) ta = tm;
        else tb = tm;
      }
      const ins: number[] = [];
      if (next.cuts.length > prev.cuts.length) {
        const d = base[k] - tb;
        ins.push(ta);
        for (let j = 0; j < EVENT_LEVELS; j++) ins.push(tb + d * (j / EVENT_LEVELS) ** 2);
      } else {
        const d = ta - base[k - 1];
        for (let j = EVENT_LEVELS - 1; j >= 0; j--) ins.push(ta - d * (j / EVENT_LEVELS) ** 2);
        ins.push(tb);
      }
      for (const tk of ins) {
        if (tk <= tl[tl.length - 1] || tk >= base[k]) continue;
        tl.push(tk);
        segs.push(segKeep(tk));
      }
    }
    tl.push(base[k]);
    pnls.push(surface.at(base[k]));
    segs.push(next);
    prev = next;
  }
  // solver levels: each interval between surface levels cut into `sub` steps, the cut points
  // interpolated in the level index (cubic Lagrange over the neighbouring levels that share the
  // interval's segment pattern; the graded levels make √-like motions smooth in the index)
  const sigs = segs.map(signature);
  const ls = tl.length;
  const sub = Math.max(1, Math.round(nt / ns));
  const tv: number[] = [];
  const sgv: Segments[] = [];
  const edgesAt: number[] = []; // surface index of each solver level (fractional)
  for (let k = 0; k + 1 < ls; k++) {
    tv.push(tl[k]);
    sgv.push(segs[k]);
    edgesAt.push(k);
    if (sigs[k] !== sigs[k + 1]) continue;
    let a = k;
    let b = k + 1;
    if (a > 0 && sigs[a - 1] === sigs[k]) a--;
    if (b + 1 < ls && sigs[b + 1] === sigs[k]) b++;
    const m = segs[k].cuts.length;
    for (let j = 1; j < sub; j++) {
      const sIdx = k + j / sub;
      const wts = lagrangeWeights(a, b, sIdx);
      let tt = 0;
      for (let i = a; i <= b; i++) tt += wts[i - a] * tl[i];
      if (!(tt > tv[tv.length - 1] && tt < tl[k + 1])) tt = tl[k] + ((tl[k + 1] - tl[k]) * j) / sub;
      const cuts = new Float64Array(m);
      for (let c = 0; c < m; c++) {
        let v = 0;
        for (let i = a; i <= b; i++) v += wts[i - a] * segs[i].cuts[c];
        cuts[c] = c > 0 && v < cuts[c - 1] ? cuts[c - 1] : v;
      }
      tv.push(tt);
      sgv.push({ cuts, kinds: segs[k].kinds });
      edgesAt.push(sIdx);
    }
  }
  tv.push(tl[ls - 1]);
  sgv.push(segs[ls - 1]);
  edgesAt.push(ls - 1);
  const t = Float64Array.from(tv);
  // the hull at the solved levels
  const hl: [number, number] = [x0, x0];
  for (const sg of segs) hullOf(sg, hl);
  return { surface, t, segs: sgv, pnls, at: edgesAt, hull: hl, x0, w };
}

/**
 * Builds the grid for a check under walks whose vols and drifts are given (the grid reaches
 * WIDTH_SDS standard deviations under each), and the region at every time level.
 */
export function exitGrid(input: CheckInput, levels: Levels, walks: Walk[], opts: ExitOptions = {}): ExitGrid {
  const nx = Math.max(8, Math.floor(opts.nx ?? DEFAULT_NX));
  const reg = exitRegion(input, levels, walks, opts);
  const { surface, t, segs: sgv, pnls, at: edgesAt, hull: hl, x0, w } = reg;
  const segs = sgv;
  const ls = pnls.length;
  // nx intervals across the region's hull, and never coarser than NODES_PER_SD to one standard
  // deviation of ln S over the horizon under the calmest walk (a hull that is unbounded spans
  // 2 × 7 s.d. and would otherwise get few nodes where the paths are)
  const h = input.horizonYears;
  const sd = Math.min(...walks.map((wk) => wk.vol)) * Math.sqrt(h);
  const dx0 = (Math.min(hl[1], x0 + w) - Math.max(hl[0], x0 - w)) / nx;
  const dx = sd > 0 ? Math.min(dx0, sd / NODES_PER_SD) : dx0;
  const grid = (d: number): { x: Float64Array; i0: number } => {
    const xl = Math.max(hl[0] - 2 * d, x0 - w);
    const xr = Math.min(hl[1] + 2 * d, x0 + w);
    // breakpoints: the grid ends, the spot and (shares alone) the fixed levels
    const bps = [xl, x0, xr];
    if (surface.timeInvariant) for (const c of segs[0].cuts) if (c > xl && c < xr) bps.push(c);
    bps.sort((u, v) => u - v);
    const xs: number[] = [bps[0]];
    let i0 = 0;
    for (let j = 0; j + 1 < bps.length; j++) {
      const len = bps[j + 1] - bps[j];
      if (len <= 0) continue;
      const n = Math.max(1, Math.round(len / d));
      for (let i = 1; i <= n; i++) xs.push(i === n ? bps[j + 1] : bps[j] + (len * i) / n);
      if (bps[j + 1] === x0) i0 = xs.length - 1;
    }
    return { x: Float64Array.from(xs), i0 };
  };
  const { x, i0 } = grid(dx);
  const coarse = grid(dx * COARSE);
  const n = x.length;
  // P&L at the grid ends (far-field values), interpolated linearly between surface levels
  const sL = Math.exp(x[0]);
  const sR = Math.exp(x[n - 1]);
  const eL = pnls.map((p) => p(sL));
  const eR = pnls.map((p) => p(sR));
  const edgeL = Float64Array.from(edgesAt, (e) => lerp(eL, e));
  const edgeR = Float64Array.from(edgesAt, (e) => lerp(eR, e));
  const st = stencils(x, sgv);
  const stc = stencils(coarse.x, sgv);
  const pH = pnls[ls - 1];
  const pnlH = new Float64Array(n);
  const oM = (t.length - 1) * n;
  for (let i = 0; i < n; i++) if (st.kind[oM + i] === K_IN || st.kind[oM + i] === K_EDGE) pnlH[i] = pH(Math.exp(x[i]));
  const segs2 = sgv;
  return { x, i0, t, segs: segs2, st, coarse: { x: coarse.x, i0: coarse.i0, st: stc }, edgeL, edgeR, pnlH, levels, surface, surfaceLevels: ls };
}

function lerp(v: number[], e: number): number {
  const k = Math.min(v.length - 2, Math.floor(e));
  const f = e - k;
  return f === 0 ? v[k] : v[k] * (1 - f) + v[k + 1] * f;
}

/** Lagrange weights at s for the integer nodes a..b. */
function lagrangeWeights(a: number, b: number, s: number): number[] {
  const w: number[] = [];
  for (let i = a; i <= b; i++) {
    let v = 1;
    for (let j = a; j <= b; j++) if (j !== i) v *= (s - j) / (i - j);
    w.push(v);
  }
  return w;
}

// ---------------------------------------------------------------------------------------------
// one time level: node kinds and the stencil to each side

const K_IN = 0;
const K_TARGET = 1;
const K_STOP = 2;
const K_EDGE = 3;

/**
 * Node kinds at every level and the distances to the points each node of the region couples to,
 * level after level in flat arrays (entry k·n + i).
 */
export interface Stencils {
  n: number;
  /** K_IN, or the absorbing kind of the node (K_EDGE: a grid end inside the region) */
  kind: Int8Array;
  /** distance to the left point (node or cut) and its kind (K_IN: the node i − 1) */
  hl: Float64Array;
  lk: Int8Array;
  hr: Float64Array;
  rk: Int8Array;
  /** per level, the first and last node that is in the region or a grid end inside it */
  first: Int32Array;
  last: Int32Array;
}

function kindCode(k: string): number {
  return k === 'target' ? K_TARGET : k === 'stop' ? K_STOP : K_IN;
}

function stencils(x: Float64Array, levels: Segments[]): Stencils {
  const n = x.length;
  const L = levels.length;
  const out: Stencils = {
    n,
    kind: new Int8Array(L * n),
    hl: new Float64Array(L * n),
    lk: new Int8Array(L * n),
    hr: new Float64Array(L * n),
    rk: new Int8Array(L * n),
    first: new Int32Array(L),
    last: new Int32Array(L),
  };
  for (let k = 0; k < L; k++) stencilAt(x, levels[k], out, k);
  return out;
}

function stencilAt(x: Float64Array, s: Segments, out: Stencils, level: number): void {
  const n = x.length;
  const o = level * n;
  const { cuts, kinds } = s;
  const m = cuts.length;
  const codes = kinds.map(kindCode);
  let first = n;
  let last = -1;
  let j = 0; // segment index of the current node
  for (let i = 0; i < n; i++) {
    const xi = x[i];
    while (j < m && cuts[j] < xi) j++;
    let k = codes[j];
    // a node exactly on a cut belongs to the absorbing side
    if (j < m && cuts[j] === xi && k === K_IN) k = codes[j + 1];
    if (k === K_IN && (i === 0 || i === n - 1)) k = K_EDGE;
    out.kind[o + i] = k;
    if (k === K_IN || k === K_EDGE) {
      if (first === n) first = i;
      last = i;
    }
    if (k !== K_IN) continue;
    // left: the largest cut below x_i, if it lies at or right of the node i − 1
    const floor = 1e-9 * (x[i + 1] - x[i - 1]);
    const cl = j > 0 ? cuts[j - 1] : -Infinity;
    if (cl >= x[i - 1]) {
      out.hl[o + i] = Math.max(xi - cl, floor);
      out.lk[o + i] = codes[j - 1];
    } else {
      out.hl[o + i] = xi - x[i - 1];
      out.lk[o + i] = K_IN;
    }
    const cr = j < m ? cuts[j] : Infinity;
    if (cr <= x[i + 1]) {
      out.hr[o + i] = Math.max(cr - xi, floor);
      out.rk[o + i] = codes[j + 1];
    } else {
      out.hr[o + i] = x[i + 1] - xi;
      out.rk[o + i] = K_IN;
    }
  }
  out.first[level] = first;
  out.last[level] = last;
}

// ---------------------------------------------------------------------------------------------
// the solves

/**
 * The backward solve: u_T, u_S, u_N, u_E at every node at t = 0 (with `discount` r > 0 each is
 * the expectation of e^{−rτ} times the exit value instead).
 */
export function solveExitBackward(g: ExitGrid, walk: Walk, q: number, discount = 0): { uT: Float64Array; uS: Float64Array; uN: Float64Array; uE: Float64Array } {
  const { x, t, st, levels } = g;
  const { kind, hl: HL, hr: HR, lk: LK, rk: RK, first: FI, last: LA } = st;
  const n = x.length;
  const M = t.length - 1;
  const a2s = walk.vol * walk.vol; // 2a = σ²
  const b = walk.drift - q - 0.5 * a2s;
  const tv = levels.target ?? 0;
  const sv = levels.stop ?? 0;
  // absorbing values by kind (index K_TARGET, K_STOP) of the four functions
  const VT = [0, 1, 0, 0];
  const VS = [0, 0, 1, 0];
  const VN = [1, 0, 0, 1];
  const VE = [0, tv, sv, 0];
  let T1 = new Float64Array(n);
  let S1 = new Float64Array(n);
  let N1 = new Float64Array(n);
  let E1 = new Float64Array(n);
  let T2 = new Float64Array(n);
  let S2 = new Float64Array(n);
  let N2 = new Float64Array(n);
  let E2 = new Float64Array(n);
  let T0 = new Float64Array(n);
  let S0 = new Float64Array(n);
  let N0 = new Float64Array(n);
  let E0 = new Float64Array(n);
  const lo = new Float64Array(n);
  const di = new Float64Array(n);
  const up = new Float64Array(n);
  const cp = new Float64Array(n);
  // the horizon
  const oM = M * n;
  for (let i = 0; i < n; i++) {
    const kd = kind[oM + i];
    if (kd === K_IN || kd === K_EDGE) {
      T1[i] = 0;
      S1[i] = 0;
      N1[i] = 1;
      E1[i] = g.pnlH[i];
    } else {
      T1[i] = VT[kd];
      S1[i] = VS[kd];
      N1[i] = VN[kd];
      E1[i] = VE[kd];
    }
  }
  /**
   * History of a node that joins the region going back in time: the linear extension of the
   * later level's solution across that level's boundary (through the boundary point and the
   * nearest node of the region), instead of the absorbing value it held there.
   */
  const extend = (T: Float64Array, S: Float64Array, N: Float64Array, E: Float64Array, o: number, i: number): void => {
    for (let dir = 1; dir >= -1; dir -= 2) {
      let j = i + dir;
      while (j >= 0 && j < n && kind[o + j] !== K_IN && Math.abs(j - i) <= 2) j += dir;
      if (j < 0 || j >= n || kind[o + j] !== K_IN) continue;
      const hb = dir > 0 ? HL[o + j] : HR[o + j];
      const bk = dir > 0 ? LK[o + j] : RK[o + j];
      if (bk === K_IN) continue;
      const d0 = Math.abs(x[i] - (x[j] - dir * hb));
      if (hb < 1e-12 || d0 > 2 * hb + 1e-12) continue;
      const r = d0 / hb;
      T[i] = VT[bk] + (VT[bk] - T[j]) * r;
      S[i] = VS[bk] + (VS[bk] - S[j]) * r;
      N[i] = VN[bk] + (VN[bk] - N[j]) * r;
      E[i] = VE[bk] + (VE[bk] - E[j]) * r;
      return;
    }
  };
  for (let k = M - 1; k >= 0; k--) {
    const dt = t[k + 1] - t[k];
    // two implicit Euler start-up steps; BDF2 (variable step) where the step ratio keeps it
    // zero-stable (ratio ≤ 2 < 1 + √2), else an implicit Euler step
    let a0 = 1;
    let a1 = 1;
    let a2 = 0;
    if (k <= M - 3) {
      const om = dt / (t[k + 2] - t[k + 1]);
      if (om <= 2) {
        a0 = (1 + 2 * om) / (1 + om);
        a1 = 1 + om;
        a2 = (om * om) / (1 + om);
      }
    }
    const o = k * n;
    const o1 = o + n;
    const o2 = o1 + n;
    const fi = FI[k];
    const la = LA[k];
    const eL = g.edgeL[k];
    const eR = g.edgeR[k];
    for (let i = 0; i < n; i++) {
      const kd = kind[o + i];
      if (kd !== K_IN) {
        lo[i] = 0;
        up[i] = 0;
        di[i] = 1;
        if (kd === K_EDGE) {
          T0[i] = 0;
          S0[i] = 0;
          N0[i] = 1;
          E0[i] = i === 0 ? eL : eR;
        } else {
          T0[i] = VT[kd];
          S0[i] = VS[kd];
          N0[i] = VN[kd];
          E0[i] = VE[kd];
        }
        continue;
      }
      const k1 = kind[o1 + i];
      if (k1 === K_TARGET || k1 === K_STOP) extend(T1, S1, N1, E1, o1, i);
      if (a2 !== 0) {
        const k2 = kind[o2 + i];
        if (k2 === K_TARGET || k2 === K_STOP) extend(T2, S2, N2, E2, o2, i);
      }
      neighbourCoefs(a2s, b, HL[o + i], HR[o + i], CLR);
      const cl = CLR[0];
      const cr = CLR[1];
      const dl = dt * cl;
      const dr = dt * cr;
      di[i] = a0 + dl + dr + dt * discount;
      // a neighbour in the region is a coefficient of the system (lo, up); an absorbing one (a
      // target, a stop or a cut) moves to the right-hand side with its value (weight wl, wr)
      const lk = LK[o + i];
      const rk = RK[o + i];
      lo[i] = lk === K_IN ? -dl : 0;
      up[i] = rk === K_IN ? -dr : 0;
      T0[i] = a1 * T1[i] - a2 * T2[i];
      S0[i] = a1 * S1[i] - a2 * S2[i];
      N0[i] = a1 * N1[i] - a2 * N2[i];
      E0[i] = a1 * E1[i] - a2 * E2[i];
      if (lk !== K_IN || rk !== K_IN) {
        const wl = lk === K_IN ? 0 : dl;
        const wr = rk === K_IN ? 0 : dr;
        T0[i] = T0[i] + wl * VT[lk] + wr * VT[rk];
        S0[i] = S0[i] + wl * VS[lk] + wr * VS[rk];
        N0[i] = N0[i] + wl * VN[lk] + wr * VN[rk];
        E0[i] = E0[i] + wl * VE[lk] + wr * VE[rk];
      }
    }
    if (fi <= la) thomas4(lo, di, up, T0, S0, N0, E0, cp, fi, la);
    // the three time levels move back one step: this step's solution becomes the later level
    [T0, T1, T2] = [T2, T0, T1];
    [S0, S1, S2] = [S2, S0, S1];
    [N0, N1, N2] = [N2, N0, N1];
    [E0, E1, E2] = [E2, E0, E1];
  }
  return { uT: T1, uS: S1, uN: N1, uE: E1 };
}

/** [cl, cr] of one node, written into `neighbourCoefs`'s `out` (one scratch, no allocation per node). */
const CLR = new Float64Array(2);

/**
 * L u_i = cl(u_l − u_i) + cr(u_r − u_i) for a2s u'' + b u' (a2s = σ², b the convection) at a node
 * with gaps hl, hr to its neighbours: three-point non-uniform differences, upwinded where the
 * central form would lose the signs. Writes cl, cr into out[0], out[1].
 */
function neighbourCoefs(a2s: number, b: number, hl: number, hr: number, out: Float64Array): void {
  const sum = hl + hr;
  let cl = (a2s - b * hr) / (hl * sum);
  let cr = (a2s + b * hl) / (hr * sum);
  if (cl < 0 || cr < 0) {
    cl = a2s / (hl * sum) + (b < 0 ? -b / hl : 0);
    cr = a2s / (hr * sum) + (b > 0 ? b / hr : 0);
  }
  out[0] = cl;
  out[1] = cr;
}

/**
 * Thomas elimination of a tridiagonal system for four right-hand sides, in place, on the rows
 * fi..la (the rows outside are identities and decoupled: their couplings are zero).
 */
function thomas4(lo: Float64Array, di: Float64Array, up: Float64Array, A: Float64Array, B: Float64Array, C: Float64Array, D: Float64Array, cp: Float64Array, fi: number, la: number): void {
  let ib = 1 / di[fi];
  cp[fi] = up[fi] * ib;
  A[fi] *= ib;
  B[fi] *= ib;
  C[fi] *= ib;
  D[fi] *= ib;
  for (let i = fi + 1; i <= la; i++) {
    const l = lo[i];
    ib = 1 / (di[i] - l * cp[i - 1]);
    cp[i] = up[i] * ib;
    A[i] = (A[i] - l * A[i - 1]) * ib;
    B[i] = (B[i] - l * B[i - 1]) * ib;
    C[i] = (C[i] - l * C[i - 1]) * ib;
    D[i] = (D[i] - l * D[i - 1]) * ib;
  }
  for (let i = la - 1; i >= fi; i--) {
    const c = cp[i];
    A[i] -= c * A[i + 1];
    B[i] -= c * B[i + 1];
    C[i] -= c * C[i + 1];
    D[i] -= c * D[i + 1];
  }
}

/**
 * The forward solve: P(no exit by t_k) at every level (the density of the walk killed at the
 * boundary, started as a point mass at the spot), on the coarse grid.
 */
export function solveExitForward(g: ExitGrid, walk: Walk, q: number): Float64Array {
  const { t } = g;
  const { x, st, i0 } = g.coarse;
  const { kind, hl: HL, hr: HR, lk: LK, rk: RK, first: FI, last: LA } = st;
  const n = x.length;
  const M = t.length - 1;
  const a2s = walk.vol * walk.vol;
  const b = -(walk.drift - q - 0.5 * a2s); // the adjoint's convection
  let p1 = new Float64Array(n);
  let p2 = new Float64Array(n);
  let p0 = new Float64Array(n);
  const lo = new Float64Array(n);
  const di = new Float64Array(n);
  const up = new Float64Array(n);
  const cp = new Float64Array(n);
  const z = new Float64Array(n);
  const surv = new Float64Array(M + 1);
  if (kind[i0] !== K_IN) return surv; // the spot is outside the region: exit at once
  p1[i0] = 2 / (HL[i0] + HR[i0]);
  surv[0] = 1;
  for (let k = 1; k <= M; k++) {
    const dt = t[k] - t[k - 1];
    let a0 = 1;
    let a1 = 1;
    let a2 = 0;
    if (k >= 3) {
      const om = dt / (t[k - 1] - t[k - 2]);
      if (om <= 2) {
        a0 = (1 + 2 * om) / (1 + om);
        a1 = 1 + om;
        a2 = (om * om) / (1 + om);
      }
    }
    const o = k * n;
    for (let i = 0; i < n; i++) {
      if (kind[o + i] !== K_IN) {
        lo[i] = 0;
        up[i] = 0;
        di[i] = 1;
        p0[i] = 0;
        continue;
      }
      neighbourCoefs(a2s, b, HL[o + i], HR[o + i], CLR);
      const cl = CLR[0];
      const cr = CLR[1];
      di[i] = a0 + dt * (cl + cr);
      p0[i] = a1 * p1[i] - a2 * p2[i];
      lo[i] = LK[o + i] === K_IN ? -dt * cl : 0;
      up[i] = RK[o + i] === K_IN ? -dt * cr : 0;
    }
    if (FI[k] <= LA[k]) thomas4(lo, di, up, p0, z, z, z, cp, FI[k], LA[k]);
    let mass = 0;
    for (let i = 0; i < n; i++) if (kind[o + i] === K_IN) mass += 0.5 * p0[i] * (HL[o + i] + HR[o + i]);
    surv[k] = Math.min(1, Math.max(0, mass));
    const tmp = p2;
    p2 = p1;
    p1 = p0;
    p0 = tmp;
  }
  return surv;
}

/** Median exit time from the survival curve, when it falls before the horizon. */
export function medianFromSurvival(t: Float64Array, surv: Float64Array): number | null {
  for (let k = 1; k < t.length; k++) {
    if (surv[k] <= 0.5) {
      const s0 = surv[k - 1];
      const s1 = surv[k];
      const w = s0 > s1 ? (s0 - 0.5) / (s0 - s1) : 1;
      return t[k - 1] + w * (t[k] - t[k - 1]);
    }
  }
  return null;
}

function clamp01(v: number): number {
  return v < 0 ? 0 : v > 1 ? 1 : v;
}

/** Exit figures under one walk without jumps, on a grid built for it (and maybe other walks). */
export function exitFiguresPde(g: ExitGrid, walk: Walk, q: number): ExitFigures {
  const u = solveExitBackward(g, walk, q);
  const i = g.i0;
  const surv = solveExitForward(g, walk, q);
  return {
    probTarget: clamp01(u.uT[i]),
    probStop: clamp01(u.uS[i]),
    probNeither: clamp01(u.uN[i]),
    expectedPnl: u.uE[i],
    medianExitYears: medianFromSurvival(g.t, surv),
    method: 'pde',
  };
}
