/**
 * What the interactive listeners share (buttons, the check form, my desk, direct messages): the
 * log a conversation's checks are numbered in, the delivery key of an interaction, the line that
 * says what produced a check, and the small steps every one of them takes (tell the asker, open
 * a view, read a log's marks).
 *
 * Every payload arrives signed on the same endpoint as commands and events and is verified the
 * same way by the receiver. What a payload says is trusted only as a lookup key:
 * - a button names a check by number (`n17`); the log it is looked up in is the conversation the
 *   press came from (a channel's own log, or the presser's private log in their messages with the
 *   app), so a press can only reach a check of that conversation;
 * - the person is the payload's signed user; delete, and personal defaults, are the asker's only;
 * - a replayed payload (same trigger) is acknowledged and not acted on again (the inbox).
 * Every listener acknowledges first (the platform allows 3 seconds; a trigger to open a view
 * expires in 3 seconds too), then does its work.
 */
import { createHash } from 'node:crypto';
import type { ModalView } from '@slack/types';
import { termsOfMark, type LogStore, type MarkTerms } from '../../verbs/ask.js';
import { plainNotice } from '../blocks.js';
import { tellAsker, type Origin } from '../deliver.js';
import type { ListenerContext } from './context.js';

export type Mark = Awaited<ReturnType<LogStore['listMarks']>>[number];

/** The log a conversation's checks are numbered in: a channel's own, or the person's private log. */
export function logOf(channel: string, user: string): string {
  return /^D/.test(channel) ? privateLog(user) : channel;
}

export function privateLog(user: string): string {
  return `im:${user}`;
}

/** The delivery key of an interaction: its trigger is unique per press or submission. */
export function interactionKey(kind: string, triggerId: string | undefined, fallback: string): string {
  return `${kind}:${createHash('sha256').update(triggerId || fallback).digest('base64url').slice(0, 32)}`;
}

/** One line saying what produced a check and the request typed out, so it can be typed next time. */
export function typedLine(lead: string, text: string): string {
  return `${lead}. Typed, it is: /kolmo ${text}`;
}

/** The platform's error code of a failed Web API call, or the error's text. */
export function apiError(err: unknown): string {
  return (err as { data?: { error?: string } }).data?.error ?? String(err);
}

/**
 * The marks of a log, by symbol ([] when the log cannot be read: the form then offers no symbols
 * and checks a request as if the log had no marks; the engine, which reads the log again, decides).
 */
export async function marksOf(store: LogStore | null, log: string): Promise<Mark[]> {
  try {
    return (await store?.listMarks(log)) ?? [];
  } catch {
    return [];
  }
}

/** A mark's terms from a list of marks (the form's quick check). */
export function termsIn(marks: readonly Mark[], symbol: string): MarkTerms | undefined {
  const key = symbol.trim().toUpperCase();
  const m = marks.find((x) => x.symbol === key);
  return m ? termsOfMark(m) : undefined;
}

/** Tells the asker something (an ephemeral in the conversation, or their messages with the app). */
export async function notice(ctx: ListenerContext, origin: Origin, text: string): Promise<void> {
  await tellAsker(ctx.delivery, origin, [plainNotice(text)]).catch(() => false);
}

/** Opens a view on a trigger; false (logged) when the platform refuses it (an expired trigger). */
export async function openView(ctx: ListenerContext, triggerId: string, view: ModalView, what: string): Promise<boolean> {
  try {
    await ctx.delivery.client.views.open({ trigger_id: triggerId, view });
    return true;
  } catch (err) {
    ctx.log.warn({ what, err: apiError(err) }, 'could not open a view');
    return false;
  }
}

/**
 * An acknowledgement sent at most once: a listener whose press becomes a request records it
 * first and acknowledges after; on a path that only tells the person something it acknowledges
 * before; and in any case once when it ends.
 */
export function ackOnce(ack: () => Promise<void>): () => Promise<void> {
  let sent: Promise<void> | undefined;
  return () => (sent ??= ack());
}
