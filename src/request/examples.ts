/**
 * Canonical examples, one per verb (each in its verb's file, read through the registry) and per
 * term, with invented symbols (FERNWK, a freight company, one of the command line's demo marks).
 * Errors fall back to these when the user's own request cannot be corrected mechanically; they
 * write their market terms out, so that they answer in any channel (tested).
 */
import { verbNamed, verbNames, type VerbName } from '../verbs/registry.js';

const TERM_EXAMPLES = {
  leg: '+2 call 105 2027-03-19 @3.10 iv 28% spot 100',
  shares: '100 shares @84.20 -1 call 90 3m iv 30% spot 84.20 horizon 3m',
  jumps: '+1 put 80 3m iv 30% spot 84.20 jumps 0.5/yr -8% 12%',
  american: '-1 put 95 6w iv 27% spot 100 rate 4.5% style american',
} as const;

/** A verb's name (its example is in its file, src/verbs/<verb>.ts) or a term with an example of its own. */
export type ExampleKey = VerbName | keyof typeof TERM_EXAMPLES;

/** The canonical example of a verb (from the registry) or of a term. Read when called, never at module load. */
export function exampleOf(key: ExampleKey): string {
  return key in TERM_EXAMPLES ? TERM_EXAMPLES[key as keyof typeof TERM_EXAMPLES] : verbNamed(key).example;
}

/** Every example key: the verbs in the registry's order, then the terms. */
export function exampleKeys(): ExampleKey[] {
  return [...verbNames(), ...(Object.keys(TERM_EXAMPLES) as (keyof typeof TERM_EXAMPLES)[])];
}

/** A sample value for each term, used to build corrected examples from the user's own text. */
export const SAMPLE: Record<string, string> = {
  spot: '84.20',
  rate: '4.5%',
  yield: '1%',
  iv: '28%',
  vol: '26%',
  drift: '9%',
  exp: '2027-03-19',
  horizon: '2027-02-15',
  asof: '2027-01-04',
  mult: '100',
  style: 'american',
  jumps: '0.5/yr -8% 12%',
  on: 'FERNWK',
  target: '+400',
  stop: '-300',
  price: '3.10',
  by: '2027-03-19',
  strike: '100',
  entry: '3.10',
  level: '120',
  symbol: 'FERNWK',
};
