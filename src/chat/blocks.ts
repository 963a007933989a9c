/**
 * Block Kit messages for answers, rejections and notices.
 *
 * Platform limits (Block Kit reference: a section block's text is at most 3000 characters, a
 * message carries at most 50 blocks, a message's top-level `text` at most 40000 characters; see
 * also MESSAGE_BLOCK_CHARS_MAX):
 * a monospace answer is split on line boundaries into several section blocks, never cut inside a
 * row, and across several messages when it needs more than 50 blocks. Every message carries a
 * plain `text` fallback for notifications and clients without Block Kit.
 */
import type { ActionsBlock, ContextBlock, DividerBlock, SectionBlock, TextObject } from '@slack/types';
import type { Answer } from '../reply.js';

export const SECTION_TEXT_MAX = 3000;
export const BLOCKS_PER_MESSAGE_MAX = 50;
/**
 * Block text per message. Not a documented limit: the platform has been seen refusing messages
 * with msg_blocks_too_long from about 13,000 characters of block text (bolt-js issue #2509), so
 * messages are kept below 12,000.
 */
export const MESSAGE_BLOCK_CHARS_MAX = 12000;
/** the fallback `text` is kept well under the platform's 40000-character cap */
export const FALLBACK_TEXT_MAX = 3000;

export type { TextObject };
/**
 * The blocks Kolmo sends: the platform's own Block Kit types (`@slack/types`), narrowed to what
 * Kolmo uses (a section always has text; a context line holds text only), so every message is
 * passed to the Web API as it is, without casts.
 */
export type Section = Omit<SectionBlock, 'text'> & { type: 'section'; text: TextObject };
export type Context = Omit<ContextBlock, 'elements'> & { type: 'context'; elements: TextObject[] };
/** buttons (src/chat/actions/buttons.ts): no text of their own */
export type Block = Section | Context | DividerBlock | ActionsBlock;

export interface Message {
  text: string;
  blocks: Block[];
}

/** Escapes the three characters the platform's mrkdwn treats as control characters. */
export function escapeMrkdwn(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
}

const FENCE = '```';

/** A line longer than fits in one block (never produced by Kolmo's tables) is broken into pieces. */
function pieces(line: string, room: number): string[] {
  const esc = escapeMrkdwn(line);
  if (esc.length <= room) return [esc];
  const out: string[] = [];
  let cur = '';
  for (const ch of line) {
    const e = escapeMrkdwn(ch);
    if (cur.length + e.length > room) {
      out.push(cur);
      cur = '';
    }
    cur += e;
  }
  if (cur !== '') out.push(cur);
  return out;
}

/**
 * Splits monospace text into chunks of whole lines, each of which, escaped and wrapped in a code
 * fence, fits in `max` characters. Trailing blank lines are dropped (other rows are kept exactly); a blank text gives none.
 */
export function monoChunks(text: string, max = SECTION_TEXT_MAX): string[] {
  const room = max - 2 * FENCE.length - 2; // fences plus the newlines after and before them
  const lines = text.replace(/\r\n?/g, '\n').split('\n');
  while (lines.length > 0 && lines[lines.length - 1].trim() === '') lines.pop();
  if (lines.length === 0) return [];
  const chunks: string[] = [];
  let cur: string[] = [];
  let len = 0;
  const flush = () => {
    if (cur.length > 0) chunks.push(cur.join('\n'));
    cur = [];
    len = 0;
  };
  for (const line of lines) {
    for (const piece of pieces(line, room)) {
      const add = piece.length + (cur.length > 0 ? 1 : 0);
      if (len + add > room) flush();
      len += piece.length + (cur.length > 0 ? 1 : 0);
      cur.push(piece);
    }
  }
  flush();
  return chunks;
}

/** Monospace section blocks for a text, split on line boundaries. */
export function monoBlocks(text: string, max = SECTION_TEXT_MAX): Block[] {
  return monoChunks(text, max).map((c) => ({ type: 'section', text: { type: 'mrkdwn', text: `${FENCE}\n${c}\n${FENCE}` } }));
}

/** One context line (caution, notes); split if it is longer than a block allows. */
export function contextBlocks(line: string): Block[] {
  const esc = escapeMrkdwn(line.trim());
  if (esc === '') return [];
  const out: Block[] = [];
  for (let i = 0; i < esc.length; i += SECTION_TEXT_MAX) {
    out.push({ type: 'context', elements: [{ type: 'mrkdwn', text: esc.slice(i, i + SECTION_TEXT_MAX) }] });
  }
  return out;
}

function fallback(s: string): string {
  const t = s.trim();
  if (t.length <= FALLBACK_TEXT_MAX) return t;
  const cut = t.lastIndexOf('\n', FALLBACK_TEXT_MAX - 2);
  return t.slice(0, cut > 0 ? cut : FALLBACK_TEXT_MAX - 2) + '\n…';
}

function blockChars(b: Block): number {
  if (b.type === 'section') return b.text.text.length;
  if (b.type === 'context') return b.elements.reduce((n, e) => n + e.text.length, 0);
  return 0;
}

/**
 * Packs blocks, in order, into messages of at most 50 blocks and at most MESSAGE_BLOCK_CHARS_MAX
 * characters of block text each; the fallback text is each message's own text.
 */
export function packMessages(blocks: Block[], plain: (bs: Block[]) => string): Message[] {
  const out: Message[] = [];
  let cur: Block[] = [];
  let chars = 0;
  for (const b of blocks) {
    const n = blockChars(b);
    if (cur.length > 0 && (cur.length >= BLOCKS_PER_MESSAGE_MAX || chars + n > MESSAGE_BLOCK_CHARS_MAX)) {
      out.push({ text: fallback(plain(cur)), blocks: cur });
      cur = [];
      chars = 0;
    }
    cur.push(b);
    chars += n;
  }
  if (cur.length > 0) out.push({ text: fallback(plain(cur)), blocks: cur });
  return out;
}

function unescapeMrkdwn(s: string): string {
  return s.replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&amp;/g, '&');
}

function plainOf(bs: Block[]): string {
  return bs
    .map((b) => {
      if (b.type === 'section') return unescapeMrkdwn(b.text.text.replace(/^```\n?/, '').replace(/\n?```$/, ''));
      if (b.type === 'context') return b.elements.map((e) => unescapeMrkdwn(e.text)).join(' ');
      return '';
    })
    .filter((s) => s !== '')
    .join('\n');
}

/** The root line in the channel: who asked, then the engine's headline. */
export function rootMessage(user: string, headline: string): Message {
  const who = `<@${user}>`;
  return {
    text: `${who} · ${headline}`,
    blocks: [{ type: 'section', text: { type: 'mrkdwn', text: `${who} · ${escapeMrkdwn(headline)}`.slice(0, SECTION_TEXT_MAX) } }],
  };
}

/**
 * The full answer as one or more messages: the monospace text split into blocks, then the caution
 * as a context line. `lead` (optional) goes first as a plain section, e.g. the root line when the
 * answer is posted inside an existing thread.
 */
export function answerMessages(a: Pick<Answer, 'text' | 'caution'>, lead?: Message): Message[] {
  const blocks: Block[] = [...(lead ? lead.blocks : []), ...monoBlocks(a.text), ...contextBlocks(a.caution)];
  if (blocks.length === 0) return [{ text: ' ', blocks: [] }];
  return packMessages(blocks, plainOf);
}

/** A rejection or other monospace notice for the asker (quoted request with a caret needs monospace). */
export function monoNotice(text: string, note?: string): Message[] {
  const blocks: Block[] = [...monoBlocks(text), ...(note ? contextBlocks(note) : [])];
  if (blocks.length === 0) return [{ text: ' ', blocks: [] }];
  return packMessages(blocks, plainOf);
}

/** A short plain notice for the asker (platform failures, busy). */
export function plainNotice(text: string): Message {
  const esc = escapeMrkdwn(text).slice(0, SECTION_TEXT_MAX);
  return { text: fallback(text), blocks: [{ type: 'section', text: { type: 'mrkdwn', text: esc } }] };
}
