/**
 * zod schemas of the typed requests, one per verb: the last check at the edge before a request
 * leaves the parser, and (through z.infer, ./types.ts) the requests' types. The parser already
 * rejects bad input with positions; a schema guarantees that whatever it lets through is finite,
 * within LIMITS and of the right shape. Values are in core units: percentages divided by 100,
 * dates as ISO strings; relative expiries (`30d`, `6w`, `3m`, `1y`) stay relative here and are
 * turned into dates against `asof` by the resolver.
 */
import { z } from 'zod';
import { LIMITS, SPAN_MAX } from './limits.js';
import { MAX_YEAR, MIN_YEAR } from './dates.js';
import { CLOSES_MAX } from './closes.js';

const pos = z.number().int().min(0);

const isoDate = z.iso.date().refine((d) => {
  const y = Number(d.slice(0, 4));
  return y >= MIN_YEAR && y <= MAX_YEAR;
});

/** An expiry as written: an ISO date, or a span from asof. */
export const expirySpec = z.union([
  z.strictObject({ date: isoDate }),
  z
    .strictObject({ span: z.number().int().min(1), unit: z.enum(['d', 'w', 'm', 'y']) })
    .refine((s) => s.span <= SPAN_MAX[s.unit]),
  // a horizon in minutes or hours (`horizon 30min`, `2h`): taken as such, and warned about
  z.strictObject({ minutes: z.number().int().min(1).max(7 * 24 * 60) }),
]);

const price = z.number().positive().max(LIMITS.price);
const vol = z.number().min(LIMITS.volMin).max(LIMITS.volMax);
const rate = z.number().min(LIMITS.rateMin).max(LIMITS.rateMax);
const drift = z.number().min(LIMITS.driftMin).max(LIMITS.driftMax);
const driftSe = z.number().min(0).max(LIMITS.driftSeMax);
const symbol = z.string().regex(/^[A-Z][A-Z0-9.-]*$/).max(LIMITS.symbolLength);

const jumps = z.strictObject({
  intensity: z.number().positive().max(LIMITS.jumpIntensityMax),
  mean: z.number().min(LIMITS.jumpMeanMin).max(LIMITS.jumpMeanMax),
  sd: z.number().min(0).max(LIMITS.jumpSdMax),
});

/**
 * An exit level as written (`target +400`, `stop -300`, `target 50%`): money P&L of the whole
 * position, or a percentage of the position's |cost| (`pct`, as a decimal: 50% → 0.5). `signed`
 * says whether a sign was written; unsigned, a target is a profit and a stop a loss. `at` and
 * `len` are the value's token (for a caret once the position's P&L is known).
 */
export const exitLevel = z.strictObject({
  value: z.number().refine((v) => v !== 0 && Number.isFinite(v)),
  pct: z.boolean(),
  signed: z.boolean(),
  at: pos,
  len: z.number().int().min(1),
});

/** Terms that may follow the legs, in any order. All optional; the resolver fills defaults. */
export const termsSchema = z.strictObject({
  spot: price.optional(),
  rate: rate.optional(),
  yield: rate.optional(),
  iv: vol.optional(),
  exp: expirySpec.optional(),
  drift: drift.optional(),
  /** the drift's uncertainty (`drift 9% ± 6%`), part of the drift term: written only after a drift */
  driftSe: driftSe.optional(),
  vol: vol.optional(),
  horizon: expirySpec.optional(),
  asof: z.union([isoDate, z.literal('today')]).optional(),
  mult: z.number().int().min(LIMITS.multMin).max(LIMITS.multMax).optional(),
  style: z.enum(['american', 'european']).optional(),
  jumps: jumps.optional(),
  on: symbol.optional(),
  target: exitLevel.optional(),
  stop: exitLevel.optional(),
});

/** The term names, in the order help lists them. */
export const TERM_NAMES = ['spot', 'rate', 'yield', 'iv', 'exp', 'drift', 'vol', 'horizon', 'asof', 'mult', 'style', 'jumps', 'on', 'target', 'stop'] as const;

/** The character index of each named part that was written (so later checks can put a caret on it). */
function positions<K extends string>(names: readonly [K, ...K[]]) {
  return z.partialRecord(z.enum(names), pos);
}

const termsAt = positions(TERM_NAMES);

export const legSchema = z
  .strictObject({
    qty: z.number().int().refine((q) => q !== 0),
    kind: z.enum(['call', 'put', 'shares']),
    strike: price.optional(),
    expiry: expirySpec.optional(),
    entry: z.number().min(0).max(LIMITS.price).optional(),
    iv: vol.optional(),
    /** index of the leg's first token */
    at: pos,
    /** index of each term of the leg that was written */
    termsAt: positions(['strike', 'expiry', 'entry', 'iv']),
  })
  .refine((l) => Math.abs(l.qty) <= (l.kind === 'shares' ? LIMITS.qtyShares : LIMITS.qtyContracts))
  .refine((l) => (l.kind === 'shares' ? l.strike === undefined && l.expiry === undefined && l.iv === undefined : l.strike !== undefined));

export const checkSchema = z.strictObject({
  verb: z.literal('check'),
  legs: z.array(legSchema).min(1).max(LIMITS.legs),
  terms: termsSchema,
  termsAt,
  /** index just past the last token of the check (where a missing term would go) */
  end: pos.optional(),
});

export const compareSchema = z.strictObject({
  verb: z.literal('compare'),
  /** the parts' texts between `;`, with their start index in the request */
  parts: z.array(z.strictObject({ text: z.string(), at: pos })).min(2).max(LIMITS.compareParts),
  /**
   * each part as a check after inheriting from the one before (terms written in a part override,
   * legs written in a part replace the legs); positions index the whole request text
   */
  checks: z.array(checkSchema).optional(),
});

export const ivSchema = z.strictObject({
  verb: z.literal('iv'),
  kind: z.enum(['call', 'put']),
  strike: price,
  expiry: expirySpec,
  price,
  terms: termsSchema,
  termsAt: positions([...TERM_NAMES, 'price', 'strike', 'expiry']),
  end: pos.optional(),
});

export const touchSchema = z.strictObject({
  verb: z.literal('touch'),
  level: price,
  /** the date by which the level must be touched */
  by: expirySpec,
  terms: termsSchema,
  termsAt: positions([...TERM_NAMES, 'level', 'by']),
  end: pos.optional(),
});

export const markSchema = z.strictObject({
  verb: z.literal('mark'),
  /** absent: list the channel's marks */
  symbol: symbol.optional(),
  terms: z.strictObject({
    spot: price.optional(),
    iv: vol.optional(),
    yield: rate.optional(),
    rate: rate.optional(),
    vol: vol.optional(),
    drift: drift.optional(),
    driftSe: driftSe.optional(),
  }),
});

export const logSchema = z.strictObject({ verb: z.literal('log'), count: z.number().int().min(1).max(LIMITS.logMax) });

export const againSchema = z.strictObject({
  verb: z.literal('again'),
  number: z.number().int().min(1).max(LIMITS.againMax),
  /** the override text after the number, parsed as terms (and possibly legs) by the caller */
  rest: z.string(),
  restAt: pos,
  /** `again N now`: rerun as of today on the channel's current mark (default: exactly as logged) */
  now: z.boolean().optional(),
});

export const helpSchema = z.strictObject({ verb: z.literal('help'), topic: z.string().optional() });

export const historySchema = z.strictObject({
  verb: z.literal('history'),
  symbol,
  symbolAt: pos,
  closes: z
    .array(
      z.strictObject({
        date: z.string().regex(/^\d{4}-\d{2}-\d{2}$/).optional(),
        close: z.number().positive().finite(),
        at: pos,
        len: pos,
      }),
    )
    .max(CLOSES_MAX),
  yield: rate.optional(),
  yieldAt: pos.optional(),
  save: z.boolean(),
});
