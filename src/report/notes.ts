/** The words of the notes the core states as codes (src/core/types.ts, CheckNote). */
import type { CheckNote } from '../core/types.js';

export function checkNoteText(n: CheckNote): string {
  switch (n.code) {
    case 'values-american':
      return `values: American exercise by finite differences on the backward equation${n.jumps ? ' with Merton jumps (a PIDE)' : ''} (one solve per leg revalues it across the horizon)`;
    case 'values-merton':
      return 'values: Merton jump diffusion (European), Poisson-weighted Black-Scholes-Merton series';
    case 'values-bsm':
      return 'values: Black-Scholes-Merton (European)';
    case 'outcome-exact':
      return 'outcome: exact closed forms (every option leg expires at the horizon)';
    case 'outcome-integration':
      return 'outcome: Gauss-Legendre integration between kinks; live legs revalued at the horizon with their own iv (sticky strike)';
    case 'shares-legs':
      return 'shares legs: probability in the money shown as 1; P&L is the price change (dividends left out)';
    case 'not-finite':
      return 'some figures could not be computed and are shown as 0';
  }
}
