/** Sorted sets of numbers. */

/** Finite values of `xs`, ascending, with values within 1e-12 (relative, at least absolute) of the previous one dropped. */
export function dedupe(xs: number[]): number[] {
  // a typed array sorts numerically without a comparator call per comparison
  const s = new Float64Array(xs.length);
  let n = 0;
  let sorted = true;
  for (const x of xs) {
    if (!Number.isFinite(x)) continue;
    if (n > 0 && x < s[n - 1]) sorted = false;
    s[n++] = x;
  }
  const v = n < xs.length ? s.subarray(0, n) : s;
  if (!sorted) v.sort();
  const out: number[] = [];
  for (let i = 0; i < n; i++) {
    const x = v[i];
    if (out.length && Math.abs(x - out[out.length - 1]) <= 1e-12 * Math.max(1, Math.abs(x))) continue;
    out.push(x);
  }
  return out;
}

/**
 * The interval of an ascending grid that holds `t`: the largest `lo` < n − 1 with x[lo] ≤ t
 * (0 when t is below x[0]), by bisection; the interval is [x[lo], x[lo + 1]]. n ≥ 2.
 */
export function bracket(x: ArrayLike<number>, t: number, n: number = x.length): number {
  let lo = 0;
  let hi = n - 1;
  while (hi - lo > 1) {
    const k = (lo + hi) >> 1;
    if (x[k] <= t) lo = k;
    else hi = k;
  }
  return lo;
}
