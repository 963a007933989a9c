/** Special functions. */

/** ln(n!): exact sum for small n, Stirling's series beyond (error < 1e-15 relative for n ≥ 20). */
export function logFactorial(n: number): number {
  if (n < 20) {
    let s = 0;
    for (let k = 2; k <= n; k++) s += Math.log(k);
    return s;
  }
  const x = n + 1;
  return (
    (x - 0.5) * Math.log(x) - x + 0.5 * Math.log(2 * Math.PI) +
    1 / (12 * x) - 1 / (360 * x * x * x) + 1 / (1260 * x ** 5) - 1 / (1680 * x ** 7)
  );
}
