/**
 * The buttons under every check and comparison: vary spot, vol and drift, re-run on today's mark
 * (when the check used one), edit in the check form, delete (the asker's only) and, for a private
 * check, post it to a channel.
 *
 * A button's value is a lookup key and nothing else: the check's number. The channel is never
 * taken from the value but from where the press came from (the message's own channel), so a
 * press can only touch a check of the conversation it was made in; who pressed comes from the
 * signed payload too. Labels are Kolmo's own words.
 */
import type { types } from '@slack/bolt';
import type { Answer } from '../../reply.js';
import { answerButtons } from '../../verbs/ask.js';
import type { Variation } from './variations.js';

export const ACTION_PREFIX = 'kolmo_';
export const VARY_ACTIONS: Record<Variation, string> = {
  spot_down: 'kolmo_vary_spot_down',
  spot_up: 'kolmo_vary_spot_up',
  vol_down: 'kolmo_vary_vol_down',
  vol_up: 'kolmo_vary_vol_up',
  drift_rate: 'kolmo_vary_drift_rate',
  rerun_mark: 'kolmo_rerun_mark',
};
export const EDIT_ACTION = 'kolmo_edit';
export const DELETE_ACTION = 'kolmo_delete';
export const POST_ACTION = 'kolmo_post';
export const ANSWER_ACTIONS_BLOCK = 'kolmo_answer_actions';

/** The variation an action id stands for, if any. */
export function variationOfAction(actionId: string): Variation | undefined {
  for (const [k, v] of Object.entries(VARY_ACTIONS)) if (v === actionId) return k as Variation;
  return undefined;
}

/** A button's value: `n<number>`. */
export function checkKey(number: number): string {
  return `n${number}`;
}

/** The check number a button's value names; undefined for anything else (never trusted further). */
export function parseCheckKey(value: unknown): number | undefined {
  if (typeof value !== 'string') return undefined;
  const m = /^n([1-9]\d{0,8})$/.exec(value);
  return m ? Number(m[1]) : undefined;
}

export interface AnswerActionsInput {
  number: number;
  verb: string;
  /** the check took its market from a mark (`on SYMBOL`) */
  usedMark: boolean;
  /** answered in the person's own messages with the app */
  private: boolean;
}

const plainText = (text: string) => ({ type: 'plain_text' as const, text, emoji: false });

function button(actionId: string, text: string, number: number, extra: Partial<types.Button> = {}): types.Button {
  return { type: 'button', action_id: actionId, text: plainText(text), value: checkKey(number), ...extra };
}

/**
 * The actions block of an answer, as its verb declares (its `buttons`, src/verbs/verb.ts): checks,
 * comparisons and reruns get every button (`vary`); iv and touch only delete and post.
 */
export function answerActions(a: AnswerActionsInput): types.ActionsBlock {
  const n = a.number;
  const elements: types.Button[] = [];
  if (answerButtons(a.verb) === 'vary') {
    elements.push(
      button(VARY_ACTIONS.spot_down, 'Spot −5%', n),
      button(VARY_ACTIONS.spot_up, 'Spot +5%', n),
      button(VARY_ACTIONS.vol_down, 'Vol −5 pts', n),
      button(VARY_ACTIONS.vol_up, 'Vol +5 pts', n),
      button(VARY_ACTIONS.drift_rate, 'Drift at the rate', n),
    );
    if (a.usedMark) elements.push(button(VARY_ACTIONS.rerun_mark, 'Re-run on today’s mark', n));
    elements.push(button(EDIT_ACTION, 'Edit in the check form', n));
  }
  if (a.private) elements.push(button(POST_ACTION, 'Post to a channel', n));
  elements.push(
    button(DELETE_ACTION, 'Delete', n, {
      style: 'danger',
      confirm: {
        title: plainText(`Delete check #${n}?`),
        text: plainText('Its line, its thread and its chart are removed; the log keeps only its number. Only the person who asked can delete it.'),
        confirm: plainText('Delete'),
        deny: plainText('Keep it'),
        style: 'danger',
      },
    }),
  );
  return { type: 'actions', block_id: ANSWER_ACTIONS_BLOCK, elements };
}

/** The buttons of a delivered answer, if it has any (a logged, non-ephemeral answer of a verb with `buttons`). */
export function buttonsFor(a: Answer, origin: { channel: string; log?: string }): types.ActionsBlock | undefined {
  if (a.logNumber === undefined || a.ephemeral || answerButtons(a.verb) === undefined) return undefined;
  return answerActions({
    number: a.logNumber,
    verb: a.verb,
    usedMark: a.json.mark !== undefined || a.json.marks !== undefined,
    private: (origin.log ?? origin.channel).startsWith('im:'),
  });
}

export const POST_CALLBACK = 'kolmo_post_to_channel';

/** The modal that asks which channel a private check goes to. */
export function postToChannelView(number: number, note?: string): types.ModalView {
  return {
    type: 'modal',
    callback_id: POST_CALLBACK,
    title: plainText('Post to a channel'),
    submit: plainText('Post'),
    close: plainText('Cancel'),
    private_metadata: JSON.stringify({ v: 1, of: number }),
    blocks: [
      {
        type: 'section',
        text: {
          type: 'mrkdwn',
          text: `Check #${number} of your private log goes to the channel you pick, as a new line with the answer in its thread. Kolmo must be a member of that channel (\`/invite @Kolmo\`).`,
        },
      },
      ...(note ? [{ type: 'context' as const, elements: [{ type: 'mrkdwn' as const, text: note }] }] : []),
      {
        type: 'input',
        block_id: 'post_to',
        label: plainText('Channel'),
        element: { type: 'conversations_select', action_id: 'v', filter: { include: ['public', 'private'], exclude_bot_users: true } },
      },
    ],
  };
}
