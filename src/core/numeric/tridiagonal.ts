/**
 * Tridiagonal systems of the implicit steps of a backward solve: (I − k·L) y = rhs on the interior
 * nodes 1 … n−2, with y[0] = y0 and y[n−1] = yn given and L y_i = a_i y_{i−1} + b_i y_i + c_i y_{i+1}.
 * With a `floor`, the linear complementarity problem y ≥ floor: Brennan-Schwartz (each value
 * raised to the floor as the back substitution finds it; exact when the region where the floor
 * binds is one interval at the end where the substitution starts), or projected SOR.
 */

/** Work arrays (length n) for the elimination. */
export interface TridiagonalWork {
  /** 1 / eliminated diagonal */
  ib: Float64Array;
  /** eliminated right-hand side */
  dp: Float64Array;
}

export interface TridiagonalSystem {
  /** the factor k of (I − k·L) */
  k: number;
  a: Float64Array;
  b: Float64Array;
  c: Float64Array;
  rhs: Float64Array;
  y0: number;
  yn: number;
}

/**
 * Thomas elimination from the high end, back substitution upwards from node 1 into `out`
 * (Brennan-Schwartz for a floor binding at the low end).
 */
export function solveFromLow(s: TridiagonalSystem, out: Float64Array, work: TridiagonalWork, floor?: Float64Array): void {
  const { k: im, a, b, c, rhs } = s;
  const { ib, dp } = work;
  const last = out.length - 1;
  let ibp = 1 / (1 - im * b[last - 1]);
  ib[last - 1] = ibp;
  let dpp = rhs[last - 1] + im * c[last - 1] * s.yn;
  dp[last - 1] = dpp;
  for (let i = last - 2; i >= 1; i--) {
    const m = -im * c[i] * ibp;
    ibp = 1 / (1 - im * b[i] + m * im * a[i + 1]);
    dpp = rhs[i] - m * dpp;
    ib[i] = ibp;
    dp[i] = dpp;
  }
  let prev = s.y0;
  for (let i = 1; i < last; i++) {
    let y = (dp[i] + im * a[i] * prev) * ib[i];
    if (floor && y < floor[i]) y = floor[i];
    out[i] = y;
    prev = y;
  }
}

/**
 * Thomas elimination from the low end, back substitution downwards from node n−2 into `out`
 * (Brennan-Schwartz for a floor binding at the high end).
 */
export function solveFromHigh(s: TridiagonalSystem, out: Float64Array, work: TridiagonalWork, floor?: Float64Array): void {
  const { k: im, a, b, c, rhs } = s;
  const { ib, dp } = work;
  const last = out.length - 1;
  let ibp = 1 / (1 - im * b[1]);
  ib[1] = ibp;
  let dpp = rhs[1] + im * a[1] * s.y0;
  dp[1] = dpp;
  for (let i = 2; i < last; i++) {
    const m = -im * a[i] * ibp;
    ibp = 1 / (1 - im * b[i] + m * im * c[i - 1]);
    dpp = rhs[i] - m * dpp;
    ib[i] = ibp;
    dp[i] = dpp;
  }
  let prev = s.yn;
  if (floor) {
    for (let i = last - 1; i >= 1; i--) {
      let y = (dp[i] + im * c[i] * prev) * ib[i];
      if (y < floor[i]) y = floor[i];
      out[i] = y;
      prev = y;
    }
  } else {
    for (let i = last - 1; i >= 1; i--) {
      const y = (dp[i] + im * c[i] * prev) * ib[i];
      out[i] = y;
      prev = y;
    }
  }
}

/**
 * Projected SOR (ω = 1.3) for y ≥ floor, started from max(start, floor), until no value changes by
 * `tol` (at most 5,000 sweeps). out[0] and out[n−1] must hold y0 and yn.
 */
export function projectedSor(s: TridiagonalSystem, out: Float64Array, start: Float64Array, floor: Float64Array, tol: number): void {
  const { k: im, a, b, c, rhs } = s;
  const last = out.length - 1;
  for (let i = 1; i < last; i++) out[i] = Math.max(start[i], floor[i]);
  const omega = 1.3;
  for (let it = 0; it < 5000; it++) {
    let change = 0;
    for (let i = 1; i < last; i++) {
      const y = (rhs[i] + im * (a[i] * out[i - 1] + c[i] * out[i + 1])) / (1 - im * b[i]);
      let z = out[i] + omega * (y - out[i]);
      if (z < floor[i]) z = floor[i];
      const d = Math.abs(z - out[i]);
      if (d > change) change = d;
      out[i] = z;
    }
    if (change < tol) break;
  }
}
