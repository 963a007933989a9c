/**
 * Reference values for drifted Brownian motion X_t = νt + σW_t started at 0 between a lower
 * barrier −a < 0 and an upper barrier b > 0, written independently of the engine.
 *
 * - Far horizon (from memory; the scale function s(x) = e^{−2νx/σ²}, e.g. Karatzas & Shreve,
 *   Brownian Motion and Stochastic Calculus, §5.5):
 *     P(b first) = (1 − e^{2νa/σ²}) / (e^{−2νb/σ²} − e^{2νa/σ²})  → a/(a+b) as ν → 0.
 * - By a horizon T (from memory; the eigenfunction series of the killed process on (−a, b), as in
 *   Borodin & Salminen, Handbook of Brownian Motion, part II, the formulas for the exit of
 *   Brownian motion with drift from an interval): with L = a + b, κ = ν²/(2σ²),
 *   λₙ = σ²n²π²/(2L²), the density of the process killed at the barriers is
 *     p(t, y) = e^{ν(y − a)/σ² − κt} (2/L) Σₙ sin(nπa/L) sin(nπy/L) e^{−λₙt},  y = x + a ∈ (0, L),
 *   and the chance of leaving through b after T is the flux ∫_T^∞ −½σ² ∂_y p(t, L) dt, so
 *     P(b first by T) = P_∞(b) + ½σ² e^{νb/σ²} (2/L) Σₙ (−1)ⁿ (nπ/L) sin(nπa/L) e^{−(λₙ+κ)T}/(λₙ+κ),
 *     P(−a first by T) = P_∞(−a) − ½σ² e^{−νa/σ²} (2/L) Σₙ (nπ/L) sin(nπa/L) e^{−(λₙ+κ)T}/(λₙ+κ).
 *   The series converge fast once T is not tiny against L²/σ².
 */

export function farUpper(nu: number, s: number, a: number, b: number): number {
  if (nu === 0) return a / (a + b);
  const k = (2 * nu) / (s * s);
  return -Math.expm1(k * a) / (Math.exp(-k * b) - Math.exp(k * a));
}

export function byHorizon(nu: number, s: number, a: number, b: number, T: number): { up: number; down: number } {
  const L = a + b;
  const kap = (nu * nu) / (2 * s * s);
  let su = 0;
  let sd = 0;
  for (let n = 1; n < 100000; n++) {
    const lam = (s * s * n * n * Math.PI * Math.PI) / (2 * L * L);
    const e = Math.exp(-(lam + kap) * T) / (lam + kap);
    const term = ((n * Math.PI) / L) * Math.sin((n * Math.PI * a) / L) * e;
    su += (n % 2 === 0 ? 1 : -1) * term;
    sd += term;
    if (e * n < 1e-22) break;
  }
  const c = (0.5 * s * s * 2) / L;
  const up = farUpper(nu, s, a, b) + c * Math.exp((nu * b) / (s * s)) * su;
  const downFar = 1 - farUpper(nu, s, a, b);
  const down = downFar - c * Math.exp((-nu * a) / (s * s)) * sd;
  return { up, down };
}
