/** The last guard of a check's result: no NaN or Infinity reaches a caller that prints. */
import type { CheckCore } from '../types.js';

export function sanitize(r: CheckCore): boolean {
  let hit = false;
  const rec = (o: Record<string, unknown>): void => {
    for (const k in o) {
      const v = o[k];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          o[k] = 0;
          hit = true;
        }
      } else if (Array.isArray(v)) arr(v);
      else if (v && typeof v === 'object') rec(v as Record<string, unknown>);
    }
  };
  const arr = (a: unknown[]): void => {
    for (let i = 0; i < a.length; i++) {
      const v = a[i];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          a[i] = 0;
          hit = true;
        }
      } else if (v && typeof v === 'object') rec(v as Record<string, unknown>);
    }
  };
  for (const l of r.legs) rec(l as unknown as Record<string, unknown>);
  rec(r.position as unknown as Record<string, unknown>);
  rec(r.outcome as unknown as Record<string, unknown>);
  if (r.outcomeMarket) rec(r.outcomeMarket as unknown as Record<string, unknown>);
  const c = r.curves;
  for (const a of [c.spot, c.densityView, c.densityMarket, c.pnl, c.pnlDensity.x, c.pnlDensity.density]) arr(a);
  for (const a of c.pnlDensity.atoms) rec(a as unknown as Record<string, unknown>);
  return hit;
}
