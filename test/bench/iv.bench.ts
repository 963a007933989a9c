/**
 * Implied vol: solves per second over the accuracy grid of test/core/iv.test.ts (K/S 0.5–2,
 * T 1 day–5 years, σ 5%–200%, calls and puts, prices from bsmValue, the points where the price
 * determines the vol), against bsmValue calls on the same inputs in the same run
 * (goal ≥ 1 million solves/s). Also reports the worst relative error in the same run.
 */
import { bsmGreeks, bsmValue } from '../../src/core/bsm.js';
import { normCdf } from '../../src/core/normal.js';
import { impliedVol } from '../../src/core/iv.js';
import type { OptionKind } from '../../src/core/types.js';
import { measure, report, type Measure } from './harness.js';

export function run(): void {
  const kind: OptionKind[] = [];
  const price: number[] = [];
  const S: number[] = [];
  const K: number[] = [];
  const T: number[] = [];
  const r: number[] = [];
  const q: number[] = [];
  const sig: number[] = [];
  const ms = [0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 1, 1.05, 1.1, 1.25, 1.5, 1.75, 2];
  const Ts = [1 / 365, 7 / 365, 30 / 365, 0.25, 0.5, 1, 2, 5];
  const vols = [0.05, 0.1, 0.2, 0.3, 0.5, 0.8, 1.2, 2];
  for (const k of ['call', 'put'] as OptionKind[])
    for (const m of ms)
      for (const t of Ts)
        for (const v of vols) {
          // the region of test/core/iv.test.ts: price a normal double and κ = (A + B)/(σ ∂P/∂σ) ≤ 1e4
          const g = bsmGreeks({ kind: k, S: 100, K: 100 * m, T: t, r: 0.04, q: 0.015, sigma: v });
          const w = k === 'call' ? 1 : -1;
          const fS = 100 * Math.exp(-0.015 * t);
          const fK = 100 * m * Math.exp(-0.04 * t);
          const sd = v * Math.sqrt(t);
          const d1 = Math.log(fS / fK) / sd + 0.5 * sd;
          const kappa = (fS * normCdf(w * d1) + fK * normCdf(w * (d1 - sd))) / (g.vega * 100 * v);
          if (!(g.value > 1e-288 && kappa <= 1e4)) continue;
          kind.push(k);
          price.push(g.value);
          S.push(100);
          K.push(100 * m);
          T.push(t);
          r.push(0.04);
          q.push(0.015);
          sig.push(v);
        }
  const n = price.length;
  let worst = 0;
  for (let i = 0; i < n; i++) {
    const res = impliedVol({ kind: kind[i], S: S[i], K: K[i], T: T[i], r: r[i], q: q[i] }, price[i]);
    worst = Math.max(worst, res.ok ? Math.abs(res.iv / sig[i] - 1) : Infinity);
  }
  // alternating rounds, best of each (the machine is shared; see bsm.bench.ts)
  let value: Measure | undefined;
  let solve: Measure | undefined;
  for (let k = 0; k < 3; k++) {
    const mv = measure(
      'bsmValue on the same inputs',
      () => {
        let acc = 0;
        for (let i = 0; i < n; i++) acc += bsmValue({ kind: kind[i], S: S[i], K: K[i], T: T[i], r: r[i], q: q[i], sigma: sig[i] });
        return acc;
      },
      n,
      0.4,
    );
    const ms = measure(
      `impliedVol over the grid (${n} points)`,
      () => {
        let acc = 0;
        for (let i = 0; i < n; i++) {
          const res = impliedVol({ kind: kind[i], S: S[i], K: K[i], T: T[i], r: r[i], q: q[i] }, price[i]);
          if (res.ok) acc += res.iv;
        }
        return acc;
      },
      n,
      0.4,
    );
    if (!value || mv.perOp < value.perOp) value = mv;
    if (!solve || ms.perOp < solve.perOp) solve = ms;
  }
  if (!value || !solve) return;
  report(value);
  report(solve, value, '≥ 1 M/s');
  console.log(
    `impliedVol ${(solve.opsPerSec / 1e6).toFixed(2)} M solves/s = ${(solve.perOp / value.perOp).toFixed(1)} bsmValue calls per solve; ` +
      `worst relative vol error over the grid ${worst.toExponential(1)} (goal ≤ 1e-10)`,
  );
}
