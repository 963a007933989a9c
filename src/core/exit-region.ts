/**
 * The region a target and a stop cut out of the (ln S, t) plane.
 *
 * The position's P&L at (S, t), every leg revalued at t by the pricer seam (pricer.ts: the same
 * per-leg valuation the outcome engine uses at the horizon, with each leg's own iv and remaining
 * life, sticky strike; legs expiring at the horizon at intrinsic value there), is
 *
 *     Π(S, t) = Σ qty × mult × (V_leg(S, t) − entry)      (money, undiscounted, no financing).
 *
 * At each time the line of x = ln S splits into segments where Π ≤ stop ('stop'), stop < Π <
 * target ('in') and Π ≥ target ('target'). For a multi-leg position the 'in' set can be several
 * intervals (a short straddle: a stop on both sides, a target around the strike once time decay
 * has paid enough). The segments are found from a scan of Π on a uniform set of points in x (plus
 * the strikes), the sign changes of Π − level refined by Brent's root finder to 1e-11 in x, and
 * pairs of crossings hidden between two scan points found by Brent's minimiser on the
 * extremum of Π wherever a local extremum of the scanned values comes near a level.
 */
import { brentMin } from './numeric/minimise.js';
import { brentRoot } from './numeric/root.js';
import { legGreeks, legValuer, type LegModel } from './pricer.js';
import type { CheckInput, LegInput } from './types.js';

export type SegmentKind = 'stop' | 'in' | 'target';

/** The line of x = ln S at one time: cuts c₁ < … < c_m and the m + 1 segments they bound. */
export interface Segments {
  /** cut points in x, ascending */
  cuts: Float64Array;
  /** kinds[j] is the kind of the segment left of cuts[j] (kinds[m]: right of the last) */
  kinds: SegmentKind[];
}

/** The position's P&L as a function of (S, t), built once per check. */
export interface PnlSurface {
  /** P&L today at the spot (position value − cost) */
  current: number;
  /** Σ |qty × mult| × spot: the scale of the position's money figures */
  scale: number;
  /** the P&L at time t (years from asof) as a function of the spot then */
  at(t: number): (S: number) => number;
  /** strikes of the option legs */
  strikes: number[];
  /** true when Π does not depend on t (shares only): the cuts are fixed spot levels */
  timeInvariant: boolean;
}

/** Builds Π(S, t) for a check: entries at fair value where none is given; identical legs merged. */
export function pnlSurface(input: CheckInput): PnlSurface {
  const model: LegModel = { market: input.market, style: input.style, jumps: input.view.jumps };
  const groups = new Map<string, { leg: LegInput; coef: number }>();
  let c0 = 0;
  let absCoef = 0;
  let current = 0;
  for (const leg of input.legs) {
    const m = leg.kind === 'shares' ? 1 : input.mult;
    const coef = leg.qty * m;
    const fair = legGreeks(leg, model).value;
    const entry = leg.entry ?? fair;
    c0 -= coef * entry;
    current += coef * (fair - entry);
    absCoef += Math.abs(coef);
    const key = leg.kind === 'shares' ? 'shares' : `${leg.kind}|${leg.strike}|${leg.years}|${leg.iv}`;
    const g = groups.get(key);
    if (g) g.coef += coef;
    else groups.set(key, { leg, coef });
  }
  const active = [...groups.values()].filter((g) => g.coef !== 0);
  const timeInvariant = active.every((g) => g.leg.kind === 'shares');
  const at = (t: number): ((S: number) => number) => {
    const vs = active.map((g) => ({ coef: g.coef, v: legValuer(g.leg, model, t) }));
    return (S: number): number => {
      let p = c0;
      for (const x of vs) p += x.coef * x.v(S);
      return p;
    };
  };
  const strikes = [...new Set(input.legs.filter((l) => l.kind !== 'shares').map((l) => l.strike))].sort((a, b) => a - b);
  return { current, scale: Math.max(absCoef * input.market.spot, 1e-300), at, strikes, timeInvariant };
}

export interface Levels {
  /** close at a P&L ≥ target (money); null: no target */
  target: number | null;
  /** close at a P&L ≤ stop (money); null: no stop */
  stop: number | null;
}

function kindOf(p: number, lv: Levels): SegmentKind {
  if (lv.target !== null && p >= lv.target) return 'target';
  if (lv.stop !== null && p <= lv.stop) return 'stop';
  return 'in';
}

const ROOT_TOL = 1e-11;

/** The maximum (sign 1) or minimum (sign −1) of f on [a, b] (Brent's minimiser). */
function extremum(f: (x: number) => number, a: number, b: number, sign: number, tol: number): { x: number; fx: number } {
  const m = brentMin((x) => -sign * f(x), a, b, tol);
  return { x: m.x, fx: -sign * m.fx };
}

/**
 * The segments of the line x = ln S at one time, for x in [scan[0], scan[n−1]] (beyond it the end
 * segments continue). `pnl` is Π(·, t) as a function of the spot.
 */
export function segmentsAt(pnl: (S: number) => number, scan: Float64Array, lv: Levels): Segments {
  const n = scan.length;
  const f = new Float64Array(n);
  const k: SegmentKind[] = new Array(n);
  for (let i = 0; i < n; i++) {
    f[i] = pnl(Math.exp(scan[i]));
    k[i] = kindOf(f[i], lv);
  }
  const g = (x: number): number => pnl(Math.exp(x));
  const cuts: number[] = [];
  const kinds: SegmentKind[] = [k[0]];
  /** appends a cut at x into a segment of kind `next` */
  const push = (x: number, next: SegmentKind): void => {
    if (next === kinds[kinds.length - 1]) return;
    if (cuts.length > 0 && x <= cuts[cuts.length - 1]) x = cuts[cuts.length - 1];
    cuts.push(x);
    kinds.push(next);
  };
  const root = (a: number, b: number, fa: number, fb: number, level: number): number =>
    brentRoot((x) => g(x) - level, a, b, fa - level, fb - level, ROOT_TOL);
  for (let i = 0; i + 1 < n; i++) {
    const a = scan[i];
    const b = scan[i + 1];
    const ka = k[i];
    const kb = k[i + 1];
    if (ka !== kb) {
      if (ka === 'in' || kb === 'in') {
        const level = (ka === 'in' ? kb : ka) === 'target' ? lv.target! : lv.stop!;
        push(root(a, b, f[i], f[i + 1], level), kb);
      } else {
        // from one level straight past the other inside one scan step: both crossings
        const first = ka === 'target' ? lv.target! : lv.stop!;
        const second = kb === 'target' ? lv.target! : lv.stop!;
        const c1 = root(a, b, f[i], f[i + 1], first);
        const c2 = root(c1, b, first, f[i + 1], second);
        push(c1, 'in');
        push(Math.max(c1, c2), kb);
      }
      continue;
    }
    // same kind at both ends: look for a pair of crossings hidden between them, near a local
    // extremum of the scanned values
    if (ka !== 'in') continue;
    const lo = i > 0 ? i - 1 : i;
    const hi = i + 2 < n ? i + 2 : i + 1;
    for (const [sign, level] of [
      [1, lv.target],
      [-1, lv.stop],
    ] as const) {
      if (level === null) continue;
      // a local extremum of the samples at i or i + 1, on the side of this pair
      const m = sign * f[i] >= sign * f[i + 1] ? i : i + 1;
      if (m === i && i > 0 && sign * f[i - 1] > sign * f[i]) continue;
      if (m === i + 1 && i + 2 < n && sign * f[i + 2] > sign * f[i + 1]) continue;
      // room between the samples and the level compared with the local variation
      const spread = Math.max(Math.abs(f[hi] - f[m]), Math.abs(f[m] - f[lo]), Math.abs(f[i + 1] - f[i]));
      if (sign * (level - f[m]) > 2 * spread) continue;
      // search this pair's interval only (the neighbouring pairs search theirs)
      const e = extremum(g, a, b, sign, 1e-10);
      if (sign * (e.fx - level) < 0) continue;
      const c1 = root(a, e.x, f[i], e.fx, level);
      const c2 = root(e.x, b, e.fx, f[i + 1], level);
      push(c1, sign > 0 ? 'target' : 'stop');
      push(c2, 'in');
    }
  }
  return { cuts: Float64Array.from(cuts), kinds };
}

/** Kind of the segment containing x (a point on a cut belongs to the absorbing side). */
export function kindAt(s: Segments, x: number): SegmentKind {
  const { cuts, kinds } = s;
  let j = 0;
  while (j < cuts.length && cuts[j] < x) j++;
  if (j < cuts.length && cuts[j] === x) return kinds[j] === 'in' ? kinds[j + 1] : kinds[j];
  return kinds[j];
}
