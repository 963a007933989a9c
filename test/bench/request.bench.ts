/**
 * The request layer: parse (and resolve) against a baseline of JSON.parse of the same typed
 * request serialised (what reading the information costs with no grammar, no checks, no errors).
 * Ratios only; no figure here is asserted anywhere.
 */
import { measure, report, sink } from './harness.js';
import { parse } from '../../src/request/parse.js';
import { resolveCheck } from '../../src/request/resolve.js';
import type { CheckRequest } from '../../src/request/types.js';

const DESIGN =
  '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% ' +
  'spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const FIFTY = Array.from({ length: 50 }, (_, i) => `+1 call ${80 + i} 2027-03-19 iv 30%`).join(' ') + ' spot 100 rate 4%';
const TYPO = '+2 call 105 2027-03-19 @3.10 iv 28% spto 100 rate 4.5%';
const BARE = '+2 call 105 2027-03-19 @3.10 iv 0.28 spot 100';

/** `n` calls of `f` per batch (measure divides the batch time by n). */
function times(n: number, f: () => unknown): () => unknown {
  return () => {
    let last: unknown;
    for (let i = 0; i < n; i++) last = f();
    return last;
  };
}

export function run(): void {
  const parsed = parse(DESIGN);
  if (!parsed.ok) throw new Error('bench input does not parse');
  const json = JSON.stringify(parsed.request);
  const base = measure('JSON.parse of the same request', times(1000, () => JSON.parse(json)), 1000);
  report(base);
  report(measure('parse: docs/design.md §2 two-leg check', times(1000, () => parse(DESIGN)), 1000), base);
  report(measure('parse: 50-leg check', times(100, () => parse(FIFTY)), 100), base);
  report(measure('parse: error (unknown word, fix re-parsed)', times(1000, () => parse(TYPO)), 1000), base);
  report(measure('parse: error (bare percentage)', times(1000, () => parse(BARE)), 1000), base);
  const req = parsed.request as CheckRequest;
  report(measure('resolveCheck: docs/design.md §2 check', times(1000, () => resolveCheck(req, { today: '2027-01-04' })), 1000), base);
  sink(0);
}
