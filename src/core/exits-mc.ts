/**
 * Targets and stops under Merton jumps, by a seeded Monte Carlo.
 *
 * Why Monte Carlo rather than the backward equation with the jump integral: with jumps every leg
 * is a Merton series (a few µs a value instead of tens of ns), and the finite-difference method
 * needs the P&L at every node of every level to know where a jump lands and what it closes at (a
 * jump over a level closes the position at the P&L where it lands, beyond the level): about
 * 4 legs × 200 nodes × 400 levels ≈ 300 000 series, a second or more, before any solving. The
 * simulation needs the region only at its time levels (found once, as for the finite
 * differences), and one revaluation per jump that leaves the region; it gives the exit time's
 * distribution for free, and its standard errors are shown.
 *
 * Method: the log-spot X follows dX = ν dt + σ dW + dJ, ν = drift − q − σ²/2 − λκ, jumps at the
 * times of a Poisson process (intensity λ, log sizes N(m, δ²), κ = e^{m+δ²/2} − 1). Each path is
 * simulated exactly at the solver levels and at its jump times. Between two such times the path
 * is a Brownian bridge; with the region's ends moving linearly in time between the levels, the
 * chance that the bridge crossed an end is exp(−2(b₀ − x₀)(b₁ − x₁)/(σ²Δt)) (exact for a linear
 * boundary). Instead of sampling the crossings, each path carries its survival weight W and hands
 * W·p to the level crossed (conditional Monte Carlo: no discretisation bias from monitoring, less
 * variance); an end point or a jump landing outside the region closes the rest of W there, at the
 * level reached (diffusion) or at the P&L where the jump lands. Survivors close at the horizon.
 * Random numbers: xoshiro128** seeded through splitmix32 (touch-jumps.ts), normals by Box-Muller.
 */
import { exitRegion, medianFromSurvival, type ExitFigures, type ExitOptions, type Levels } from './exits.js';
import type { Segments } from './exit-region.js';
import { activeJumps, jumpCompensator } from './jumps.js';
import { Xoshiro128 } from './touch-jumps.js';
import type { CheckInput, Walk } from './types.js';

export interface ExitMcOptions extends ExitOptions {
  /** simulated paths (default 20 000) */
  paths?: number;
  /** generator seed (default 1) */
  seed?: number;
}

const K_IN = 0;
const K_TARGET = 1;
const K_STOP = 2;

/**
 * Exit figures under a walk with (or without) jumps, by simulation. The region is found for
 * `regionWalks` (default: the walk itself), so that the view and the market walk can share it.
 */
export function exitFiguresMc(input: CheckInput, levels: Levels, walk: Walk, opts: ExitMcOptions = {}, regionWalks?: Walk[]): ExitFigures {
  const paths = Math.max(2, Math.floor(opts.paths ?? 20000));
  const nt = Math.max(4, Math.floor(opts.nt ?? 48));
  const reg = exitRegion(input, levels, regionWalks ?? [walk], { ...opts, nt });
  const { t, segs, surface, x0 } = reg;
  const M = t.length - 1;
  const q = input.market.yield;
  const sig = walk.vol;
  const j = activeJumps(walk.jumps);
  const lam = j ? j.intensity : 0;
  const jm = j ? j.mean : 0;
  const jsd = j ? j.sd : 0;
  const kappa = j ? jumpCompensator(j) : 0;
  const nu0 = walk.drift - q - 0.5 * sig * sig - lam * kappa;
  const s2 = sig * sig;
  const tv = levels.target ?? 0;
  const sv = levels.stop ?? 0;
  const levelOf = (k: number): number => (k === K_TARGET ? tv : sv);
  const codes = segs.map((s: Segments) => Int8Array.from(s.kinds, (k) => (k === 'target' ? K_TARGET : k === 'stop' ? K_STOP : K_IN)));
  const sameShape = new Uint8Array(M);
  for (let k = 0; k < M; k++) sameShape[k] = segs[k].kinds.join() === segs[k + 1].kinds.join() ? 1 : 0;
  // the P&L at the horizon on a fine table (linear interpolation; survivors close there)
  const pH = reg.pnls[reg.pnls.length - 1];
  const tLo = x0 - 1.5 * reg.w - 1;
  const tHi = x0 + 1.5 * reg.w + 1;
  const TN = 4096;
  const tab = new Float64Array(TN + 1);
  for (let i = 0; i <= TN; i++) tab[i] = pH(Math.exp(tLo + ((tHi - tLo) * i) / TN));
  const pnlAtH = (x: number): number => {
    if (x <= tLo || x >= tHi) return pH(Math.exp(x));
    const u = ((x - tLo) / (tHi - tLo)) * TN;
    const i = Math.min(TN - 1, Math.floor(u));
    const f = u - i;
    return tab[i] * (1 - f) + tab[i + 1] * f;
  };
  const rng = new Xoshiro128(opts.seed ?? 1);
  const survSum = new Float64Array(M + 1);
  let sT = 0;
  let sT2 = 0;
  let sS = 0;
  let sS2 = 0;
  let sN = 0;
  let sN2 = 0;
  let sE = 0;
  let sE2 = 0;
  const startIdx = idxAt(segs[0].cuts, segs[0].cuts, 1, x0);
  if (codes[0][startIdx] !== K_IN) {
    // already outside: closed at once (the edge of the request refuses this)
    const k = codes[0][startIdx];
    return {
      probTarget: k === K_TARGET ? 1 : 0,
      probStop: k === K_STOP ? 1 : 0,
      probNeither: 0,
      expectedPnl: surface.current,
      medianExitYears: 0,
      method: 'monte-carlo',
      stderr: { probTarget: 0, probStop: 0, probNeither: 0, expectedPnl: 0 },
    };
  }
  // a drift uncertainty (μ ~ N(μ₀, τ²), fixed over the path): μ drawn per path, the exact mixture
  const tau = walk.driftSe !== undefined && walk.driftSe > 0 ? walk.driftSe : 0;
  for (let p = 0; p < paths; p++) {
    const nu = tau > 0 ? nu0 + tau * rng.normal() : nu0;
    let x = x0;
    let w = 1;
    let eT = 0;
    let eS = 0;
    let eE = 0;
    let nextJump = lam > 0 ? -Math.log(rng.uniform()) / lam : Infinity;
    survSum[0] += 1;
    for (let k = 0; k < M && w > 0; k++) {
      const ta = t[k];
      const tb = t[k + 1];
      const ca = segs[k].cuts;
      const cb = segs[k + 1].cuts;
      const kb = codes[k + 1];
      const lin = sameShape[k] === 1;
      let tc = ta;
      for (;;) {
        const tEnd = nextJump < tb ? nextJump : tb;
        const dt = tEnd - tc;
        // the region's ends at tc and tEnd: linear in time between the levels (same shape),
        // else those of the level at tb
        const fa = lin ? (tc - ta) / (tb - ta) : 1;
        const fb = lin ? (tEnd - ta) / (tb - ta) : 1;
        if (dt > 0) {
          const x1 = x + nu * dt + sig * Math.sqrt(dt) * rng.normal();
          const i0 = idxAt(ca, cb, lin ? fa : 1, x); // the path's segment at tc
          const i1 = idxAt(ca, cb, lin ? fb : 1, x1);
          if (kb[i0] !== K_IN || kb[i1] !== K_IN || i1 !== i0) {
            // outside already (the region's shape changed under it), ended outside, or ended in
            // another interval of the region: left through the side facing the end point
            let kind = kb[i0] !== K_IN ? kb[i0] : kb[i1];
            if (kind === K_IN) kind = x1 > x ? kb[i0 + 1] : kb[i0 - 1];
            eT += kind === K_TARGET ? w : 0;
            eS += kind === K_STOP ? w : 0;
            eE += w * levelOf(kind);
            w = 0;
            break;
          }
          if (s2 > 0) {
            // the two ends of the path's interval at tc and tEnd
            let pU = 0;
            let pD = 0;
            if (i0 < cb.length) {
              const b0 = lin ? ca[i0] + (cb[i0] - ca[i0]) * fa : cb[i0];
              const b1 = lin ? ca[i0] + (cb[i0] - ca[i0]) * fb : cb[i0];
              const d0 = b0 - x;
              const d1 = b1 - x1;
              if (d0 > 0 && d1 > 0) pU = Math.exp((-2 * d0 * d1) / (s2 * dt));
              else pU = 1;
            }
            if (i0 > 0) {
              const b0 = lin ? ca[i0 - 1] + (cb[i0 - 1] - ca[i0 - 1]) * fa : cb[i0 - 1];
              const b1 = lin ? ca[i0 - 1] + (cb[i0 - 1] - ca[i0 - 1]) * fb : cb[i0 - 1];
              const d0 = x - b0;
              const d1 = x1 - b1;
              if (d0 > 0 && d1 > 0) pD = Math.exp((-2 * d0 * d1) / (s2 * dt));
              else pD = 1;
            }
            const tot = pU + pD;
            if (tot > 1) {
              pU /= tot;
              pD /= tot;
            }
            if (pU > 0) {
              const kind = kb[i0 + 1];
              const m = w * pU;
              if (kind === K_TARGET) eT += m;
              else eS += m;
              eE += m * levelOf(kind);
            }
            if (pD > 0) {
              const kind = kb[i0 - 1];
              const m = w * pD;
              if (kind === K_TARGET) eT += m;
              else eS += m;
              eE += m * levelOf(kind);
            }
            w *= 1 - pU - pD;
          }
          x = x1;
          tc = tEnd;
        }
        if (nextJump < tb) {
          x += jm + jsd * rng.normal();
          const e1 = kb[idxAt(ca, cb, lin ? (nextJump - ta) / (tb - ta) : 1, x)];
          const jumpT = nextJump;
          nextJump += -Math.log(rng.uniform()) / lam;
          if (e1 !== K_IN) {
            // closed where the jump lands, beyond the level
            const pnl = surface.at(jumpT)(Math.exp(x));
            const kind = pnl >= tv && levels.target !== null ? K_TARGET : K_STOP;
            if (kind === K_TARGET) eT += w;
            else eS += w;
            eE += w * pnl;
            w = 0;
            break;
          }
          continue;
        }
        break;
      }
      survSum[k + 1] += w;
    }
    let eN = 0;
    if (w > 0) {
      eN = w;
      eE += w * pnlAtH(x);
    }
    sT += eT;
    sT2 += eT * eT;
    sS += eS;
    sS2 += eS * eS;
    sN += eN;
    sN2 += eN * eN;
    sE += eE;
    sE2 += eE * eE;
  }
  const n = paths;
  const se = (s: number, s2v: number): number => Math.sqrt(Math.max(0, (s2v - (s * s) / n) / (n - 1)) / n);
  const surv = Float64Array.from(survSum, (v) => v / n);
  return {
    probTarget: sT / n,
    probStop: sS / n,
    probNeither: sN / n,
    expectedPnl: sE / n,
    medianExitYears: medianFromSurvival(t, surv),
    method: 'monte-carlo',
    paths: n,
    stderr: { probTarget: se(sT, sT2), probStop: se(sS, sS2), probNeither: se(sN, sN2), expectedPnl: se(sE, sE2) },
  };
}

/** Segment index of x with the cuts interpolated linearly (fraction f from ca to cb; a point on a cut counts as beyond it). */
function idxAt(ca: Float64Array, cb: Float64Array, f: number, x: number): number {
  let i = 0;
  if (f === 1) while (i < cb.length && cb[i] < x) i++;
  else while (i < cb.length && ca[i] + (cb[i] - ca[i]) * f < x) i++;
  return i;
}
