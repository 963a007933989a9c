/** Interpolation by splines. */
import { bracket } from './sorted.js';

/** Natural cubic spline through (x_i, y_i). */
export function naturalSpline(x: Float64Array, y: Float64Array): (t: number) => number {
  const n = x.length;
  const m = new Float64Array(n); // second derivatives
  const cp = new Float64Array(n);
  const dp = new Float64Array(n);
  for (let i = 1; i < n - 1; i++) {
    const hm = x[i] - x[i - 1];
    const hp = x[i + 1] - x[i];
    const aa = hm / 6;
    const bb = (hm + hp) / 3;
    const cc = hp / 6;
    const dd = (y[i + 1] - y[i]) / hp - (y[i] - y[i - 1]) / hm;
    const den = bb - aa * cp[i - 1];
    cp[i] = cc / den;
    dp[i] = (dd - aa * dp[i - 1]) / den;
  }
  for (let i = n - 2; i >= 1; i--) m[i] = dp[i] - cp[i] * m[i + 1];
  return (t: number): number => {
    const lo = bracket(x, t, n);
    const hi = lo + 1;
    const h = x[hi] - x[lo];
    const A = (x[hi] - t) / h;
    const B = 1 - A;
    return A * y[lo] + B * y[hi] + ((A * A * A - A) * m[lo] + (B * B * B - B) * m[hi]) * (h * h) / 6;
  };
}
