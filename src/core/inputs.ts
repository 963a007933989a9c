/**
 * The checks the pricing functions make of their market inputs. Programming errors only (the
 * request edge rejects bad input first): each throws a RangeError that names the function and
 * the input, in that function's own words for them (`names`).
 */

/** What a function calls its spot, strike (or level), time, rate (or drift) and vol in its messages. */
export interface InputNames {
  S: string;
  K: string;
  T: string;
  /** the rate and the yield together, e.g. "rate and yield" */
  rq: string;
  sigma: string;
}

/**
 * The figures checked, in OptionInputs' names (an OptionInputs or OptionTerms passes as it is):
 * K is a strike or a level, r a rate or a drift; no S when there is none (a curve across spots).
 */
export interface CheckedInputs {
  S?: number;
  K: number;
  T: number;
  r: number;
  q: number;
  sigma: number;
}

/**
 * S (when present) and K finite and > 0, T finite and ≥ 0, r and q finite, σ finite and ≥ 0, in
 * that order. Messages: `who: NAME must be finite and > 0 (got v)` and so on.
 */
export function checkMarketInputs(who: string, names: InputNames, o: CheckedInputs): void {
  const { S, K, T, r, q, sigma } = o;
  if (S !== undefined && !(Number.isFinite(S) && S > 0)) throw new RangeError(`${who}: ${names.S} must be finite and > 0 (got ${S})`);
  if (!(Number.isFinite(K) && K > 0)) throw new RangeError(`${who}: ${names.K} must be finite and > 0 (got ${K})`);
  if (!(Number.isFinite(T) && T >= 0)) throw new RangeError(`${who}: ${names.T} must be finite and ≥ 0 (got ${T})`);
  if (!Number.isFinite(r) || !Number.isFinite(q)) throw new RangeError(`${who}: ${names.rq} must be finite (got ${r}, ${q})`);
  if (!(Number.isFinite(sigma) && sigma >= 0)) throw new RangeError(`${who}: ${names.sigma} must be finite and ≥ 0 (got ${sigma})`);
}
