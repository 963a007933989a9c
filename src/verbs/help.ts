/** `help [topic]`: the grammar, the terms and their units, and examples (text in src/request/help.ts). */
import { helpSchema } from '../request/schema.js';
import type { Tok } from '../request/lex.js';
import type { HelpRequest } from '../request/types.js';
import { Cursor } from '../request/grammar/cursor.js';
import { replaceTok } from '../request/grammar/errors.js';
import { closest } from '../request/grammar/words.js';
import { helpText, helpTopics } from '../request/help.js';
import { answer, type Verb } from './verb.js';

export function parseHelp(src: string, toks: Tok[]): HelpRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'help');
  const t = c.peek();
  if (!t) return { verb: 'help' };
  const topics = helpTopics();
  if (!topics.includes(t.low)) {
    const guess = closest(t.low, topics);
    throw c.reject(
      t,
      `no help on '${t.text}'${guess ? ` — did you mean ${guess}?` : ''}; topics: ${topics.join(', ')}`,
      replaceTok(t, guess ?? 'check'),
    );
  }
  c.next();
  const extra = c.peek();
  if (extra) throw c.reject(extra, `help takes one topic, e.g. help check`, { at: extra.at, length: c.end() - extra.at, text: '' });
  return { verb: 'help', topic: t.low };
}

export const help: Verb<HelpRequest> = {
  name: 'help',
  schema: helpSchema,
  words: ['help', '?'],
  overview: { usage: 'help [topic]', says: () => `topics: ${helpTopics().join(', ')}` },
  grammar: parseHelp,
  example: 'help check',
  run: (_text, req) => ({
    // help pages carry no caution: they state no figures
    answer: answer({ verb: 'help', headline: '', text: helpText(req.topic), json: { kind: 'help', topic: req.topic ?? null }, ephemeral: true, caution: '' }),
  }),
};
