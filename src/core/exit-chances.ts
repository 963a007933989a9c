/**
 * Targets and stops for a check under both walks: the view (drift μ, the view's vol, jumps) and
 * the market walk (drift = rate, the market vol, the same jumps). Without jumps: finite
 * differences on the backward equation (exits.ts) on one grid shared by both walks; with jumps:
 * a seeded Monte Carlo (exits-mc.ts, where the reason is given), standard errors shown.
 * Monitoring is continuous.
 */
import { exitFiguresMc, type ExitMcOptions } from './exits-mc.js';
import { exitFiguresPde, exitGrid, type ExitFigures, type Levels } from './exits.js';
import { pnlSurface } from './exit-region.js';
import { activeJumps } from './jumps.js';
import type { CheckInput, Walk } from './types.js';

export type { ExitFigures, Levels } from './exits.js';

export interface ExitChances {
  target: number | null;
  stop: number | null;
  /** the P&L today (position value − cost): the start of every path */
  current: number;
  view: ExitFigures;
  market: ExitFigures;
}

/**
 * Exit figures under the view (input.view) and the market walk (`market`: drift = rate and the
 * market vol; its jumps are the view's). Levels are money P&L of the whole position; the caller
 * checks that the current P&L lies strictly between them.
 */
export function exitChances(input: CheckInput, levels: Levels, market: Walk, opts: ExitMcOptions = {}): ExitChances {
  const view = input.view;
  const jumps = activeJumps(view.jumps);
  const mk: Walk = { drift: market.drift, vol: market.vol, ...(jumps ? { jumps } : {}) };
  const walks = [view, mk];
  const q = input.market.yield;
  if (jumps) {
    const v = exitFiguresMc(input, levels, view, opts, walks);
    const m = exitFiguresMc(input, levels, mk, opts, walks);
    return { ...levels, current: pnlSurface(input).current, view: v, market: m };
  }
  const g = exitGrid(input, levels, walks, opts);
  return { ...levels, current: g.surface.current, view: exitFiguresPde(g, view, q), market: exitFiguresPde(g, mk, q) };
}
