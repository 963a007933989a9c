/**
 * Seeded random numbers for tests, benchmarks and the load run, written here independently of the
 * engine: mulberry32 uniforms (a public-domain generator, common practice) and Box-Muller normals.
 */

/** Uniforms in [0, 1) from a 32-bit seed; the same seed gives the same sequence. */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** n standard normals by Box-Muller from mulberry32(seed). */
export function normals(seed: number, n: number): Float64Array {
  const u = mulberry32(seed);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i += 2) {
    const r = Math.sqrt(-2 * Math.log(1 - u()));
    const th = 2 * Math.PI * u();
    z[i] = r * Math.cos(th);
    if (i + 1 < n) z[i + 1] = r * Math.sin(th);
  }
  return z;
}
