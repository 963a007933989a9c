/**
 * The at-expiry engine: every option leg expires at the horizon, so the P&L is piecewise linear
 * in the spot between strikes, probabilities come from the spot cdf and expectations from
 * partial expectations, exactly.
 */
import { cdf as spotCdf, partialExpectation, prob as spotProb } from '../dist.js';
import { dedupe } from '../numeric/sorted.js';
import type { LegInput } from '../types.js';
import { mergeAtoms, type Atom, type PnlEngine, type PnlFn } from './engine.js';
import { logRange, pointsBelow, type SplitDist } from './split-dist.js';

/** Segments of the at-expiry P&L: on (a, b], P&L = alpha + beta·S exactly. */
export interface Segment {
  a: number;
  b: number;
  alpha: number;
  beta: number;
}

/**
 * The at-expiry P&L as segments between the distinct strikes `kinks` (ascending): `c0` the
 * constant part (−Σ coef × entry), each group a leg with its merged coefficient; a slope within
 * `tolB` of zero is zero.
 */
export function atExpirySegments(groups: { leg: LegInput; coef: number }[], kinks: number[], c0: number, tolB: number): Segment[] {
  const ends = [0, ...kinks, Infinity];
  const segs: Segment[] = [];
  for (let i = 0; i + 1 < ends.length; i++) {
    const a = ends[i];
    const b = ends[i + 1];
    let alpha = c0;
    let beta = 0;
    for (const g of groups) {
      const leg = g.leg;
      if (leg.kind === 'shares') beta += g.coef;
      else if (leg.kind === 'call' && leg.strike <= a) {
        beta += g.coef;
        alpha -= g.coef * leg.strike;
      } else if (leg.kind === 'put' && leg.strike >= b) {
        beta -= g.coef;
        alpha += g.coef * leg.strike;
      }
    }
    if (Math.abs(beta) <= tolB) beta = 0;
    segs.push({ a, b, alpha, beta });
  }
  return segs;
}

/** The spot interval of a segment where P&L ≤ y (strict: < y), or null. */
function interval(s: Segment, y: number, strict: boolean): [number, number] | null {
  if (s.beta === 0) return (strict ? s.alpha < y : s.alpha <= y) ? [s.a, s.b] : null;
  const r = (y - s.alpha) / s.beta;
  if (s.beta > 0) return r > s.a ? [s.a, Math.min(s.b, r)] : null;
  return r < s.b ? [Math.max(s.a, r), s.b] : null;
}

/** E[P&L; a < S ≤ b] on one segment. */
function expectOn(d: SplitDist, s: Segment, a: number, b: number): number {
  return s.alpha * spotProb(d.cont, a, b) + (s.beta !== 0 ? s.beta * partialExpectation(d.cont, a, b) : 0);
}

export class LinearEngine implements PnlEngine {
  readonly exact = true;
  private readonly f: (s: number) => number;
  /** P(S ≤ end of segment i − 1) under the view, i = 0 … segments */
  private readonly cdfEnd: number[];

  constructor(
    private readonly segs: Segment[],
    private readonly view: SplitDist,
    private readonly rn: SplitDist,
    pf: PnlFn,
  ) {
    this.f = pf.f;
    this.cdfEnd = [0, ...segs.map((g) => (g.b === Infinity ? view.cont.components.reduce((a, c) => a + c.weight, 0) : spotCdf(view.cont, g.b)))];
  }

  probBelow(y: number, strict: boolean): number {
    // P(S ≤ ·) at the segment ends once; only a segment cut by the level needs a new cdf
    const { segs, cdfEnd, view } = this;
    let t = 0;
    for (let i = 0; i < segs.length; i++) {
      const s = segs[i];
      if (s.beta === 0) {
        if (strict ? s.alpha < y : s.alpha <= y) t += cdfEnd[i + 1] - cdfEnd[i];
        continue;
      }
      const r = (y - s.alpha) / s.beta;
      if (s.beta > 0) {
        if (r >= s.b) t += cdfEnd[i + 1] - cdfEnd[i];
        else if (r > s.a) t += spotCdf(view.cont, r) - cdfEnd[i];
      } else if (r <= s.a) t += cdfEnd[i + 1] - cdfEnd[i];
      else if (r < s.b) t += cdfEnd[i + 1] - spotCdf(view.cont, r);
    }
    return Math.min(1, Math.max(0, t + pointsBelow(this.f, view, y, strict, false)));
  }

  expectBelow(y: number, strict: boolean): number {
    let t = 0;
    for (const s of this.segs) {
      const iv = interval(s, y, strict);
      if (iv) t += expectOn(this.view, s, iv[0], iv[1]);
    }
    return t + pointsBelow(this.f, this.view, y, strict, true);
  }

  private expectAll(d: SplitDist): number {
    let t = 0;
    for (const s of this.segs) t += expectOn(d, s, s.a, s.b);
    for (const a of d.points) t += a.w * this.f(a.S);
    return t;
  }

  expectView(): number {
    return this.expectAll(this.view);
  }

  expectRiskNeutral(): number {
    return this.expectAll(this.rn);
  }

  breakevens(): number[] {
    const out: number[] = [];
    for (const s of this.segs) {
      if (s.beta !== 0) {
        const r = -s.alpha / s.beta;
        if (r > s.a && r <= s.b && r > 0 && Number.isFinite(r)) out.push(r);
      } else if (s.alpha === 0) {
        if (s.a > 0) out.push(s.a);
        if (Number.isFinite(s.b)) out.push(s.b);
      }
    }
    return dedupe(out);
  }

  extremes(): { max: number | null; min: number | null } {
    const segs = this.segs;
    const vals = [segs[0].alpha];
    for (const s of segs) if (Number.isFinite(s.b)) vals.push(s.alpha + s.beta * s.b);
    const last = segs[segs.length - 1];
    let max: number | null = Math.max(...vals);
    let min: number | null = Math.min(...vals);
    if (last.beta > 0) max = null;
    else if (last.beta < 0) min = null;
    else {
      max = Math.max(max, last.alpha);
      min = Math.min(min, last.alpha);
    }
    return { max, min };
  }

  atoms(): Atom[] {
    const out: Atom[] = [];
    for (const s of this.segs) if (s.beta === 0) out.push({ x: s.alpha, prob: spotProb(this.view.cont, s.a, s.b) });
    for (const a of this.view.points) out.push({ x: this.f(a.S), prob: a.w });
    return mergeAtoms(out);
  }

  yRange(): [number, number] {
    const [vlo, vhi] = logRange(this.view);
    const lo = Math.exp(vlo);
    const hi = Math.exp(vhi);
    const pts = [lo, hi];
    for (const s of this.segs) if (s.b > lo && s.b < hi) pts.push(s.b);
    const ys = pts.map(this.f);
    return [Math.min(...ys), Math.max(...ys)];
  }
}
