/**
 * Canonical examples, one per verb and per term, with invented symbols (FERNWK, a freight
 * company, one of the command line's demo marks). Errors fall back to these when the user's own
 * request cannot be corrected mechanically; they write their market terms out, so that they answer
 * in any channel (tested).
 */
export const EXAMPLES = {
  check: '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9%',
  leg: '+2 call 105 2027-03-19 @3.10 iv 28% spot 100',
  shares: '100 shares @84.20 -1 call 90 3m iv 30% spot 84.20 horizon 3m',
  compare: 'compare +1 call 90 3m iv 30% spot 84.20 ; drift 0% ; drift 12%',
  iv: 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%',
  touch: 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25%',
  mark: 'mark FERNWK spot 84.20 iv 31% yield 1.2%',
  log: 'log 20',
  again: 'again 1 spot 102',
  help: 'help check',
  history:
    'history FERNWK 2026-01-05:84.10 2026-01-06:84.95 2026-01-07:85.40 2026-01-08:84.70 2026-01-09:85.90 2026-01-12:86.25 ' +
    '2026-01-13:85.80 2026-01-14:86.90 2026-01-15:87.35 2026-01-16:86.60 2026-01-19:87.80 2026-01-20:88.15',
  jumps: '+1 put 80 3m iv 30% spot 84.20 jumps 0.5/yr -8% 12%',
  american: '-1 put 95 6w iv 27% spot 100 rate 4.5% style american',
} as const;

export type ExampleKey = keyof typeof EXAMPLES;

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
