/**
 * Merton jumps: the series value and Greeks per leg against bsmValue / bsmGreeks on the same legs
 * (how many Black-Scholes-Merton terms the series costs), the implied diffusion vol, and the
 * Monte Carlo touch probability with jumps per 10 000 paths against the closed-form touch without
 * jumps. All in the same process.
 */
import { bsmGreeks, bsmValue } from '../../src/core/bsm.js';
import { mertonGreeks, mertonImpliedVol, mertonValue } from '../../src/core/merton.js';
import { touchProb } from '../../src/core/touch.js';
import { touchProbJumps } from '../../src/core/touch-jumps.js';
import type { Jumps, OptionKind } from '../../src/core/types.js';
import { measure, report } from './harness.js';

const N = 512;

export function run(): void {
  let a = 20261202 >>> 0;
  const u = (): number => {
    a = (Math.imul(a, 1664525) + 1013904223) >>> 0;
    return a / 4294967296;
  };
  const legs = Array.from({ length: N }, () => {
    const S = 50 + 100 * u();
    return {
      kind: (u() < 0.5 ? 'call' : 'put') as OptionKind,
      S,
      K: S * Math.exp(0.6 * (u() - 0.5)),
      T: 1 / 52 + 2 * u(),
      r: 0.06 * u(),
      q: 0.03 * u(),
      v: 0.1 + 0.5 * u(),
    };
  });
  for (const j of [
    { intensity: 1, mean: -0.1, sd: 0.15 },
    { intensity: 10, mean: -0.02, sd: 0.05 },
  ] as Jumps[]) {
    console.log(`\n-- jumps ${j.intensity}/yr, mean ${j.mean}, sd ${j.sd}`);
    const bv = measure('bsmValue', () => {
      let s = 0;
      for (const l of legs) s += bsmValue({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q, sigma: l.v });
      return s;
    }, N);
    const mv = measure('mertonValue', () => {
      let s = 0;
      for (const l of legs) s += mertonValue({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q, sigma: l.v }, j);
      return s;
    }, N);
    const bg = measure('bsmGreeks', () => {
      let s = 0;
      for (const l of legs) s += bsmGreeks({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q, sigma: l.v }).vega;
      return s;
    }, N);
    const mg = measure('mertonGreeks', () => {
      let s = 0;
      for (const l of legs) s += mertonGreeks({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q, sigma: l.v }, j).vega;
      return s;
    }, N);
    report(bv);
    report(mv, bv);
    report(bg);
    report(mg, bg);
    const prices = legs.map((l) => mertonValue({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q, sigma: l.v }, j));
    report(measure('mertonImpliedVol', () => {
      let s = 0;
      for (let i = 0; i < 64; i++) {
        const l = legs[i];
        const r = mertonImpliedVol({ kind: l.kind, S: l.S, K: l.K, T: l.T, r: l.r, q: l.q }, prices[i], j);
        s += r.ok ? r.iv : 0;
      }
      return s;
    }, 64), mv);
  }
  console.log('\n-- touch probability, level 120 from 100, T = 0.5, σ = 25%');
  const closed = measure('touchProb (closed form, no jumps)', () => touchProb({ S: 100, level: 120, T: 0.5, drift: 0.08, q: 0.01, sigma: 0.25 }), 1, 0.3);
  report(closed);
  for (const [label, j] of [
    ['touchProbJumps, no jumps, 10k paths', undefined],
    ['touchProbJumps, 2 jumps/yr, 10k paths', { intensity: 2, mean: -0.05, sd: 0.1 }],
    ['touchProbJumps, 50 jumps/yr, 10k paths', { intensity: 50, mean: -0.01, sd: 0.03 }],
  ] as [string, Jumps | undefined][]) {
    const r = touchProbJumps({ S: 100, level: 120, T: 0.5, drift: 0.08, q: 0.01, sigma: 0.25 }, j, { paths: 10000 });
    console.log(`  ${label}: prob ${r.prob.toFixed(4)} ± ${r.stderr.toFixed(4)}`);
    report(measure(label, () => touchProbJumps({ S: 100, level: 120, T: 0.5, drift: 0.08, q: 0.01, sigma: 0.25 }, j, { paths: 10000 }), 1, 1), closed);
  }
}
