/**
 * Reference quadrature for tests, written here independently of the engine's own integration:
 * Gauss-Legendre nodes and weights on [−1, 1] by Newton's method on the Legendre recurrence
 * (Abramowitz & Stegun 25.4.29), and composite integration on equal panels.
 */

export function gaussLegendre(n: number): { x: number[]; w: number[] } {
  const x: number[] = [];
  const w: number[] = [];
  for (let i = 1; i <= n; i++) {
    let z = Math.cos((Math.PI * (i - 0.25)) / (n + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      let p0 = 1;
      let p1 = z;
      for (let k = 2; k <= n; k++) {
        const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = (n * (z * p1 - p0)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    x.push(z);
    w.push(2 / ((1 - z * z) * dp * dp));
  }
  return { x, w };
}

const GL20 = gaussLegendre(20);

/** ∫_a^b g by 20-point Gauss-Legendre on `panels` equal panels. */
export function integrate(g: (y: number) => number, a: number, b: number, panels: number): number {
  let total = 0;
  const hw = (b - a) / panels / 2;
  for (let i = 0; i < panels; i++) {
    const c = a + (2 * i + 1) * hw;
    for (let k = 0; k < GL20.x.length; k++) total += GL20.w[k] * g(c + hw * GL20.x[k]);
  }
  return total * hw;
}

/**
 * Gauss-Hermite nodes and weights for ∫ e^{−x²} f(x) dx, by Newton's method on the orthonormal
 * Hermite recurrence with the usual starting guesses (Press et al., Numerical Recipes, §4.5,
 * `gauher`). For E[f(Z)] with Z ~ N(0, 1): Σ wᵢ/√π · f(√2 xᵢ).
 */
export function gaussHermite(n: number): { x: number[]; w: number[] } {
  const x = new Array<number>(n).fill(0);
  const w = new Array<number>(n).fill(0);
  const PIM4 = Math.PI ** -0.25;
  const m = Math.floor((n + 1) / 2);
  let z = 0;
  for (let i = 0; i < m; i++) {
    if (i === 0) z = Math.sqrt(2 * n + 1) - 1.85575 * (2 * n + 1) ** -0.16667;
    else if (i === 1) z -= (1.14 * n ** 0.426) / z;
    else if (i === 2) z = 1.86 * z - 0.86 * x[0];
    else if (i === 3) z = 1.91 * z - 0.91 * x[1];
    else z = 2 * z - x[i - 2];
    let pp = 0;
    for (let it = 0; it < 200; it++) {
      let p1 = PIM4;
      let p2 = 0;
      for (let j = 0; j < n; j++) {
        const p3 = p2;
        p2 = p1;
        p1 = z * Math.sqrt(2 / (j + 1)) * p2 - Math.sqrt(j / (j + 1)) * p3;
      }
      pp = Math.sqrt(2 * n) * p2;
      const z1 = z;
      z = z1 - p1 / pp;
      if (Math.abs(z - z1) <= 1e-15 * Math.max(1, Math.abs(z))) break;
    }
    x[i] = z;
    x[n - 1 - i] = -z;
    w[i] = 2 / (pp * pp);
    w[n - 1 - i] = w[i];
  }
  return { x, w };
}
