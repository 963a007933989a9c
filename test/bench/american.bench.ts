/**
 * American options: time per value at about 1e-4 accuracy (americanValue, 'normal') against a
 * plain CRR binomial tree and the Broadie-Detemple BBSR tree of equal accuracy, found in the same
 * run on the same option (goal: ≤ 2 ms per value). Also the convergence table of the
 * finite-difference solver, the full Greeks, the value curve and the implied vol; and the same
 * with Merton jumps (the PIDE) against the European Merton series.
 *
 * Repeated calls on the same option share one FdCache (grids and jump weights), as a caller that
 * keeps one would; the line marked "cold" builds them afresh on every call.
 */
import { americanFdValue, americanGreeks, americanImpliedVol, americanValue, americanValueCurve, FdCache } from '../../src/core/american.js';
import { bbsrValue, crrValue } from '../../src/core/binomial.js';
import { mertonValue } from '../../src/core/merton.js';
import type { Jumps, OptionInputs } from '../../src/core/types.js';
import { measure, report } from './harness.js';

const CASES: { name: string; c: OptionInputs }[] = [
  { name: 'put S=K=50 r=10% σ=40% T=5m (Hull)', c: { kind: 'put', S: 50, K: 50, T: 5 / 12, r: 0.1, q: 0, sigma: 0.4 } },
  { name: 'call S=105 K=100 r=4% q=7% σ=30% T=1', c: { kind: 'call', S: 105, K: 100, T: 1, r: 0.04, q: 0.07, sigma: 0.3 } },
];

const MAX_STEPS = 16000;

/**
 * Smallest step count (from a doubling sequence) whose tree stays within tol over 4 consecutive
 * even counts; MAX_STEPS when none up to it does (then the tree's time is a lower bound).
 */
function stepsFor(tree: (n: number) => number, ref: number, tol: number): { n: number; found: boolean } {
  for (let n = 250; n <= MAX_STEPS; n *= 2) {
    let ok = true;
    for (let k = 0; k < 4 && ok; k++) ok = Math.abs(tree(n + 2 * k) - ref) <= tol;
    if (ok) return { n, found: true };
  }
  return { n: MAX_STEPS, found: false };
}

export function run(): void {
  for (const { name, c } of CASES) {
    console.log(`\n-- ${name}`);
    const ref = bbsrValue(c, { american: true, steps: 32000 });
    const fine = americanValue(c, { accuracy: 'fine' });
    console.log(`reference BBSR(32000) ${ref.toFixed(7)}; FD 'fine' ${fine.toFixed(7)} (difference ${(fine - ref).toExponential(2)})`);
    console.log('  FD convergence (Richardson over (nx, nt/2) and (2nx, nt)):\n     nx    nt  value       error');
    for (const [nx, nt] of [[40, 40], [80, 80], [160, 160], [320, 320], [640, 640]]) {
      const v = americanFdValue(c, { nx, nt });
      console.log(`  ${String(nx).padStart(5)} ${String(nt).padStart(5)}  ${v.toFixed(7)}  ${(v - ref).toExponential(2)}`);
    }
    const v = americanValue(c);
    console.log(`  americanValue('normal') error ${(v - ref).toExponential(2)}`);
    const crrS = stepsFor((n) => crrValue(c, { american: true, steps: n }), ref, 1e-4);
    const bbsrS = stepsFor((n) => bbsrValue(c, { american: true, steps: n }), ref, 1e-4);
    const crrN = crrS.n;
    const bbsrN = bbsrS.n;
    const note = (f: { found: boolean }): string => (f.found ? '' : ` (not within 1e-4 even at ${MAX_STEPS}: its time below is a lower bound)`);
    console.log(`  trees within 1e-4: CRR ${crrN} steps${note(crrS)}, BBSR ${bbsrN} steps${note(bbsrS)}`);
    const crr = measure(`CRR tree, ${crrN} steps`, () => crrValue(c, { american: true, steps: crrN }), 1, 1);
    const bbsr = measure(`BBSR tree, ${bbsrN} steps`, () => bbsrValue(c, { american: true, steps: bbsrN }), 1, 1);
    const cache = new FdCache();
    const fd = measure('americanValue (FD, normal)', () => americanValue(c, { cache }), 1, 2);
    report(crr);
    report(bbsr, crr);
    report(fd, crr, '≤ 2 ms per value');
    report(fd, bbsr);
    report(measure('americanGreeks (5 Richardson solves)', () => americanGreeks(c, { cache }), 1, 1), fd);
    report(measure("americanValue (FD, 'fine')", () => americanValue(c, { accuracy: 'fine' }), 1, 1), fd);
    report(measure('americanValueCurve (one build)', () => americanValueCurve(c, c.K * 0.3, c.K * 3), 1, 1), fd);
    const curve = americanValueCurve(c, c.K * 0.3, c.K * 3);
    const spots = Array.from({ length: 1000 }, (_, i) => c.K * (0.4 + (2 * i) / 1000));
    report(measure('  curve evaluation (per spot)', () => {
      let s = 0;
      for (const x of spots) s += curve(x);
      return s;
    }, spots.length, 0.5));
    report(measure('americanImpliedVol', () => americanImpliedVol(c, v), 1, 1), fd);
  }

  console.log("\n-- with Merton jumps: put S=K=100 r=5% σ=15% T=0.25, λ=0.1 m=−0.9 δ=0.45 (d'Halluin-Forsyth-Vetzal)");
  const j: Jumps = { intensity: 0.1, mean: -0.9, sd: 0.45 };
  const o: OptionInputs = { kind: 'put', S: 100, K: 100, T: 0.25, r: 0.05, q: 0, sigma: 0.15 };
  const jv = americanValue(o, { jumps: j });
  console.log(`  americanValue with jumps ${jv.toFixed(6)} (published 3.241251, from memory)`);
  const eu = measure('mertonValue (European series)', () => mertonValue(o, j), 1, 0.5);
  const cache = new FdCache();
  const am = measure('americanValue with jumps (PIDE, normal)', () => americanValue(o, { jumps: j, cache }), 1, 2);
  report(eu);
  report(am, eu);
  report(measure('  cold (new grids and jump weights per call)', () => americanValue(o, { jumps: j }), 1, 2), am);
  report(measure('americanGreeks with jumps', () => americanGreeks(o, { jumps: j, cache }), 1, 2), am);
  report(measure('americanValueCurve with jumps', () => americanValueCurve(o, 30, 300, j), 1, 1), am);
}
