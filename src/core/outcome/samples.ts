/**
 * Samples of the P&L on the mesh (panel ends and Gauss-Legendre nodes, ascending) with the panel
 * integrals of P&L × density under both walks, the local extrema between samples located and
 * added, and the monotone runs of the samples.
 */
import { logDensity } from '../dist.js';
import { GL8 as GL } from '../numeric/gauss-legendre.js';
import { brentMin } from '../numeric/minimise.js';
import type { Mesh } from './mesh.js';
import type { SplitDist } from './split-dist.js';

/** Gauss-Legendre nodes per panel. */
const GL_N = 8;

/** P&L × density integrals on log-spot panels (composite Gauss-Legendre). */
export class Quadrature {
  constructor(
    private readonly view: SplitDist,
    private readonly rn: SplitDist,
    /** P&L as a function of log-spot */
    private readonly fx: (x: number) => number,
    /** a third walk whose integral is wanted too (the view's vol at the rate) */
    private readonly extra?: SplitDist,
  ) {}

  /**
   * [∫ P&L·f_view, ∫ P&L·f_rn, ∫ P&L·f_extra (0 without it)] over [u, v]; with `sx`, `sfv` the
   * nodes and P&L there are appended
   */
  panel(u: number, v: number, sx?: number[], sfv?: number[]): [number, number, number] {
    const half = 0.5 * (v - u);
    const mid = 0.5 * (u + v);
    let iv = 0;
    let ir = 0;
    let ie = 0;
    const extra = this.extra?.cont.components.length ? this.extra.cont : undefined;
    for (let k = 0; k < GL_N; k++) {
      const x = mid + half * GL.t[k];
      const p = this.fx(x);
      if (sx && sfv) {
        sx.push(x);
        sfv.push(p);
      }
      const wv = this.view.cont.components.length ? logDensity(this.view.cont, x) : 0;
      const wr = this.rn.cont.components.length ? logDensity(this.rn.cont, x) : 0;
      iv += GL.w[k] * p * wv;
      ir += GL.w[k] * p * wr;
      if (extra) ie += GL.w[k] * p * logDensity(extra, x);
    }
    return [iv * half, ir * half, ie * half];
  }
}

export interface Samples {
  /** log-spot of the samples, ascending */
  sx: number[];
  /** P&L at the samples */
  sfv: number[];
  /** prefix sums of the panel integrals under the view and the twin walk (at the rate, or the market) */
  prefV: Float64Array;
  prefR: Float64Array;
  /** prefix sums under the third walk (zeros without it) */
  prefE: Float64Array;
}

/** Samples and panel integrals over the whole mesh. */
export function sampleMesh(mesh: Mesh, quad: Quadrature, fx: (x: number) => number): Samples {
  const { pa, pb } = mesh;
  const np = pa.length;
  const sx: number[] = [];
  const sfv: number[] = [];
  const prefV = new Float64Array(np + 1);
  const prefR = new Float64Array(np + 1);
  const prefE = new Float64Array(np + 1);
  for (let i = 0; i < np; i++) {
    sx.push(pa[i]);
    sfv.push(fx(pa[i]));
    const [iv, ir, ie] = quad.panel(pa[i], pb[i], sx, sfv);
    prefV[i + 1] = prefV[i] + iv;
    prefR[i + 1] = prefR[i] + ir;
    prefE[i + 1] = prefE[i] + ie;
  }
  sx.push(mesh.X1);
  sfv.push(fx(mesh.X1));
  return { sx, sfv, prefV, prefR, prefE };
}

/**
 * Local extrema between samples: locates each (Brent's minimiser) and adds it as a sample, so
 * that between neighbouring samples the P&L is monotone and every level set is bracketed.
 * Changes below `noise` are ignored.
 */
export function addLocalExtrema(sx: number[], sfv: number[], fx: (x: number) => number, noise: number): void {
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
  if (!ins.length) return;
  const all = sx.map((x, i) => [x, sfv[i]] as [number, number]).concat(ins).sort((a, b) => a[0] - b[0]);
  sx.length = 0;
  sfv.length = 0;
  for (const [x, v] of all) {
    sx.push(x);
    sfv.push(v);
  }
}

/**
 * Maximal monotone runs of the samples as pairs (first, last) of sample indices (neighbouring
 * runs share their end sample): on each run the set {P&L ≤ y} is a prefix or a suffix.
 */
export function monotoneRuns(sfv: number[]): number[] {
  const ns = sfv.length;
  const runs: number[] = [];
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
  return runs;
}
