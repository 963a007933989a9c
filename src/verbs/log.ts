/** `log [N]`: the channel's last N checks, shown only to the asker (thread links apart in a workspace). */
import { logSchema } from '../request/schema.js';
import type { Tok } from '../request/lex.js';
import { LIMITS } from '../request/limits.js';
import { Cursor } from '../request/grammar/cursor.js';
import { readWholeNumber } from '../request/grammar/values.js';
import type { LogRequest } from '../request/types.js';
import { logText, type LoggedCheck } from '../report/log.js';
import { answer, hasStore, needStore, storeCall, type Outcome, type VerbEnv, type Verb } from './verb.js';

async function runLog(text: string, req: LogRequest, env: VerbEnv): Promise<Outcome> {
  const store = needStore(text, env, 'log');
  const entries = await storeCall(text, 'the log could not be read', 0, () => store.recent(env.ctx.channel, req.count));
  const words = (e: LoggedCheck) => env.verbs().find((v) => v.name === e.verb)?.logWords?.(e.summary) ?? '';
  const listing = logText(entries, req.count, !env.ctx.inWorkspace, words);
  return {
    answer: answer({
      verb: 'log',
      headline: '',
      text: listing.text,
      json: {
        kind: 'log',
        entries: entries.map((e) => ({
          number: e.number,
          user: e.user,
          at: e.at,
          verb: e.verb,
          text: e.text,
          summary: e.summary,
          permalink: e.permalink,
          delivered: e.delivered,
        })),
      },
      ephemeral: true,
      ...(listing.links.length ? { links: listing.links } : {}),
    }),
  };
}

export function parseLog(src: string, toks: Tok[]): LogRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'log');
  if (c.done()) return { verb: 'log', count: LIMITS.logDefault };
  const count = readWholeNumber(c, c.peek()!, 'log', 1, LIMITS.logMax, '20');
  const extra = c.peek();
  if (extra) throw c.reject(extra, `log takes only a count, e.g. log 20`, { at: extra.at, length: c.end() - extra.at, text: '' });
  return { verb: 'log', count };
}

export const log: Verb<LogRequest> = {
  name: 'log',
  schema: logSchema,
  words: ['log'],
  overview: { usage: 'log [N]', says: 'past checks' },
  grammar: parseLog,
  run: runLog,
  answersHere: hasStore,
  example: 'log 20',
  help: {
    title: 'log — the channel\'s past checks',
    lines: ['log [N]   (the last N checks, default 10, at most 100)'],
    examples: ['log', 'log 25'],
  },
};
