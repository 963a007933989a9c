/**
 * Minimal benchmark harness. Figures are reported as medians over repeated batches and as
 * ratios against a baseline measured in the same process (never as timed assertions in tests).
 */

export interface Measure {
  name: string;
  /** median seconds per operation */
  perOp: number;
  /** operations per second at the median */
  opsPerSec: number;
  /** 99th percentile seconds per operation across batches */
  p99: number;
  samples: number;
}

/** The value at quantile p of ascending samples (the lower of the two around it). */
export function quantile(sorted: number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * p))];
}

/** A measure from latencies in seconds (one per operation): the median and the 99th percentile. */
export function measureOf(name: string, secs: number[]): Measure {
  const s = [...secs].sort((a, b) => a - b);
  const perOp = quantile(s, 0.5);
  return { name, perOp, opsPerSec: 1 / perOp, p99: quantile(s, 0.99), samples: s.length };
}

/** Calls `batch()` (which performs `opsPerBatch` operations) until `minSeconds` have passed. */
export function measure(
  name: string,
  batch: () => unknown,
  opsPerBatch = 1,
  minSeconds = 1,
): Measure {
  for (let i = 0; i < 3; i++) sink(batch()); // warm-up
  const times: number[] = [];
  const start = process.hrtime.bigint();
  let elapsed = 0;
  while (elapsed < minSeconds || times.length < 5) {
    const t0 = process.hrtime.bigint();
    sink(batch());
    const t1 = process.hrtime.bigint();
    times.push(Number(t1 - t0) / 1e9 / opsPerBatch);
    elapsed = Number(t1 - start) / 1e9;
  }
  times.sort((a, b) => a - b);
  const perOp = times[Math.floor(times.length / 2)];
  const p99 = times[Math.min(times.length - 1, Math.floor(times.length * 0.99))];
  return { name, perOp, opsPerSec: 1 / perOp, p99, samples: times.length };
}

let sunk = 0;
/** Keeps results alive so the optimiser cannot drop the work. */
export function sink(x: unknown): void {
  if (typeof x === 'number') sunk += x;
  else if (x && typeof x === 'object') sunk += 1;
}
export function sunkValue(): number {
  return sunk;
}

export function fmtTime(seconds: number): string {
  if (seconds < 1e-6) return `${(seconds * 1e9).toFixed(1)} ns`;
  if (seconds < 1e-3) return `${(seconds * 1e6).toFixed(2)} µs`;
  if (seconds < 1) return `${(seconds * 1e3).toFixed(3)} ms`;
  return `${seconds.toFixed(3)} s`;
}

export function fmtRate(opsPerSec: number): string {
  if (opsPerSec >= 1e6) return `${(opsPerSec / 1e6).toFixed(2)} M/s`;
  if (opsPerSec >= 1e3) return `${(opsPerSec / 1e3).toFixed(2)} k/s`;
  return `${opsPerSec.toFixed(1)} /s`;
}

/** One line per figure: name, time per op, rate, and the ratio to a baseline if given. */
export function report(m: Measure, baseline?: Measure, goal?: string): void {
  const ratio = baseline ? `  ${(m.perOp / baseline.perOp).toFixed(2)}× ${baseline.name}` : '';
  const g = goal ? `  (goal: ${goal})` : '';
  console.log(`${m.name.padEnd(44)} ${fmtTime(m.perOp).padStart(11)}/op  ${fmtRate(m.opsPerSec).padStart(10)}${ratio}${g}`);
}
