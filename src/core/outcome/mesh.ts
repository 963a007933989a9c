/**
 * The integration mesh of the smooth engine, in log-spot: panels of about PANEL_SCALES local
 * scales (each mixture component's s, each live leg's iv√τ near its strike), split at the kinks
 * (strikes of legs expiring at the horizon) and at the edges of every scale's window.
 */
import { dedupe } from '../numeric/sorted.js';
import { logRange, MESH_MIN_WEIGHT, Z_RANGE, type SplitDist } from './split-dist.js';

/** Widest panel in log-spot where no density or live leg sets a finer scale. */
const MAX_PANEL = 0.5;
/** Panel width in units of the local scale (before refinement). */
const PANEL_SCALES = 2;

/** A stretch of log-spot [lo, hi) where panels are at most `scale` wide (× PANEL_SCALES). */
interface Window {
  lo: number;
  hi: number;
  scale: number;
}

/** A live leg as the mesh sees it. */
export interface LiveInfo {
  /** ln of the strike shifted by the carry over the remaining life (centre of the smooth kink) */
  centre: number;
  /** iv·√τ, the log-width of the live leg's curvature */
  width: number;
}

export interface MeshInput {
  view: SplitDist;
  rn: SplitDist;
  /** a third walk whose expectation alone is wanted on the same samples (the view's vol at the rate) */
  extra?: SplitDist;
  /** strikes of the legs expiring at the horizon */
  kinks: number[];
  live: LiveInfo[];
  /** log-spot range the mesh must cover at least (spot and strikes) */
  extraRange: [number, number];
  /** panels per local scale (1 normally) */
  refine: number;
}

/** Panels [pa[i], pb[i]], ascending and contiguous, covering [X0, X1]. */
export interface Mesh {
  pa: number[];
  pb: number[];
  X0: number;
  X1: number;
}

/** The windows of local scale and the breakpoints (kinks of live legs with no width) they imply. */
function windowsOf(m: MeshInput): { windows: Window[]; breaks: number[] } {
  const windows: Window[] = [];
  for (const d of m.extra ? [m.view, m.rn, m.extra] : [m.view, m.rn]) {
    for (const c of d.cont.components) {
      if (c.weight < MESH_MIN_WEIGHT) continue;
      windows.push({ lo: c.mu - Z_RANGE * c.s, hi: c.mu + c.s * c.s + Z_RANGE * c.s, scale: c.s });
    }
  }
  const breaks: number[] = [];
  for (const l of m.live) {
    if (l.width > 1e-9) windows.push({ lo: l.centre - 9 * l.width, hi: l.centre + 9 * l.width, scale: l.width });
    else breaks.push(l.centre);
  }
  return { windows, breaks };
}

function scaleAt(windows: Window[], x: number): number {
  let s = MAX_PANEL;
  for (const w of windows) if (x >= w.lo && x < w.hi && w.scale < s) s = w.scale;
  return Math.max(s, 1e-9);
}

export function buildMesh(m: MeshInput): Mesh {
  const { windows, breaks } = windowsOf(m);
  let X0 = m.extraRange[0];
  let X1 = m.extraRange[1];
  for (const d of m.extra ? [m.view, m.rn, m.extra] : [m.view, m.rn]) {
    const [a, b] = logRange(d);
    X0 = Math.min(X0, a);
    X1 = Math.max(X1, b);
  }
  for (const w of windows) {
    X0 = Math.min(X0, w.lo);
    X1 = Math.max(X1, w.hi);
  }
  for (const k of m.kinks) breaks.push(Math.log(k));
  const bps = dedupe([X0, X1, ...breaks.filter((b) => b > X0 && b < X1)]);
  const edges = dedupe(windows.flatMap((w) => [w.lo, w.hi]));
  const pa: number[] = [];
  const pb: number[] = [];
  let ei = 0;
  for (let i = 0; i + 1 < bps.length; i++) {
    const u = bps[i];
    const v = bps[i + 1];
    let x = u;
    while (x < v) {
      let next = x + (PANEL_SCALES * scaleAt(windows, x)) / m.refine;
      while (ei < edges.length && edges[ei] <= x) ei++;
      if (ei < edges.length && edges[ei] < next) next = edges[ei];
      if (next > v || v - next < 1e-12 * Math.max(1, Math.abs(v))) next = v;
      pa.push(x);
      pb.push(next);
      x = next;
    }
  }
  return { pa, pb, X0, X1 };
}
