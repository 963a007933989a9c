/**
 * American options by finite differences on the Kolmogorov backward (Black-Scholes-Merton)
 * equation, optionally with Merton jumps (then a partial integro-differential equation).
 *
 * In x = ln S and τ = time to expiry the value V(x, τ) solves
 *
 *     V_τ = ½σ² V_xx + (r − q − λκ − ½σ²) V_x − (r + λ) V + λ ∫ V(x + y) f(y) dy,
 *     V(x, 0) = payoff,   V ≥ payoff (early exercise),
 *
 * with λ = 0 without jumps (f: the normal density of the log jump, κ = e^{m+δ²/2} − 1). Method:
 *
 * - grid in x stretched by sinh around ln K (x = ln K + c·sinh ξ, ξ uniform), with the strike
 *   exactly on a node and the spacing adjusted so that the spot is a node too (no interpolation
 *   at the spot); three-point non-uniform differences (upwinded convection only at a node where the
 *   central form would lose the M-matrix signs); the payoff at the strike node averaged over its
 *   cell (smoothing of the initial data);
 * - time steps graded towards expiry (τ_k = T·(k/M)²). Default: two fully implicit start-up steps
 *   (they damp the payoff's kink) then variable-step BDF2, second order and L-stable. The
 *   alternative kept in solveBackward, Crank-Nicolson with the first four steps replaced by pairs
 *   of implicit half steps (Rannacher smoothing), prices as well but leaves undamped
 *   high-frequency noise from the exercise boundary moving across nodes (Crank-Nicolson's
 *   amplification factor tends to −1 for stiff modes), about ±0.2% in gamma at normal accuracy
 *   and worse as the grid is refined at a fixed number of steps; BDF2 damps it;
 * - the early-exercise constraint by the Brennan-Schwartz algorithm (Thomas elimination in the
 *   direction that ends in the exercise region, projecting during back substitution) whenever the
 *   exercise region is a single interval at one end of the grid (a put with r > 0, a call with
 *   q > 0); by projected SOR otherwise (negative rates with q < r for a put, r < q for a call, where
 *   the continuation region can be an interval between two boundaries); no projection where early
 *   exercise is never optimal;
 * - Dirichlet boundaries at both ends from the asymptotes: far out of the money 0, deep in the
 *   money max(intrinsic, S e^{−qτ} − K e^{−rτ}) for a call, max(intrinsic, K e^{−rτ} − S e^{−qτ})
 *   for a put;
 * - jumps: the integral of the piecewise-linear node values against the normal density in closed
 *   form (Φ and φ at the nodes: weights computed once per grid), plus the parts beyond the grid
 *   where V follows its asymptote (closed form too); treated explicitly, at the old level in the
 *   implicit start-up steps and extrapolated linearly in the BDF2 steps;
 * - the figure at the spot: Richardson extrapolation (4·V_fine − V_coarse)/3 over two solves whose
 *   space steps differ by exactly 2 and time steps by 2 (both errors are O(h²) and O(Δt²)).
 *
 * Layout: american/problem.ts (the problem, payoff, boundary values), grid.ts (the sinh grid and
 * the cache a caller may keep), jump-integral.ts, solver.ts (solveBackward), at-spot.ts (reading
 * the solution at the spot, Richardson), value.ts, greeks.ts, curve.ts, implied-vol.ts;
 * the tridiagonal solves and the spline are numerical tools (../numeric/).
 *
 * Accuracy ('normal': 140/280 space intervals, 70/140 time steps): a few 1e-6 typically and
 * within 1e-4 (worst seen 7e-5) of a Broadie-Detemple tree on random cases; spots within a few
 * percent of the exercise boundary are the hardest. Units of the Greeks follow docs/design.md §3
 * (per share; vega per vol point of the diffusion σ; theta per calendar day; rho per 1% of rate).
 */
export type { FdSize } from './american/at-spot.js';
export { americanValueCurve } from './american/curve.js';
export { americanGreeks } from './american/greeks.js';
export { FdCache } from './american/grid.js';
export { americanImpliedVol } from './american/implied-vol.js';
export { solveBackward, type BackwardOptions, type BackwardProblem, type Solution } from './american/solver.js';
export { americanFdValue, americanValue, type AmericanOptions } from './american/value.js';
