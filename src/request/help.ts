/**
 * Help: the grammar, the terms and their units, and examples (invented symbols only). A verb's
 * page is in its file (src/verbs/<verb>.ts, `help`) and is read through the registry; the pages
 * here are the topics that are not verbs. Every example parses (tested in test/request/help.test.ts).
 */
import { verbNamed, verbs } from '../verbs/registry.js';

type Verb = ReturnType<typeof verbs>[number];

/** One page of help: a title, its lines, and examples that run. */
export interface HelpPage {
  title: string;
  lines: string[];
  examples: string[];
}

/** Topics that are not verbs, in the order help lists them (after the verbs). */
const TOPIC_PAGES: Record<string, HelpPage> = {
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
  american: {
    title: 'style american — early exercise',
    lines: [
      'style american values every option leg with early exercise (finite differences on the',
      'backward equation); the default is european (Black-Scholes-Merton).',
    ],
    examples: ['-1 put 95 6w iv 27% spot 100 rate 4.5% style american'],
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

/** The pages by topic: every verb that has one (in the registry's order), then the other topics. */
function pages(): Map<string, HelpPage> {
  const out = new Map<string, HelpPage>();
  for (const v of verbs()) if (v.help) out.set(v.name, v.help);
  for (const [t, p] of Object.entries(TOPIC_PAGES)) out.set(t, p);
  return out;
}

/** Every help topic, in the order help lists them. */
export function helpTopics(): string[] {
  return [...pages().keys()];
}

/** The examples of a topic (for tests and for shells that offer them as buttons). */
export function helpExamples(topic: string): readonly string[] {
  return pages().get(topic)?.examples ?? [];
}

function section(s: HelpPage): string {
  return [s.title, ...s.lines.map((l) => `  ${l}`), 'Examples:', ...s.examples.map((e) => `  ${e}`)].join('\n');
}

/**
 * The overview's verb lines, one per verb's `overview` (src/verbs/verb.ts) in the registry's order,
 * except where a verb places itself after another's line or on it: "USAGE  says", the says
 * aligned after a 15-character usage column; verbs sharing a line are joined by " · ".
 */
function overviewLines(): string[] {
  const lines: Verb[][] = [];
  const lineOf = (name: string) => lines.find((l) => l.some((v) => v.name === name));
  const placed = [...verbs()].sort((a, b) => Number(a.overview.place !== undefined) - Number(b.overview.place !== undefined));
  for (const v of placed) {
    const p = v.overview.place;
    const at = p ? lineOf('with' in p ? p.with : p.after) : undefined;
    if (p && !at) throw new Error(`the overview line of ${v.name} is placed by a verb with no line`);
    if (p && at && 'with' in p) at.push(v);
    else if (at) lines.splice(lines.indexOf(at) + 1, 0, [v]);
    else lines.push([v]);
  }
  const cell = ({ overview: o }: Verb) => `${o.usage.padEnd(15)}  ${typeof o.says === 'string' ? o.says : o.says()}`;
  return lines.map((l) => l.map(cell).join(' · '));
}

/** Help text: the overview, or one topic. An unknown topic gets the overview with the topic list. */
export function helpText(topic?: string): string {
  const page = pages().get((topic ?? '').toLowerCase());
  if (page) return section(page);
  return [
    'Kolmo prices an option position the market-consistent way (risk-neutral) and shows what it is',
    'likely to make under your view of the stock (drift, vol, jumps) by a horizon.',
    '',
    'Verbs:',
    ...overviewLines().map((l) => `  ${l}`),
    '',
    'Words are case-insensitive, terms after the legs come in any order, percentages carry %.',
    'Examples:',
    `  ${verbNamed('check').help?.examples[1]}`,
    `  ${verbNamed('compare').help?.examples[0]}`,
    `  ${verbNamed('touch').help?.examples[0]}`,
  ].join('\n');
}
