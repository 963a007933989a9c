/** Sorted sets of numbers. */

/** Finite values of `xs`, ascending, with values within 1e-12 (relative, at least absolute) of the previous one dropped. */
export function dedupe(xs: number[]): number[] {
  // a typed array sorts numerically without a comparator call per comparison
  const s = Float64Array.from(xs.filter((x) => Number.isFinite(x))).sort();
  const out: number[] = [];
  for (const x of s) {
    if (out.length && Math.abs(x - out[out.length - 1]) <= 1e-12 * Math.max(1, Math.abs(x))) continue;
    out.push(x);
  }
  return out;
}

