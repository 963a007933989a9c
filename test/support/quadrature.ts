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
