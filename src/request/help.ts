/**
 * Help: the grammar, the terms and their units, and examples per verb (invented symbols only).
 * Every example here parses (tested in test/request/help.test.ts).
 */
import { EXAMPLES } from './examples.js';

export const HELP_TOPICS = [
  'check',
  'compare',
  'iv',
  'touch',
  'mark',
  'log',
  'again',
  'history',
  'uncertainty',
  'jumps',
  'american',
  'exits',
  'units',
] as const;

export type HelpTopic = (typeof HELP_TOPICS)[number];

interface Section {
  title: string;
  lines: string[];
  examples: string[];
}

const SECTIONS: Record<HelpTopic, Section> = {
  check: {
    title: 'check — fair value, Greeks and the likely outcome of a position under your view',
    lines: [
      '[check] LEG [LEG …] [TERMS]   (check is implied when the request starts with a leg)',
      'LEG:   QTY TYPE [STRIKE] [EXPIRY] [@ENTRY] [iv PCT]',
      '       QTY signed (+2 long, -2 short, 3 = long; also buy 2, sell 2, 2x); TYPE call|put|shares',
      '       (c, p, sh); EXPIRY yyyy-mm-dd, 19Mar27, Mar27 (the third Friday of the month) or',
      '       30d / 6w / 3m / 1y from asof; ENTRY price per share; terms right after a leg',
      '       (strike, expiry, @entry, iv) belong to that leg; an iv after the last leg applies to',
      '       every leg without one when no other iv is written.',
      'TERMS (any order, each once): spot P · rate PCT · yield PCT · iv PCT (legs without one) ·',
      '       exp DATE|SPAN (legs without one) · drift PCT [± PCT] · vol PCT (the view) ·',
      '       horizon DATE|SPAN · asof DATE|today · mult N · style american|european ·',
      '       jumps RATE/yr MEAN% SD% · on SYMBOL (market terms from the channel\'s mark) ·',
      '       target MONEY|PCT · stop MONEY|PCT (exit levels; see help exits)',
      'Defaults: asof today · rate and yield 0% (said in the notes) · horizon the earliest expiry',
      '       (required for shares alone) · vol the position\'s iv, else the iv of the leg nearest',
      '       the money · drift the rate (then the view edge is 0) · mult 100 ·',
      '       style european · a leg without @ is entered at its fair value.',
      'Answer: your view beside the market (drift = rate, vol = the market vol: the position\'s iv,',
      '       else the iv of the leg nearest the money), the expected P&L split into its parts',
      '       (entry vs fair, carry, early exercise, legs\' iv, vol view, drift view). End a request',
      '       with verbose for the method notes.',
    ],
    examples: [
      '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04',
      '-1 put 80 3m @2.40 iv 33% on FERNWK drift 6%',
      '100 shares @84.20 -1 call 90 2m @1.85 iv 29% spot 84.20 rate 4% drift 7%',
    ],
  },
  compare: {
    title: 'compare — several checks side by side',
    lines: [
      'compare CHECK ; PART ; PART …   (2 to 6 checks)',
      'Each part inherits from the one before: terms written in a part override,',
      'legs written in a part replace the legs. A leg\'s own iv is kept unless the leg is restated.',
    ],
    examples: [
      'compare +1 call 90 3m iv 30% on FERNWK ; drift 0% ; drift 12%',
      'compare +1 put 45 6w iv 35% spot 47.10 drift 5% ; +1 put 42 6w iv 38% ; vol 45%',
    ],
  },
  iv: {
    title: 'iv — the implied vol of one option price',
    lines: [
      'iv call|put STRIKE EXPIRY price P [spot P] [rate PCT] [yield PCT] [asof DATE] [on SYMBOL] [style …]',
      'The price must lie strictly between the option\'s value at zero vol and its largest possible value.',
    ],
    examples: [
      'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%',
      'iv put 22 6w price 0.85 on BRISAND',
    ],
  },
  touch: {
    title: 'touch — the chance that the stock touches a level by a date',
    lines: [
      'touch LEVEL by DATE|SPAN [spot P] [drift PCT [± PCT]] [vol PCT | iv PCT] [rate PCT] [yield PCT] [jumps …] [asof DATE] [on SYMBOL]',
      'Both your view (drift and vol) and the market (drift = rate, vol = iv, else your vol) are shown.',
    ],
    examples: ['touch 120 by 2027-03-19 spot 100 drift 8% vol 25%', 'touch 70 by 2m on FERNWK vol 34%'],
  },
  mark: {
    title: 'mark — store the market for a symbol in this channel',
    lines: [
      'mark SYMBOL [spot P] [iv PCT] [yield PCT] [rate PCT] [vol PCT] [drift PCT [± PCT]]   ·   mark   (lists the channel\'s marks)',
      'Later requests say on SYMBOL; terms written in the request override the mark. A mark\'s vol and',
      'drift (± its uncertainty) are the view where a request writes none (history … save sets them).',
      'A mark older than a day is flagged as stale in the answer.',
    ],
    examples: ['mark FERNWK spot 84.20 iv 31% yield 1.2%', 'mark QUORVEL spot 145.10', 'mark'],
  },
  log: {
    title: 'log — the channel\'s past checks',
    lines: ['log [N]   (the last N checks, default 10, at most 100)'],
    examples: ['log', 'log 25'],
  },
  again: {
    title: 'again — rerun a logged check, optionally with changes',
    lines: [
      'again N [TERMS or LEGS]   (terms override; legs replace the logged legs)',
      'By default #N reruns exactly as logged: its day and the mark it used. again N now reruns',
      'it as of today on the channel\'s mark as it is now; asof today moves only the day.',
    ],
    examples: ['again 1', 'again 2 spot 102 drift 5%', 'again 1 now'],
  },
  history: {
    title: 'history — vol and drift, with their standard errors, from past closes',
    lines: [
      'history SYMBOL [CLOSE …] [yield PCT] [save]',
      'CLOSE: a price (84.10: closes without dates are consecutive trading days, 252 a year) or',
      '       DATE:PRICE (2026-01-05:84.10), oldest first; at least 10 closes, at most 20 years.',
      'Or share a CSV/TSV file of date, close with the request (`kolmo "history SYM" --file F.csv`',
      'on the command line). The closes are kept for the channel: `history SYMBOL` alone re-reads',
      'them, and new closes append. vol = s.d. of log returns scaled to a year of calendar days/365',
      '(the 252-trading-day figure beside it as a check), ± vol/√(2·returns); drift = price drift +',
      'vol²/2 (+ yield) ± vol/√(years). save stores vol and drift ± s.e. into the mark SYMBOL.',
    ],
    examples: [
      EXAMPLES.history,
      'history QUILLOP 41.05 41.30 40.85 41.60 42.10 41.75 42.40 42.15 42.90 43.35 43.05 43.60 yield 2% save',
    ],
  },
  uncertainty: {
    title: 'drift PCT ± PCT — a drift you are not sure of',
    lines: [
      'drift 9% ± 6% (also 9%±6%, 9% +/- 6%): the drift is uncertain, normal with that mean and',
      'standard error. The view\'s outcome then averages over it (the predictive law): wider',
      'quantiles, and one line sets p05–p95 and the chance of profit beside those with the drift',
      'known. The market column does not change. Works in check, compare, touch, again, mark.',
    ],
    examples: [
      '+1 call 90 2027-12-17 iv 30% spot 84.20 rate 4.5% drift 9% ± 30% asof 2027-01-04',
      'touch 100 by 2027-12-17 spot 84.20 drift 9% +/- 30% vol 30% asof 2027-01-04',
    ],
  },
  jumps: {
    title: 'jumps — Merton jump diffusion',
    lines: [
      'jumps RATE/yr MEAN% SD%: jumps arrive RATE times a year on average; the log of each jump',
      'is normal with that mean and s.d. (jumps 0.5/yr -8% 12%: one jump every two years,',
      'about an 8% drop, give or take 12%). With jumps, iv and vol are the diffusion\'s vol; the',
      'same jumps apply to the view and the market walk, each compensated so its expected',
      'total return stays the drift or the rate.',
    ],
    examples: ['+1 put 80 3m iv 30% spot 84.20 jumps 0.5/yr -8% 12%', 'touch 60 by 6m spot 84.20 vol 28% jumps 1/yr -10% 15%'],
  },
  exits: {
    title: 'target and stop — the chance of closing at a profit level or a loss level first',
    lines: [
      'target P&L · stop P&L, on a check, a comparison or again; either may be given alone.',
      'In money for the whole position (target +400 stop -300; unsigned, a target is a profit and',
      'a stop a loss) or in % of the position\'s cost (target 50% stop 100%).',
      'The answer gives, under your view and under the market walk (drift = rate, the market vol):',
      'the chance that the P&L reaches the target first, the stop first, or neither by the horizon;',
      'the expected P&L when closed at the first level reached (else at the horizon); and the median',
      'time to exit when it falls before the horizon. Every leg is revalued along the way; monitoring',
      'is continuous. With jumps a jump can pass a level and closes where it lands (Monte Carlo,',
      'with its standard error). A target must lie above the P&L now, a stop below it and not below',
      'the maximum loss. European exercise only.',
    ],
    examples: [
      '+1 put 72 45d @0.55 iv 34% -1 put 78 45d @1.40 iv 31% -1 call 90 45d @1.25 iv 28% +1 call 96 45d @0.45 iv 27% spot 84.20 rate 4.5% yield 1.2% drift 10% target +80 stop -200',
      '+1 call 90 3m @3.10 iv 30% spot 84.20 rate 4.5% drift 12% target 50% stop 40%',
      '100 shares @84.20 spot 84.20 vol 25% drift 8% horizon 3m target +800 stop 500',
    ],
  },
  american: {
    title: 'style american — early exercise',
    lines: [
      'style american values every option leg with early exercise (finite differences on the',
      'backward equation); the default is european (Black-Scholes-Merton).',
    ],
    examples: ['-1 put 95 6w iv 27% spot 100 rate 4.5% style american'],
  },
  units: {
    title: 'units',
    lines: [
      'Percentages carry % (iv 28%, rate 4.5%); a bare number there is an error that suggests',
      'the likely meaning. Rates and yields are continuously compounded. Time is calendar days',
      'between asof and a date / 365; 3m means three calendar months (the day clamped to the',
      'month\'s end). Prices are per share; money figures are qty × mult × per-share figures.',
      'Vega is per vol point, theta per calendar day, rho per 1% of rate.',
    ],
    examples: ['+1 call 100 3m iv 30% spot 98.50 rate 4.5% yield 1.5%'],
  },
};

/** The examples of a topic (for tests and for shells that offer them as buttons). */
export function helpExamples(topic: HelpTopic): readonly string[] {
  return SECTIONS[topic].examples;
}

function section(t: HelpTopic): string {
  const s = SECTIONS[t];
  return [s.title, ...s.lines.map((l) => `  ${l}`), 'Examples:', ...s.examples.map((e) => `  ${e}`)].join('\n');
}

/** Help text: the overview, or one topic. An unknown topic gets the overview with the topic list. */
export function helpText(topic?: string): string {
  const t = (topic ?? '').toLowerCase() as HelpTopic;
  if (t && t in SECTIONS) return section(t);
  return [
    'Kolmo prices an option position the market-consistent way (risk-neutral) and shows what it is',
    'likely to make under your view of the stock (drift, vol, jumps) by a horizon.',
    '',
    'Verbs:',
    '  LEG …            check a position (e.g. +1 call 100 3m iv 30% spot 98.50 drift 8%)',
    '  compare A ; B    checks side by side, each part inheriting from the one before',
    '  iv …             implied vol of an option price',
    '  touch L by D …   chance of touching a level by a date',
    '  mark SYMBOL …    store spot, iv, yield, rate for later `on SYMBOL`',
    '  history SYM …    vol and drift ± standard errors from past closes (save: into the mark)',
    '  log [N]          past checks · again N [changes]  rerun one',
    '  help [topic]     topics: ' + HELP_TOPICS.join(', '),
    '',
    'Words are case-insensitive, terms after the legs come in any order, percentages carry %.',
    'Examples:',
    `  ${SECTIONS.check.examples[1]}`,
    `  ${SECTIONS.compare.examples[0]}`,
    `  ${SECTIONS.touch.examples[0]}`,
  ].join('\n');
}
