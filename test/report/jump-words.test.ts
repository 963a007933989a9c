/**
 * The view's jumps are worded one way wherever an answer states them: the text answer's view, the
 * touch answer's assumptions, the comparison's table and the chart's title all carry the same
 * phrase, from the one formatter (src/report/format.ts, `jumpWords`).
 */
import { describe, expect, it } from 'vitest';
import { answerLocal } from '../../src/cli.js';
import { describeView, jumpWords } from '../../src/report/format.js';
import { viewWords } from '../../src/report/text.js';

const ctx = { channel: 'cli', user: 'jump-words', now: new Date('2027-01-04T15:30:00Z'), store: null };

describe('the view\'s jumps, one wording', () => {
  it('in the request\'s order: rate per year, mean and s.d. of the log jump', () => {
    expect(jumpWords({ intensity: 0.5, mean: -0.08, sd: 0.12 })).toBe('0.5/yr mean -8% sd 12%');
    expect(jumpWords({ intensity: 2.25, mean: 0.035, sd: 0.1 })).toBe('2.25/yr mean 3.5% sd 10%');
  });

  it('the same in the text and on the chart', () => {
    const view = { drift: 0.09, vol: 0.26, jumps: { intensity: 0.5, mean: -0.08, sd: 0.12 } };
    const phrase = 'jumps 0.5/yr mean -8% sd 12%';
    expect(viewWords({ view } as unknown as Parameters<typeof viewWords>[0])).toContain(phrase);
    expect(describeView(view)).toContain(phrase);
  });

  it('in every answer that states jumps: check, touch and compare', async () => {
    const phrase = 'jumps 0.5/yr mean -8% sd 12%';
    for (const text of [
      '+1 put 80 3m iv 30% spot 84.20 jumps 0.5/yr -8% 12%',
      'touch 70 by 6m spot 84.20 vol 28% jumps 0.5/yr -8% 12%',
      'compare +1 put 80 3m iv 30% spot 84.20 ; jumps 0.5/yr -8% 12%',
    ]) {
      const r = await answerLocal(text, ctx);
      if (r.kind !== 'answer') throw new Error(`${text}: ${r.message}`);
      expect(r.text.replace(/\s+/g, ' '), text).toContain(text.startsWith('compare') ? phrase.slice('jumps '.length) : phrase);
    }
  });
});
