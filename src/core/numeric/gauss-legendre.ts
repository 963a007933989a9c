/** Gauss-Legendre quadrature. */

/** Gauss-Legendre nodes and weights on [−1, 1] (Newton on the Legendre recurrence). */
export function gaussLegendre(n: number): { t: number[]; w: number[] } {
  const t: number[] = [];
  const w: number[] = [];
  for (let i = 1; i <= n; i++) {
    let z = Math.cos((Math.PI * (i - 0.25)) / (n + 0.5));
    let dp = 1;
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
    t.push(z);
    w.push(2 / ((1 - z * z) * dp * dp));
  }
  // ascending order
  const idx = t.map((_, i) => i).sort((a, b) => t[a] - t[b]);
  return { t: idx.map((i) => t[i]), w: idx.map((i) => w[i]) };
}

/** The 8-node rule, ascending (the outcome engine's panels and the drift mixture use it). */
export const GL8 = gaussLegendre(8);
