/**
 * A log that cannot be written costs the asker nothing but the number: the request is still
 * answered, flagged in `warnings` as not logged, with a message a desk user can read. Faults are
 * real, not mocked: a read-only connection (`readonly: true`) and a size cap that SQLite enforces
 * (`maxBytes`, PRAGMA max_page_count: inserts beyond it fail with SQLITE_FULL — SQLite
 * documentation, "PRAGMA max_page_count").
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { StoreError } from '../../src/store/store.js';
import { SPREAD, answered, ask, desk, figures, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

describe('a read-only log', () => {
  it('answers, flags the answer as not logged, still reads the log and the marks, and refuses to record a mark', async () => {
    answered(await ask(d.store, 'mark FERNWK spot 84.20 iv 31%'));
    const first = answered(await ask(d.store, SPREAD));
    const ro = await d.open({ readonly: true });
    const a = answered(await ask(ro, SPREAD));
    expect(a.logNumber).toBeUndefined();
    expect(a.warnings.join(' ')).toMatch(/Not logged: the log could not be written: the log file is read-only/);
    expect(a.text).toBe(first.text);
    // reading works
    expect((answered(await ask(ro, 'log')).json.entries as unknown[]).length).toBe(1);
    const on = answered(await ask(ro, '+1 call 90 2027-03-19 on FERNWK asof 2027-01-04'));
    expect(on.warnings.join(' ')).toContain('Not logged');
    const again = answered(await ask(ro, 'again 1 drift 2%'));
    expect(again.logNumber).toBeUndefined();
    expect(again.warnings.join(' ')).toContain('read-only');
    // writing a mark is the request itself: it is refused, and says why
    const m = rejected(await ask(ro, 'mark FERNWK spot 90'));
    expect(m.message).toContain('the mark for FERNWK was not recorded');
    expect(m.message).toContain('read-only');
    expect((await d.store.getMark('C0DESKA', 'FERNWK'))!.spot).toBe(84.2);
    expect(await d.store.recent('C0DESKA', 10)).toHaveLength(1);
  });
});

describe('a full log', () => {
  it('answers checks and comparisons, flagged as not logged (disk full); what was logged stays', async () => {
    const full = await d.open({ maxBytes: 96 * 1024 });
    const first = answered(await ask(full, SPREAD));
    expect(first.logNumber).toBe(1);
    // fill it for real, in another channel, until SQLite refuses
    // (large entries first, then small ones until not even a small one fits)
    let err: unknown;
    for (const size of [3000, 10]) {
      err = undefined;
      for (let i = 0; i < 5000 && !err; i++) {
        try {
          await full.appendCheck({ channel: 'C0FILL', user: 'U0FILL', at: '2027-01-04T14:00:00Z', verb: 'check', text: 'x'.repeat(size), normalized: '{}', summary: { position: 'p' } });
        } catch (e) {
          err = e;
        }
      }
    }
    expect(err).toBeInstanceOf(StoreError);
    expect((err as StoreError).code).toBe('full');
    const a = answered(await ask(full, SPREAD));
    expect(a.logNumber).toBeUndefined();
    expect(a.warnings.join(' ')).toContain('Not logged: the log could not be written: disk full');
    expect(figures(a.json)).toEqual(figures(first.json));
    const c = answered(await ask(full, `compare ${SPREAD} ; drift 0%`));
    expect(c.warnings.join(' ')).toContain('disk full');
    expect((c.json.checks as unknown[]).length).toBe(2);
    expect((await full.get('C0DESKA', 1))!.text).toBe(SPREAD);
  });
});

describe('no log at all', () => {
  it('answers checks without a number and without a warning; log, again and mark say they need the log', async () => {
    const a = answered(await ask(null, SPREAD));
    expect(a.logNumber).toBeUndefined();
    expect(a.warnings).toEqual([]);
    for (const t of ['log', 'again 1', 'mark', 'mark FERNWK spot 80']) {
      expect(rejected(await ask(null, t)).message).toMatch(/needs the channel's log/);
    }
    expect(rejected(await ask(null, '+1 call 90 3m on FERNWK')).message).toContain('no mark for FERNWK');
  });
});
