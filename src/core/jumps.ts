/**
 * The one definition of "jumps are active" and of the few quantities of Merton (1976) jumps used
 * across the core: the compensator κ = E[J − 1] = e^{m + δ²/2} − 1 and the variance the jumps add
 * to ln S per year, λ(m² + δ²).
 */
import type { Jumps } from './types.js';

/** True when jumps are given and happen at all (intensity > 0). */
export function hasJumps(j: Jumps | undefined | null): j is Jumps {
  return !!j && j.intensity > 0;
}

/** The jumps when they are active, else undefined. */
export function activeJumps(j: Jumps | undefined | null): Jumps | undefined {
  return hasJumps(j) ? j : undefined;
}

/** Finite intensity ≥ 0, finite mean, finite s.d. ≥ 0. */
export function validJumps(j: Jumps): boolean {
  return Number.isFinite(j.intensity) && j.intensity >= 0 && Number.isFinite(j.mean) && Number.isFinite(j.sd) && j.sd >= 0;
}

/** κ = e^{m + δ²/2} − 1, the mean relative jump (the drift compensator is λκ). */
export function jumpCompensator(j: Jumps): number {
  return Math.expm1(j.mean + 0.5 * j.sd * j.sd);
}

/** Variance of ln S added by the jumps per year: λ(m² + δ²). */
export function jumpVariance(j: Jumps): number {
  return j.intensity * (j.mean * j.mean + j.sd * j.sd);
}
