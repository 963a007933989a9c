/**
 * Every "Example:" of a rejection is a request Kolmo answers here — in this channel, with its
 * marks and log. Parsing is not enough: an example with no spot, an `on SYMBOL` without a mark or
 * `again N` of a number the log does not have would be refused in turn. The corrected request is
 * kept when it would be answered; else the verb's canonical example (they write their market terms
 * out), else the canonical check (or, for `again` and `log`, `log 20`, which lists the numbers).
 */
import { exampleOf } from '../request/examples.js';
import { parse } from '../request/parse.js';
import { resolveCheck, resolveIv, resolveTouch } from '../request/resolve.js';
import type { Rejection } from '../reply.js';
import type { Request } from '../request/types.js';
import { termsOfMark } from './marks.js';
import type { AskContext } from './verb.js';

/** Most checks in one comparison the seam answers. */
const COMPARE_MAX = 6;

/** Runs an example for real (nothing logged): true when it is answered. */
export type Runs = (example: string, req: Request) => Promise<boolean>;

export async function answersHere(example: string, ctx: AskContext, today: string, nowIso: string, runs?: Runs): Promise<boolean> {
  try {
    const p = parse(example);
    if (!p.ok) return false;
    const r = p.request;
    const store = ctx.store;
    const ctxFor = async (on: string | undefined) => {
      if (!on) return { today, now: nowIso };
      const m = await store?.getMark(ctx.channel, on.toUpperCase());
      return m ? { today, now: nowIso, mark: termsOfMark(m) } : null;
    };
    switch (r.verb) {
      case 'check': {
        const c = await ctxFor(r.terms.on);
        if (!c || !resolveCheck(r, c).ok) return false;
        break;
      }
      case 'compare': {
        const checks = r.checks ?? [];
        if (checks.length < 2 || checks.length > COMPARE_MAX) return false;
        for (const k of checks) {
          const c = await ctxFor(k.terms.on);
          if (!c || !resolveCheck(k, c).ok) return false;
        }
        break;
      }
      case 'iv': {
        const c = await ctxFor(r.terms.on);
        if (!c || !resolveIv(r, c).ok) return false;
        break;
      }
      case 'touch': {
        const c = await ctxFor(r.terms.on);
        if (!c || !resolveTouch(r, c).ok) return false;
        break;
      }
      case 'again': {
        const e = await store?.get(ctx.channel, r.number);
        return !!e && !e.deletedAt;
      }
      case 'mark':
      case 'log':
        return !!store;
      default:
        return true;
    }
    // some refusals (targets and stops) come only once the position is valued
    return runs ? await runs(example, r) : true;
  } catch {
    return false;
  }
}

export async function workingExample(r: Rejection, ctx: AskContext, today: string, nowIso: string, runs?: Runs): Promise<Rejection> {
  try {
    const lines = r.message.split('\n');
    const last = lines[lines.length - 1];
    if (!last.startsWith('Example: ')) return r;
    const ex = last.slice('Example: '.length);
    if (await answersHere(ex, ctx, today, nowIso, runs)) return r;
    const verb = parse(ex);
    const key = verb.ok ? verb.request.verb : 'check';
    const candidates = key === 'again' || key === 'log' ? ['log 20', exampleOf('check')] : [exampleOf(key), exampleOf('check')];
    let pick: string = exampleOf('check');
    for (const c of candidates) {
      if (await answersHere(c, ctx, today, nowIso, runs)) {
        pick = c;
        break;
      }
    }
    lines[lines.length - 1] = `Example: ${pick}`;
    return { ...r, message: lines.join('\n') };
  } catch {
    return r;
  }
}
