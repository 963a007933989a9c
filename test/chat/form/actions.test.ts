/**
 * The buttons under an answer and the variations they ask for: each variation's request text
 * reads, means the change it names (checked by running it through the real engine and reading the
 * figures the answer used) and leaves everything else as logged.
 */
import { describe, expect, it } from 'vitest';
import { answerActions, parseCheckKey, variationOfAction, VARY_ACTIONS, checkKey } from '../../../src/chat/actions/buttons.js';
import { usesMark, variationText, type Variation } from '../../../src/chat/actions/variations.js';
import { ask as askSeam } from '../../../src/verbs/ask.js';
import type { Answer } from '../../../src/reply.js';
import { openDatabase } from '../../../src/store/store.js';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const NOW = new Date('2027-01-04T12:00:00Z');
const TODAY = '2027-01-04';

async function run(text: string, now = NOW): Promise<Answer> {
  const r = await askSeam(text, { channel: 'CVARTEST01', user: 'UVAR000001', store: null, now });
  if (r.kind !== 'answer') throw new Error(`rejected: ${text}\n${r.message}`);
  return r;
}

/** A logged check as the log would hold it: its text and the summary of its answer. */
async function logged(text: string, now = NOW) {
  const a = await run(text, now);
  const j = a.json as Record<string, any>;
  const sum = (c: Record<string, any>) => ({ spot: c.market.spot, rate: c.market.rate, vol: c.view.vol, drift: c.view.drift, asof: c.asof });
  const summary = j.kind === 'compare' ? { parts: (j.checks as Record<string, any>[]).map(sum) } : sum(j);
  return { verb: String(j.kind), text, summary };
}

async function vary(text: string, kind: Variation, today = TODAY, now = NOW) {
  const r = variationText(await await logged(text, now), kind, today);
  if (!r.ok) throw new Error(r.reason);
  return r;
}

const SPREAD = '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9%';

describe('variations of a check', () => {
  it('spot ±5% writes the new spot in place, and the engine uses it', async () => {
    const down = await vary(SPREAD, 'spot_down');
    expect(down.text).toBe(SPREAD.replace('spot 100', 'spot 95'));
    expect(((await run(down.text)).json as any).market.spot).toBe(95);
    const up = await vary(SPREAD, 'spot_up');
    expect(((await run(up.text)).json as any).market.spot).toBe(105);
    expect(up.what).toBe('spot 5% higher');
  });

  it('vol ±5 points starts from the vol the check used (here the iv nearest the money, no vol was written)', async () => {
    const base = (await run(SPREAD)).json as any;
    const up = await vary(SPREAD, 'vol_up');
    expect(up.text).toBe(`${SPREAD} vol ${Number(((base.view.vol + 0.05) * 100).toFixed(4))}%`);
    expect(((await run(up.text)).json as any).view.vol).toBeCloseTo(base.view.vol + 0.05, 12);
    const written = await vary('+1 call 100 2027-03-19 spot 100 iv 30% vol 26%', 'vol_down');
    expect(written.text).toBe('+1 call 100 2027-03-19 spot 100 iv 30% vol 21%');
  });

  it('drift at the rate makes the view edge zero when the view’s vol is the market vol (docs/design.md §4: view edge = drift part)', async () => {
    const v = await vary(SPREAD, 'drift_rate');
    expect(v.text).toBe(SPREAD.replace('drift 9%', 'drift 4.5%'));
    const j = (await run(v.text)).json as any;
    expect(j.view.drift).toBe(0.045);
    expect(j.outcome.viewEdge).toBeCloseTo(0, 9);
  });

  it('keeps the logged day when the check was made on another day', async () => {
    const v = await vary(SPREAD, 'spot_down', '2027-01-11');
    expect(v.text).toBe(`${SPREAD.replace('spot 100', 'spot 95')} asof ${TODAY}`);
    const kept = await vary(`${SPREAD} asof 2027-01-02`, 'spot_up', '2027-01-11');
    expect(kept.text).toContain('asof 2027-01-02');
    expect(kept.text.match(/asof/g)?.length).toBe(1);
  });

  it('the vol floor is said, not crossed', async () => {
    const r = variationText(await logged('+1 call 100 2027-03-19 spot 100 iv 4% vol 3%'), 'vol_down', TODAY);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toMatch(/below the 1% floor/);
  });

  it('re-run on today’s mark only for a check that used a mark, and it moves a written day to today', async () => {
    expect(variationText(await logged(SPREAD), 'rerun_mark', TODAY).ok).toBe(false);
    const dir = mkdtempSync(join(tmpdir(), 'kolmo-var-'));
    try {
      const store = await openDatabase({ backend: 'sqlite', path: join(dir, 'k.db') });
      const ask = (t: string) => askSeam(t, { channel: 'CVARTEST01', user: 'UVAR000001', store, now: NOW });
      expect((await ask('mark FERNWK spot 84.20 iv 31% yield 1.2%')).kind).toBe('answer');
      const text = '+1 call 90 2027-03-19 on FERNWK drift 8% asof 2027-01-02';
      expect(usesMark(text)).toBe(true);
      const a = await ask(text) as Answer;
      const j = a.json as any;
      const r = variationText({ verb: 'check', text, summary: { spot: j.market.spot, rate: j.market.rate, vol: j.view.vol, asof: j.asof } }, 'rerun_mark', TODAY);
      expect(r.ok && r.text).toBe('+1 call 90 2027-03-19 on FERNWK drift 8% asof today');
      expect((await ask('mark FERNWK spot 88 iv 31%')).kind).toBe('answer');
      const again = await ask(r.ok ? r.text : '') as Answer;
      expect((again.json as any).market.spot).toBe(88);
      await store.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('variations of a comparison', () => {
  it('vol +5 points shifts each part from its own vol, so a comparison across vols stays one', async () => {
    const text = 'compare +1 call 100 2027-03-19 iv 30% spot 100 vol 20% ; vol 30% ; drift 12%';
    const v = await vary(text, 'vol_up');
    expect(v.text).toBe('compare +1 call 100 2027-03-19 iv 30% spot 100 vol 25% ; vol 35% ; drift 12% vol 35%');
    const checks = ((await run(v.text)).json as any).checks as any[];
    expect(checks.map((c) => Math.round(c.view.vol * 100))).toEqual([25, 35, 35]);
  });

  it('spot −5% lowers every part’s spot', async () => {
    const v = await vary('compare +1 call 100 2027-03-19 iv 30% spot 100 ; drift 0% ; drift 12%', 'spot_down');
    const checks = ((await run(v.text)).json as any).checks as any[];
    expect(checks.map((c) => c.market.spot)).toEqual([95, 95, 95]);
  });

  it('other verbs have no variations', async () => {
    const r = variationText({ verb: 'touch', text: 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25%', summary: { spot: 100, rate: 0, vol: 0.25 } }, 'spot_up', TODAY);
    expect(r.ok).toBe(false);
  });
});

describe('the buttons', () => {
  it('a check gets the variations, edit and delete; re-run on a mark only with a mark; post only when private', async () => {
    const ids = (b: ReturnType<typeof answerActions>) => b.elements.map((e) => (e as { action_id: string }).action_id);
    expect(ids(answerActions({ number: 3, verb: 'check', usedMark: false, private: false }))).toEqual([
      'kolmo_vary_spot_down',
      'kolmo_vary_spot_up',
      'kolmo_vary_vol_down',
      'kolmo_vary_vol_up',
      'kolmo_vary_drift_rate',
      'kolmo_edit',
      'kolmo_delete',
    ]);
    expect(ids(answerActions({ number: 3, verb: 'compare', usedMark: true, private: true }))).toContain('kolmo_rerun_mark');
    expect(ids(answerActions({ number: 3, verb: 'compare', usedMark: true, private: true }))).toContain('kolmo_post');
    expect(ids(answerActions({ number: 3, verb: 'touch', usedMark: false, private: false }))).toEqual(['kolmo_delete']);
    for (const e of answerActions({ number: 3, verb: 'check', usedMark: true, private: true }).elements) {
      const b = e as { value: string; text: { text: string } };
      expect(parseCheckKey(b.value)).toBe(3);
      expect(b.text.text.length).toBeLessThanOrEqual(75);
    }
  });

  it('a button’s value is only ever a check number', async () => {
    expect(parseCheckKey(checkKey(17))).toBe(17);
    for (const junk of ['17', 'n0', 'n-1', 'n1e3', 'n17 ', 'nCDESK:17', 'n12345678901', 17, null, undefined, { n: 17 }]) expect(parseCheckKey(junk)).toBeUndefined();
    expect(variationOfAction(VARY_ACTIONS.vol_up)).toBe('vol_up');
    expect(variationOfAction('kolmo_delete')).toBeUndefined();
  });
});
