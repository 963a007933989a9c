/**
 * Help text: every topic of the grammar (docs/design.md §2 verbs plus jumps, american, units) has a
 * section with its grammar line and examples; the examples use invented symbols only (six or more
 * letters) and parse; `help TOPIC` requests are accepted for exactly these topics.
 */
import { describe, expect, it } from 'vitest';
import { HELP_TOPICS, helpExamples, helpText } from '../../src/request/help.js';
import { parse } from '../../src/request/parse.js';

describe('helpText', () => {
  it('the overview names every verb and every topic', () => {
    const t = helpText();
    for (const v of ['compare', 'iv', 'touch', 'mark', 'log', 'again', 'help']) expect(t).toContain(v);
    for (const topic of HELP_TOPICS) expect(t).toContain(topic);
  });

  it('each topic has its own section with its examples, each of which parses', () => {
    for (const topic of HELP_TOPICS) {
      const t = helpText(topic);
      expect(t).not.toBe(helpText());
      const ex = helpExamples(topic);
      expect(ex.length).toBeGreaterThan(0);
      for (const e of ex) {
        expect(t).toContain(e);
        const r = parse(e);
        if (!r.ok) throw new Error(`help ${topic}: ${e}: ${r.error.message}`);
      }
      expect(parse(`help ${topic}`)).toEqual({ ok: true, request: { verb: 'help', topic } });
    }
  });

  it('verbs have two or three examples', () => {
    for (const v of ['check', 'compare', 'iv', 'touch', 'mark', 'log', 'again'] as const) {
      expect(helpExamples(v).length).toBeGreaterThanOrEqual(2);
      expect(helpExamples(v).length).toBeLessThanOrEqual(3);
    }
  });

  it('symbols in examples are invented (six or more letters)', () => {
    for (const topic of HELP_TOPICS) {
      for (const e of helpExamples(topic)) {
        const syms = [...e.matchAll(/\b(?:on|mark)\s+([A-Za-z][A-Za-z0-9.-]*)/g)].map((m) => m[1]);
        for (const s of syms) expect(s.length).toBeGreaterThanOrEqual(6);
      }
    }
  });

  it('an unknown topic gets the overview; the case of the topic does not matter', () => {
    expect(helpText('nonsense')).toBe(helpText());
    expect(helpText('JUMPS')).toBe(helpText('jumps'));
  });
});
