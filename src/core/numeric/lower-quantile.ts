/** The lower quantile of a nondecreasing function known by its evaluations. */

/**
 * Evaluations of a nondecreasing function G (a P&L cdf), kept sorted to bracket later solves:
 * ys[0 … n) ascending with gs = G(ys). Plain arrays: a check makes a few dozen evaluations, and
 * typed arrays of that size cost more to allocate than the whole insertion work.
 */
export class CdfCache {
  ys: number[] = [];
  gs: number[] = [];
  n = 0;
  constructor(private readonly G: (y: number) => number) {}
  at(y: number): number {
    const g = this.G(y);
    const { ys, gs } = this;
    let i = this.n;
    ys.push(y);
    gs.push(g);
    while (i > 0 && ys[i - 1] > y) {
      ys[i] = ys[i - 1];
      gs[i] = gs[i - 1];
      i--;
    }
    ys[i] = y;
    gs[i] = g;
    this.n++;
    return g;
  }
  /** index of the last evaluation below y, or −1 */
  lastBelow(y: number): number {
    let i = this.n - 1;
    while (i >= 0 && !(this.ys[i] < y)) i--;
    return i;
  }
}

/**
 * Below this margin a jump's left limit G(a) − jump is not trusted to be under p: the solve runs.
 * (The engines' G and jumps agree to about 1e-15 at expiry and 1e-12 before it.)
 */
const JUMP_MARGIN = 1e-9;

/**
 * Lower quantile inf{y : G(y) ≥ p} of a nondecreasing G (a P&L cdf, possibly with jumps), given
 * G(lo) < p ≤ G(hi) among the cached values: Illinois regula falsi with bisection safeguards, to a
 * bracket of width `tol`; a jump (atom) inside the final bracket is returned exactly.
 * `jumps` (optional, beside `atoms`): the size of G's jump at each atom. When the tightest bracket
 * ends on an atom whose left limit G(a) − jump is below p, every y < a has G(y) < p, so the
 * quantile is that atom: it is returned at once (the solve would close on it from below).
 */
export function lowerQuantile(cache: CdfCache, p: number, tol: number, atoms: number[], jumps?: number[]): number {
  const { ys, gs, n } = cache;
  // tightest bracket among the known evaluations (the first and last are the outer bracket)
  let lo = ys[0];
  let glo = gs[0] - p;
  let hi = ys[n - 1];
  let ghi = gs[n - 1] - p;
  for (let i = 0; i < n; i++) {
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
  if (jumps) {
    const k = atoms.indexOf(hi);
    // G(a) − jump < p − margin, with ghi = G(a) − p (NaN jumps never take this exit)
    if (k >= 0 && ghi - jumps[k] < -JUMP_MARGIN) return hi;
  }
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
