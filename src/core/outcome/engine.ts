/**
 * What both P&L engines (linear-engine.ts at expiry, smooth-engine.ts before) offer the figures:
 * the P&L cdf and partial expectations under the view, the expectations under both walks,
 * breakevens, extremes and atoms.
 */

export interface PnlEngine {
  readonly exact: boolean;
  /** P(P&L ≤ y) (strict: P(P&L < y)) under the view; `precise` false allows chart-grade roots */
  probBelow(y: number, strict: boolean, precise?: boolean): number;
  /** E_view[P&L · 1{P&L ≤ y}] (strict: < y) */
  expectBelow(y: number, strict: boolean): number;
  expectView(): number;
  expectRiskNeutral(): number;
  breakevens(): number[];
  /** sup and inf of P&L over S_h ∈ (0, ∞); null when unbounded */
  extremes(): { max: number | null; min: number | null };
  /** levels of P&L atoms under the view with their probabilities */
  atoms(): Atom[];
  /** P&L values bracketing everything except a negligible tail of the view */
  yRange(): [number, number];
}

/** The P&L at the horizon as a function of the spot then, with its behaviour for a large spot. */
export interface PnlFn {
  f: (s: number) => number;
  /** the same P&L at x = ln S (cheaper where a leg's model has a log-spot form) */
  fx: (x: number) => number;
  /** the P&L at S with x = ln S given too (equal to f(S) to the last digit) */
  fAt: (x: number, s: number) => number;
  /** P&L(S) ≈ A + B·S as S → ∞ */
  A: number;
  B: number;
  tolB: number;
  scale: number;
}

/** A P&L atom: level x (every P&L value of the atom is ≤ x and ≥ lo) and its probability. */
export interface Atom {
  x: number;
  prob: number;
  lo?: number;
}

/** Atoms sorted by level, those at the same level merged, those without probability dropped. */
export function mergeAtoms(atoms: Atom[]): Atom[] {
  const out: Atom[] = [];
  for (const a of [...atoms].sort((p, q) => p.x - q.x)) {
    if (!(a.prob > 0)) continue;
    const last = out[out.length - 1];
    if (last && last.x === a.x) {
      last.prob += a.prob;
      last.lo = Math.min(last.lo ?? last.x, a.lo ?? a.x);
    } else out.push(a.lo === undefined ? { x: a.x, prob: a.prob } : { x: a.x, prob: a.prob, lo: a.lo }); // a copy (no object spread: slow here)
  }
  return out;
}
