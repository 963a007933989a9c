/**
 * My desk (docs/design.md §1): the app's home tab for one person: their last 20 checks across
 * channels (a link to each thread, a one-line summary, re-run), the marks of the channels they
 * used, and their personal defaults with a button that edits them.
 *
 * Pure: records in, a home view out (views.publish). Platform limit: a home view holds at most
 * 100 blocks; 20 checks, the marks of at most 10 channels and the defaults stay under 40.
 */
import type { types } from '@slack/bolt';
import { money, pct } from '../../report/format.js';
import { ageWords, isStale } from '../../report/log.js';
import { isRerunnable } from '../../verbs/ask.js';
import { escapeMrkdwn } from '../blocks.js';
import { shorten } from '../form/errors.js';
import { checkKey } from '../actions/buttons.js';
import { pctText } from '../actions/variations.js';
import { defaultsWords, type PersonalDefaults } from './defaults.js';

export const DESK_CHECKS = 20;
export const DESK_MARK_CHANNELS = 10;
export const DESK_RERUN = 'kolmo_desk_rerun';
export const DESK_OPEN_FORM = 'kolmo_desk_form';
export const DESK_EDIT_DEFAULTS = 'kolmo_desk_defaults';

/** One of the person's checks, wherever it was asked. */
export interface DeskCheck {
  /** the conversation it was answered in (a channel id, or the person's messages with the app) */
  channel: string;
  /** the log it is numbered in (a channel id; a private log's own key) */
  log: string;
  number: number;
  verb: string;
  at: string;
  summary: Record<string, unknown>;
  permalink: string | null;
  private: boolean;
}

export interface DeskMark {
  symbol: string;
  spot?: number;
  iv?: number;
  yield?: number;
  rate?: number;
  at: string;
}

export interface DeskInput {
  checks: readonly DeskCheck[];
  /** marks by channel, for the channels the person used */
  marks: ReadonlyArray<{ channel: string; marks: readonly DeskMark[] }>;
  defaults: PersonalDefaults;
  now: Date;
}

const md = (text: string) => ({ type: 'mrkdwn' as const, text });
const plainText = (text: string) => ({ type: 'plain_text' as const, text, emoji: false });

/** A check's figures in one line: chance of profit and view edge, or the verb's own figure. */
export function summaryLine(c: Pick<DeskCheck, 'verb' | 'summary'>): string {
  const s = c.summary;
  const n = (x: unknown) => (typeof x === 'number' && Number.isFinite(x) ? x : undefined);
  const parts: string[] = [typeof s.position === 'string' ? s.position : c.verb];
  const p = n(s.probProfit);
  const e = n(s.viewEdge);
  if (p !== undefined) parts.push(`chance of profit ${pct(p)}`);
  if (e !== undefined) parts.push(`view edge ${money(e, { sign: true })}`);
  const t = n(s.probTouch);
  if (t !== undefined) parts.push(`touch ${pct(t)}`);
  const iv = n(s.iv);
  if (c.verb === 'iv' && iv !== undefined) parts.push(`iv ${pctText(iv)}`);
  return shorten(parts.join(' · '), 280);
}

function where(c: DeskCheck): string {
  return c.private ? 'your messages with Kolmo' : `<#${c.channel}>`;
}

function checkBlock(c: DeskCheck, now: Date): types.KnownBlock {
  const age = ageWords(Math.max(0, now.getTime() - Date.parse(c.at)));
  const title = c.permalink && /^https:\/\/[^\s<>|]+$/.test(c.permalink) ? `<${c.permalink}|#${c.number}>` : `#${c.number}`;
  const line = `${title} in ${where(c)} · ${escapeMrkdwn(summaryLine(c))} · ${age} ago`;
  const rerunnable = isRerunnable(c.verb);
  return {
    type: 'section',
    text: md(line),
    ...(rerunnable
      ? {
          accessory: {
            type: 'button',
            action_id: DESK_RERUN,
            text: plainText('Re-run'),
            // the lookup key: which log and which number; checked against the person pressing
            value: `${c.log}:${checkKey(c.number)}`,
          },
        }
      : {}),
  };
}

function markWords(m: DeskMark, now: Date): string {
  const t: string[] = [];
  if (m.spot !== undefined) t.push(`spot ${m.spot}`);
  if (m.iv !== undefined) t.push(`iv ${pctText(m.iv)}`);
  if (m.yield !== undefined) t.push(`yield ${pctText(m.yield)}`);
  if (m.rate !== undefined) t.push(`rate ${pctText(m.rate)}`);
  const stale = isStale(m.at, now) ? ' (stale)' : '';
  return `*${escapeMrkdwn(m.symbol)}* ${t.join(', ')}${stale}`;
}

/** The home view for one person. */
export function myDeskView(d: DeskInput): types.HomeView {
  const blocks: types.KnownBlock[] = [
    { type: 'header', text: plainText('My desk') },
    {
      type: 'actions',
      block_id: 'desk_top',
      elements: [{ type: 'button', action_id: DESK_OPEN_FORM, text: plainText('Check a position'), style: 'primary', value: 'form' }],
    },
    { type: 'section', text: md(`*Your last ${DESK_CHECKS} checks*`) },
  ];
  const checks = d.checks.slice(0, DESK_CHECKS);
  if (checks.length === 0) {
    blocks.push({ type: 'context', elements: [md('None yet. Press “Check a position”, type `/kolmo` in a channel, or write to Kolmo here in Messages.')] });
  }
  for (const c of checks) blocks.push(checkBlock(c, d.now));
  blocks.push({ type: 'divider' }, { type: 'section', text: md('*Marks of your channels*') });
  const withMarks = d.marks.filter((m) => m.marks.length > 0).slice(0, DESK_MARK_CHANNELS);
  if (withMarks.length === 0) blocks.push({ type: 'context', elements: [md('No marks in the channels you used. `mark SYMBOL spot … iv …` records one.')] });
  for (const ch of withMarks) {
    blocks.push({ type: 'section', text: md(shorten(`<#${ch.channel}>: ${ch.marks.map((m) => markWords(m, d.now)).join(' · ')}`, 2900)) });
  }
  blocks.push(
    { type: 'divider' },
    {
      type: 'section',
      text: md(`*My defaults:* ${escapeMrkdwn(defaultsWords(d.defaults))}\nUsed in your requests where they leave a term out; the answer says when one was used.`),
      accessory: { type: 'button', action_id: DESK_EDIT_DEFAULTS, text: plainText('Edit defaults'), value: 'defaults' },
    },
  );
  return { type: 'home', blocks };
}
