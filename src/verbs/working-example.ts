/**
 * Every "Example:" of a rejection is a request Kolmo answers here — in this channel, with its
 * marks and log. Parsing is not enough: an example with no spot, an `on SYMBOL` without a mark or
 * `again N` of a number the log does not have would be refused in turn. The corrected request is
 * kept when it would be answered; else the verb's canonical example (they write their market terms
 * out), else the canonical check (or, for `again` and `log`, `log 20`, which lists the numbers).
 */
import { EXAMPLES } from '../request/examples.js';
import { parse } from '../request/parse.js';
import { resolveCheck, resolveIv, resolveTouch } from '../request/resolve.js';
import type { Rejection } from '../reply.js';
import type { AnyRequest } from './verb.js';
import { termsOfMark } from './marks.js';
import type { AskContext } from './verb.js';

/** Most checks in one comparison the seam answers. */
const COMPARE_MAX = 6;

export function answersHere(example: string, ctx: AskContext, today: string, nowIso: string, runs?: (ex: string, req: AnyRequest) => boolean): boolean {
  try {
    const p = parse(example);
    if (!p.ok) return false;
    const r = p.request;
    if (runs && !runs(example, r)) return false;
    const store = ctx.store;
    const ctxFor = (on: string | undefined) => {
      if (!on) return { today, now: nowIso };
      const m = store?.getMark(ctx.channel, on.toUpperCase());
      return m ? { today, now: nowIso, mark: termsOfMark(m) } : null;
    };
    switch (r.verb) {
      case 'check': {
        const c = ctxFor(r.terms.on);
        return !!c && resolveCheck(r, c).ok;
      }
      case 'compare': {
        const checks = r.checks ?? [];
        return (
          checks.length > 1 &&
          checks.length <= COMPARE_MAX &&
          checks.every((k) => {
            const c = ctxFor(k.terms.on);
            return !!c && resolveCheck(k, c).ok;
          })
        );
      }
      case 'iv': {
        const c = ctxFor(r.terms.on);
        return !!c && resolveIv(r, c).ok;
      }
      case 'touch': {
        const c = ctxFor(r.terms.on);
        return !!c && resolveTouch(r, c).ok;
      }
      case 'again':
        return !!store?.get(ctx.channel, r.number);
      case 'mark':
        return !!store;
      case 'log':
        return !!store;
      default:
        return true;
    }
  } catch {
    return false;
  }
}

export function workingExample(r: Rejection, ctx: AskContext, today: string, nowIso: string, runs?: (ex: string, req: AnyRequest) => boolean): Rejection {
  const lines = r.message.split('\n');
  const last = lines[lines.length - 1];
  if (!last.startsWith('Example: ')) return r;
  const ex = last.slice('Example: '.length);
  if (answersHere(ex, ctx, today, nowIso, runs)) return r;
  const verb = parse(ex);
  const key = verb.ok && verb.request.verb in EXAMPLES ? (verb.request.verb as keyof typeof EXAMPLES) : 'check';
  const candidates = key === 'again' || key === 'log' ? ['log 20', EXAMPLES.check] : [EXAMPLES[key], EXAMPLES.check];
  const pick = candidates.find((c) => answersHere(c, ctx, today, nowIso, runs)) ?? EXAMPLES.check;
  lines[lines.length - 1] = `Example: ${pick}`;
  return { ...r, message: lines.join('\n') };
}
