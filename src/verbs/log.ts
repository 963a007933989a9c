/** `log [N]`: the channel's last N checks, shown only to the asker (thread links apart in a workspace). */
import { parseLog } from '../request/parse.js';
import type { LogRequest } from '../request/types.js';
import { logText, type LoggedCheck } from '../report/log.js';
import { answer, defineVerb, needStore, storeCall, type Outcome, type VerbEnv } from './verb.js';

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

export const log = defineVerb({ name: 'log', words: ['log'], grammar: parseLog, rerunnable: false, run: runLog });
