/**
 * The canonical examples (src/request/examples.ts: one per verb from the registry, one per term)
 * in one fixed order, for the tests whose log state or seeded mutations depend on the order they
 * run in (the golden answers, the example-running test). A key the registry adds and this list
 * lacks is an error, so a new verb's example is never skipped silently: append it at the end.
 */
import { exampleKeys, exampleOf, type ExampleKey } from '../../src/request/examples.js';

const ORDER: readonly ExampleKey[] = ['check', 'leg', 'shares', 'compare', 'iv', 'touch', 'mark', 'log', 'again', 'help', 'history', 'jumps', 'american'];

export function canonicalExamples(): string[] {
  const keys = exampleKeys();
  const missing = keys.filter((k) => !ORDER.includes(k));
  const stale = ORDER.filter((k) => !keys.includes(k));
  if (missing.length || stale.length) throw new Error(`test/support/examples.ts: add ${missing.join(', ') || '—'}, remove ${stale.join(', ') || '—'}`);
  return ORDER.map(exampleOf);
}
