/**
 * Block Kit splitting. Limits from the platform's Block Kit reference (section block: text at
 * most 3000 characters; a message: at most 50 blocks) and the msg_blocks_too_long refusal around
 * 13,000 characters of block text reported in bolt-js issue #2509. The checks are identities:
 * whatever is split must come back whole, in order, with no row cut.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import {
  answerMessages,
  escapeMrkdwn,
  monoBlocks,
  monoChunks,
  rootMessage,
  SECTION_TEXT_MAX,
  BLOCKS_PER_MESSAGE_MAX,
  MESSAGE_BLOCK_CHARS_MAX,
  type Block,
} from '../../src/chat/blocks.js';

const unescapeMrkdwn = (s: string) => s.replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&amp;/g, '&');

function sectionBodies(blocks: Block[]): string[] {
  return blocks.filter((b) => b.type === 'section').map((b) => (b as { text: { text: string } }).text.text);
}

/** the monospace content of a fenced section, unescaped */
function inner(text: string): string {
  expect(text.startsWith('```\n')).toBe(true);
  expect(text.endsWith('\n```')).toBe(true);
  return unescapeMrkdwn(text.slice(4, -4));
}

const row = fc.stringMatching(/^[ -~]{0,120}$/); // printable ASCII rows, as tables are

describe('monospace splitting', () => {
  it('keeps every block within 3000 characters and gives back every row whole and in order', () => {
    fc.assert(
      fc.property(fc.array(row, { minLength: 1, maxLength: 400 }), (rows) => {
        const text = rows.join('\n');
        const blocks = monoBlocks(text);
        const bodies = sectionBodies(blocks);
        for (const b of bodies) expect(b.length).toBeLessThanOrEqual(SECTION_TEXT_MAX);
        const back = bodies.map(inner).join('\n');
        const kept = [...rows];
        while (kept.length > 0 && kept[kept.length - 1].trim() === '') kept.pop(); // trailing blank rows only
        expect(back).toBe(kept.join('\n'));
        // no row is cut: every block boundary is a row boundary
        const rowSet = new Set(rows);
        for (const b of bodies) for (const line of inner(b).split('\n')) expect(rowSet.has(line)).toBe(true);
      }),
      { numRuns: 150 },
    );
  });

  it('counts escaped characters against the limit (mrkdwn escapes &, <, >)', () => {
    const line = '<&>'.repeat(100); // 300 characters, 1300 once escaped
    const text = Array.from({ length: 10 }, () => line).join('\n');
    const bodies = sectionBodies(monoBlocks(text));
    expect(bodies.length).toBeGreaterThan(1);
    for (const b of bodies) expect(b.length).toBeLessThanOrEqual(SECTION_TEXT_MAX);
    expect(bodies.map(inner).join('\n')).toBe(text);
  });

  it('breaks only a single line too long for any block, and loses none of it', () => {
    const long = 'x'.repeat(7000);
    const chunks = monoChunks(`head\n${long}\ntail`);
    for (const c of chunks) expect(c.length + 8).toBeLessThanOrEqual(SECTION_TEXT_MAX);
    expect(chunks.join('').replace(/\n/g, '')).toBe(`head${long}tail`);
  });

  it('gives no block for an empty text', () => {
    expect(monoBlocks('')).toEqual([]);
    expect(monoBlocks('\n\n  ')).toEqual([]);
  });
});

describe('answer messages', () => {
  it('stay within 50 blocks and the block-text budget per message, caution last as a context line', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 4000 }), fc.integer({ min: 10, max: 100 }), (rows, width) => {
        const text = Array.from({ length: rows }, (_, i) => `${String(i).padStart(5)} ${'·'.repeat(width)}`).join('\n');
        const msgs = answerMessages({ text, caution: 'Model output, not advice.' });
        let seen = 0;
        for (const m of msgs) {
          expect(m.blocks.length).toBeLessThanOrEqual(BLOCKS_PER_MESSAGE_MAX);
          const chars = m.blocks.reduce((n, b) => n + (b.type === 'section' ? b.text.text.length : b.type === 'context' ? b.elements[0].text.length : 0), 0);
          expect(chars).toBeLessThanOrEqual(MESSAGE_BLOCK_CHARS_MAX);
          expect(m.text.length).toBeGreaterThan(0);
          expect(m.text.length).toBeLessThanOrEqual(40000);
          for (const b of m.blocks) if (b.type === 'section') seen += inner(b.text.text).split('\n').length;
        }
        expect(seen).toBe(rows);
        const last = msgs[msgs.length - 1].blocks;
        expect(last[last.length - 1]).toEqual({ type: 'context', elements: [{ type: 'mrkdwn', text: 'Model output, not advice.' }] });
      }),
      { numRuns: 40 },
    );
  });

  it('root line names the asker as a mention and escapes the headline', () => {
    const m = rootMessage('UTRADERAA1', 'FERNWK 90/100 call spread <test> & co');
    expect(m.text.startsWith('<@UTRADERAA1>')).toBe(true);
    const b = m.blocks[0];
    expect(b.type).toBe('section');
    if (b.type === 'section') expect(b.text.text).toBe(`<@UTRADERAA1> · ${escapeMrkdwn('FERNWK 90/100 call spread <test> & co')}`);
    expect(escapeMrkdwn('a<b>&c')).toBe('a&lt;b&gt;&amp;c');
  });
});
