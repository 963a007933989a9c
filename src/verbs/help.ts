/** `help [topic]`: the grammar, the terms and their units, and examples (text in src/request/help.ts). */
import { helpText } from '../request/help.js';
import { parseHelp } from '../request/parse.js';
import { answer, defineVerb } from './verb.js';

export const help = defineVerb({
  name: 'help',
  words: ['help', '?'],
  grammar: parseHelp,
  rerunnable: false,
  run: (_text, req) => ({
    answer: answer({ verb: 'help', headline: '', text: helpText(req.topic), json: { kind: 'help', topic: req.topic ?? null }, ephemeral: true }),
  }),
});
