/**
 * What the engine hands to a shell (chat app, console, command line) for one request.
 * The shell decides where each part goes; it never recomputes anything.
 */

import type { VerbName } from './verbs/registry.js';

/** The verb an answer is to (the registry's names: src/verbs/registry.ts). */
export type Verb = VerbName;

/** A request that was rejected at the edge: shown only to the asker. */
export interface Rejection {
  kind: 'rejected';
  /** one screen: the request quoted, a caret under the first bad token, what was expected, one corrected example */
  message: string;
  /** character index of the first bad token in the request text */
  at: number;
}

/** An answer to an accepted request. */
export interface Answer {
  kind: 'answer';
  verb: Verb;
  /**
   * One short line for the channel (who is filled in by the shell): the position in a few words,
   * chance of profit and view edge. Empty for verbs that post nothing to the channel.
   */
  headline: string;
  /** the full monospace answer (table, assumptions line), without the caution */
  text: string;
  /** the one-line caution every answer carries */
  caution: string;
  /** machine-readable result (docs/design.md §4) */
  json: Record<string, unknown>;
  /** only the asker should see it (help, lists) */
  ephemeral: boolean;
  /** chart to render for this answer, if any (rendered by src/report, possibly in a worker) */
  chart?: unknown;
  /** number of the log entry in the channel, when logged */
  logNumber?: number;
  /** notes for the asker about the answer's delivery (e.g. "not logged: disk full") */
  warnings: string[];
  /**
   * links a workspace shell renders as links next to the monospace text (e.g. `log`: the thread
   * of each check); absent when there are none. Outside a workspace they are already in `text`.
   */
  links?: { label: string; url: string }[];
}

export type Reply = Rejection | Answer;

export const CAUTION = "Model output, not advice; your view is an assumption. Follow the desk's risk limits and local rules.";
