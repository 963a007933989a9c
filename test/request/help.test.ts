/**
 * Help text: every topic of the grammar (docs/design.md §2 verbs plus jumps, american, units) has a
 * section with its grammar line and examples; the examples use invented symbols only (six or more
 * letters) and parse; `help TOPIC` requests are accepted for exactly these topics.
 */
import { describe, expect, it } from 'vitest';
import { helpExamples, helpText, helpTopics } from '../../src/request/help.js';
import { verbs } from '../../src/verbs/registry.js';
import { parse } from '../../src/request/parse.js';

describe('helpText', () => {
  it('the overview names every verb and every topic', () => {
    const t = helpText();
    for (const v of ['compare', 'iv', 'touch', 'mark', 'log', 'again', 'help']) expect(t).toContain(v);
    for (const topic of helpTopics()) expect(t).toContain(topic);
  });

  it('reads the verbs from the registry: every verb but help has a page, named in the overview\'s verb lines', () => {
    const lines = helpText().split('\n');
    const verbLines = lines.slice(lines.indexOf('Verbs:') + 1, lines.indexOf('', lines.indexOf('Verbs:')));
    for (const v of verbs()) {
      if (v.name !== 'help') expect(helpTopics(), v.name).toContain(v.name);
      // check is written as its legs (LEG …) in the overview
      if (v.name !== 'check') expect(verbLines.some((l) => new RegExp(`(^|\\s)${v.name}\\b`).test(l)), `${v.name} in the overview`).toBe(true);
      expect(parse(v.example).ok, `${v.name}: ${v.example}`).toBe(true);
    }
  });

  it('each topic has its own section with its examples, each of which parses', () => {
    for (const topic of helpTopics()) {
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
    for (const topic of helpTopics()) {
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
