/**
 * Every "Example:" of a rejection is a request Kolmo answers here — in this channel, with its
 * marks and log. Parsing is not enough: an example with no spot, an `on SYMBOL` without a mark or
 * `again N` of a number the log does not have would be refused in turn. The corrected request is
 * kept when it would be answered; else the verb's canonical example (they write their market terms
 * out), else the canonical check (or, for `again` and `log`, `log 20`, which lists the numbers).
 */
import { exampleOf } from '../request/examples.js';
import { parse } from '../request/parse.js';
import type { Rejection } from '../reply.js';
import type { Request } from '../request/types.js';
import { termsOfMark } from './marks.js';
import type { AskContext, Here, Verb } from './verb.js';

/** Runs an example for real (nothing logged): true when it is answered. */
export type Runs = (example: string, req: Request) => Promise<boolean>;

/** The clock of the request and the registry's verb of a name (handed over by the seam). */
export interface ExampleEnv {
  today: string;
  nowIso: string;
  verb(name: string): Verb;
}

export async function answersHere(example: string, ctx: AskContext, env: ExampleEnv, runs?: Runs): Promise<boolean> {
  try {
    const p = parse(example);
    if (!p.ok) return false;
    const r = p.request;
    const store = ctx.store;
    const { today, nowIso } = env;
    const here: Here = {
      channel: ctx.channel,
      store,
      context: async (on) => {
        if (!on) return { today, now: nowIso };
        const m = await store?.getMark(ctx.channel, on.toUpperCase());
        return m ? { today, now: nowIso, mark: termsOfMark(m) } : null;
      },
    };
    const v = env.verb(r.verb);
    if (v.answersHere && !(await v.answersHere(r, here))) return false;
    // some refusals (targets and stops) come only once the position is valued
    return runs ? await runs(example, r) : true;
  } catch {
    return false;
  }
}

export async function workingExample(r: Rejection, ctx: AskContext, env: ExampleEnv, runs?: Runs): Promise<Rejection> {
  try {
    const lines = r.message.split('\n');
    const last = lines[lines.length - 1];
    if (!last.startsWith('Example: ')) return r;
    const ex = last.slice('Example: '.length);
    if (await answersHere(ex, ctx, env, runs)) return r;
    const verb = parse(ex);
    const key = verb.ok ? verb.request.verb : 'check';
    // again's own example names a number this log may not have: `log`'s lists the numbers
    const candidates = [exampleOf(key === 'again' ? 'log' : key), exampleOf('check')];
    let pick: string = exampleOf('check');
    for (const c of candidates) {
      if (await answersHere(c, ctx, env, runs)) {
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
