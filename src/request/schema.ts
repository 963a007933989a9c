/**
 * zod schemas of the typed requests (./types.ts): the last check at the edge before a request
 * leaves the parser. The parser already rejects bad input with positions; this schema guarantees
 * that whatever it lets through is finite, within LIMITS and of the right shape.
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

const expirySpec = z.union([
  z.strictObject({ date: isoDate }),
  z
    .strictObject({ span: z.number().int().min(1), unit: z.enum(['d', 'w', 'm', 'y']) })
    .refine((s) => s.span <= SPAN_MAX[s.unit]),
]);

const price = z.number().positive().max(LIMITS.price);
const vol = z.number().min(LIMITS.volMin).max(LIMITS.volMax);
const rate = z.number().min(LIMITS.rateMin).max(LIMITS.rateMax);
const symbol = z.string().regex(/^[A-Z][A-Z0-9.-]*$/).max(LIMITS.symbolLength);

const jumps = z.strictObject({
  intensity: z.number().positive().max(LIMITS.jumpIntensityMax),
  mean: z.number().min(LIMITS.jumpMeanMin).max(LIMITS.jumpMeanMax),
  sd: z.number().min(0).max(LIMITS.jumpSdMax),
});

const exitLevel = z.strictObject({
  value: z.number().refine((v) => v !== 0 && Number.isFinite(v)),
  pct: z.boolean(),
  signed: z.boolean(),
  at: pos,
  len: z.number().int().min(1),
});

export const termsSchema = z.strictObject({
  spot: price.optional(),
  rate: rate.optional(),
  yield: rate.optional(),
  iv: vol.optional(),
  exp: expirySpec.optional(),
  drift: z.number().min(LIMITS.driftMin).max(LIMITS.driftMax).optional(),
  driftSe: z.number().min(0).max(LIMITS.driftSeMax).optional(),
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

const termsAt = z.record(z.string(), pos);

export const legSchema = z
  .strictObject({
    qty: z.number().int().refine((q) => q !== 0),
    kind: z.enum(['call', 'put', 'shares']),
    strike: price.optional(),
    expiry: expirySpec.optional(),
    entry: z.number().min(0).max(LIMITS.price).optional(),
    iv: vol.optional(),
    at: pos,
    termsAt: termsAt,
  })
  .refine((l) => Math.abs(l.qty) <= (l.kind === 'shares' ? LIMITS.qtyShares : LIMITS.qtyContracts))
  .refine((l) => (l.kind === 'shares' ? l.strike === undefined && l.expiry === undefined && l.iv === undefined : l.strike !== undefined));

export const checkSchema = z.strictObject({
  verb: z.literal('check'),
  legs: z.array(legSchema).min(1).max(LIMITS.legs),
  terms: termsSchema,
  termsAt,
  end: pos.optional(),
});

export const requestSchema = z.discriminatedUnion('verb', [
  checkSchema,
  z.strictObject({
    verb: z.literal('compare'),
    parts: z.array(z.strictObject({ text: z.string(), at: pos })).min(2).max(LIMITS.compareParts),
    checks: z.array(checkSchema).optional(),
  }),
  z.strictObject({
    verb: z.literal('iv'),
    kind: z.enum(['call', 'put']),
    strike: price,
    expiry: expirySpec,
    price,
    terms: termsSchema,
    termsAt,
    end: pos.optional(),
  }),
  z.strictObject({
    verb: z.literal('touch'),
    level: price,
    by: expirySpec,
    terms: termsSchema,
    termsAt,
    end: pos.optional(),
  }),
  z.strictObject({
    verb: z.literal('mark'),
    symbol: symbol.optional(),
    terms: z.strictObject({
      spot: price.optional(),
      iv: vol.optional(),
      yield: rate.optional(),
      rate: rate.optional(),
      vol: vol.optional(),
      drift: z.number().min(LIMITS.driftMin).max(LIMITS.driftMax).optional(),
      driftSe: z.number().min(0).max(LIMITS.driftSeMax).optional(),
    }),
  }),
  z.strictObject({ verb: z.literal('log'), count: z.number().int().min(1).max(LIMITS.logMax) }),
  z.strictObject({
    verb: z.literal('again'),
    number: z.number().int().min(1).max(LIMITS.againMax),
    rest: z.string(),
    restAt: pos,
  }),
  z.strictObject({ verb: z.literal('help'), topic: z.string().optional() }),
  z.strictObject({
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
  }),
]);
