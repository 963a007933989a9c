/**
 * The verbs, in one list: everything that lists or dispatches verbs reads it (the parser's
 * dispatch and its "unknown verb" message, the reply's `verb`, the seam, the budget, the help
 * topics, pages and overview, the canonical examples, `again`'s rerunnable verbs and how it
 * rewrites them, the resolver's check of a corrected example, the chat app's log lines, which
 * answers get which buttons, which requests take personal defaults or shared files). Adding a verb:
 * DEVELOPERS.md, "Adding a verb".
 *
 * The list is read through functions, never at module load: the grammar (src/request/parse.ts)
 * reads it for its dispatch while the verb files import the grammar, and an import cycle is only
 * safe when nothing is read before every module has loaded.
 */
import { z } from 'zod';
import { again } from './again.js';
import { check } from './check.js';
import { compare } from './compare.js';
import { help } from './help.js';
import { history } from './history.js';
import { iv } from './iv.js';
import { log } from './log.js';
import { mark } from './mark.js';
import { touch } from './touch.js';
import type { PersonalDefault, Verb } from './verb.js';

/** Every verb, in the order help and the "unknown verb" message list them. */
export function verbs() {
  return [check, compare, iv, touch, mark, log, again, history, help] as const;
}

/** Any request: the union of the verbs' requests. */
export type Request = ReturnType<typeof verbs>[number] extends infer V ? (V extends Verb<infer R> ? R : never) : never;

/** A verb's name (the `verb` of its request and of its answer). */
export type VerbName = Request['verb'];

/** Every request's shape: the schemas of the verbs (read when first used, not at load). */
export const requestSchema = z.lazy(() => z.union(verbs().map((v) => v.schema as z.ZodType<Request>) as [z.ZodType<Request>, ...z.ZodType<Request>[]]));

/** The verb of that name, if there is one. */
function verbFound(name: string): Verb | undefined {
  return (verbs() as readonly Verb[]).find((x) => x.name === name);
}

/** The verb of that name. */
export function verbNamed(name: string): Verb {
  const v = verbFound(name);
  if (!v) throw new Error(`no verb ${name}`);
  return v;
}

/** The verb a request starting with this word (lower case) asks for, if any. */
export function verbOfWord(word: string): Verb | undefined {
  return (verbs() as readonly Verb[]).find((v) => v.words.includes(word));
}

/** The verbs' names, in the registry's order. */
export function verbNames(): VerbName[] {
  return verbs().map((v) => v.name);
}

/** Whether `again N` can rerun a logged entry of this verb (its `rerun`; false for a name no verb has). */
export function isRerunnable(name: string): boolean {
  return verbFound(name)?.rerun !== undefined;
}

/** The buttons under a logged answer of this verb (its `buttons`; none for a name no verb has). */
export function answerButtons(name: string): Verb['buttons'] {
  return verbFound(name)?.buttons;
}

/** The person's defaults a request of this verb takes (its `personalDefaults`; none for a name no verb has). */
export function personalDefaultsOf(name: string): readonly PersonalDefault[] {
  return verbFound(name)?.personalDefaults ?? [];
}

/** Whether a request text asks for a verb that reads the files shared with it (its `readsFiles`). */
export function readsFiles(text: string): boolean {
  return verbFound(verbOfText(text))?.readsFiles === true;
}

/** The verb a request text starts with, for a log line: its name, `check` for a leg, else `unknown`. */
export function verbOfText(text: string): string {
  const w = text.trim().split(/\s+/, 1)[0]?.toLowerCase() ?? '';
  if ((verbNames() as string[]).includes(w)) return w;
  return /^[+-]?\d/.test(w) ? 'check' : 'unknown';
}
