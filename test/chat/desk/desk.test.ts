/** My desk: the home view, the defaults modal read back, and defaults applied to requests. */
import { describe, expect, it } from 'vitest';
import { applyDefaults, defaultsView, defaultsWords, readDefaults } from '../../../src/chat/desk/defaults.js';
import { myDeskView, summaryLine, DESK_CHECKS, type DeskCheck } from '../../../src/chat/desk/view.js';
import { ask } from '../../../src/verbs/ask.js';
import type { Answer } from '../../../src/reply.js';

const NOW = new Date('2027-01-04T12:00:00Z');

function deskCheck(n: number, extra: Partial<DeskCheck> = {}): DeskCheck {
  return {
    channel: 'CDESKOPTS1',
    log: 'CDESKOPTS1',
    number: n,
    verb: 'check',
    at: new Date(NOW.getTime() - n * 60_000).toISOString(),
    summary: { position: `+2/−2 call spread 105/115 Mar 27`, probProfit: 0.4312, viewEdge: 123.4 },
    permalink: `https://fernwick-desk.invalid/archives/CDESKOPTS1/p179876160000000${n}`,
    private: false,
    ...extra,
  };
}

describe('my desk', () => {
  it('shows at most the last 20 checks, each linked with its summary and a re-run button keyed by log and number', async () => {
    const checks = Array.from({ length: 25 }, (_, i) => deskCheck(i + 1));
    const v = myDeskView({ checks, marks: [{ channel: 'CDESKOPTS1', marks: [{ symbol: 'FERNWK', spot: 84.2, iv: 0.31, at: NOW.toISOString() }] }], defaults: { rate: 0.045, mult: 10 }, now: NOW });
    expect(v.type).toBe('home');
    expect(v.blocks.length).toBeLessThanOrEqual(100);
    const rows = v.blocks.filter((b) => b.type === 'section' && (b as any).accessory?.action_id === 'kolmo_desk_rerun');
    expect(rows).toHaveLength(DESK_CHECKS);
    expect((rows[0] as any).text.text).toBe('<https://fernwick-desk.invalid/archives/CDESKOPTS1/p1798761600000001|#1> in <#CDESKOPTS1> · +2/−2 call spread 105/115 Mar 27 · chance of profit 43.1% · view edge +123.40 · 1 min ago');
    expect((rows[0] as any).accessory.value).toBe('CDESKOPTS1:n1');
    const text = JSON.stringify(v.blocks);
    expect(text).toContain('*FERNWK* spot 84.2, iv 31%');
    expect(text).toContain('rate 4.5%, mult 10');
  });

  it('a private check says where it is; a link that is not plain https is not linked; mrkdwn in a summary is escaped', async () => {
    const v = myDeskView({
      checks: [deskCheck(1, { private: true, channel: 'DTRADERAA1', log: 'user:UTRADERAA1', permalink: 'javascript:alert(1)', summary: { position: '<!channel> & co' } })],
      marks: [],
      defaults: {},
      now: NOW,
    });
    const row = JSON.stringify(v.blocks);
    expect(row).toContain('#1 in your messages with Kolmo');
    expect(row).not.toContain('javascript');
    expect(row).toContain('&lt;!channel&gt; &amp; co');
    expect(row).toContain('My defaults:* none');
  });

  it('summary lines of other verbs', async () => {
    expect(summaryLine({ verb: 'touch', summary: { position: 'touch 120 by 2027-03-19', probTouch: 0.25 } })).toBe('touch 120 by 2027-03-19 · touch 25.0%');
  });
});

describe('personal defaults', () => {
  it('the modal reads back what it shows; bad values are refused per field', async () => {
    const view = defaultsView({ rate: 0.045, yield: 0.012, mult: 10, horizon: '30d' });
    const state: Record<string, Record<string, { value?: string | null }>> = {};
    for (const b of view.blocks) if (b.type === 'input') state[b.block_id!] = { v: { value: ((b as any).element as any).initial_value ?? null } };
    const r = readDefaults(state);
    expect(r).toEqual({ ok: true, defaults: { rate: 0.045, yield: 0.012, mult: 10, horizon: '30d' } });
    const bad = readDefaults({ rate: { v: { value: '450' } }, mult: { v: { value: '2.5' } }, horizon: { v: { value: '30 days' } }, yield: { v: { value: '' } } });
    expect(bad.ok).toBe(false);
    if (!bad.ok) expect(Object.keys(bad.errors).sort()).toEqual(['horizon', 'mult', 'rate']);
    expect(readDefaults({})).toEqual({ ok: true, defaults: {} });
    expect(defaultsWords({ rate: 0.045, horizon: '3m' })).toBe('rate 4.5%, horizon 3m');
  });

  it('a default fills only what the request leaves out, and the engine uses it', async () => {
    const d = { rate: 0.045, yield: 0.01, mult: 10 };
    const a = applyDefaults('+1 call 100 2027-03-19 iv 30% spot 100 rate 3%', d, '2027-01-04');
    expect(a.text).toBe('+1 call 100 2027-03-19 iv 30% spot 100 rate 3% yield 1% mult 10');
    expect(a.used).toEqual(['your default yield 1%', 'your default mult 10']);
    const r = (await ask(a.text, { channel: 'CDEFTEST01', user: 'U1', store: null, now: NOW })) as Answer;
    expect((r.json as any).market).toMatchObject({ rate: 0.03, yield: 0.01 });
    // what the mark supplies is left to the mark
    const m = applyDefaults('+1 call 90 3m on FERNWK', { rate: 0.045, yield: 0.02 }, '2027-01-04', () => new Set(['yield']));
    expect(m.text).toBe('+1 call 90 3m on FERNWK rate 4.5%');
    // verbs without these terms are unchanged
    expect(applyDefaults('log 5', d, '2027-01-04')).toEqual({ text: 'log 5', used: [] });
    expect(applyDefaults('iv call 105 2027-03-19 price 3.10 spot 100', d, '2027-01-04').text).toBe('iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1%');
  });

  it('a default horizon applies only on or before the earliest expiry', async () => {
    expect(applyDefaults('+1 call 100 2027-03-19 iv 30% spot 100', { horizon: '30d' }, '2027-01-04').text).toBe('+1 call 100 2027-03-19 iv 30% spot 100 horizon 30d');
    expect(applyDefaults('+1 call 100 2027-01-20 iv 30% spot 100', { horizon: '30d' }, '2027-01-04').used).toEqual([]);
    expect(applyDefaults('+1 call 100 6w iv 30% spot 100 horizon 2027-01-10', { horizon: '30d' }, '2027-01-04').used).toEqual([]);
  });

  it('a comparison takes the defaults in its first part, which the others inherit', async () => {
    const a = applyDefaults('compare +1 call 100 2027-03-19 iv 30% spot 100 ; drift 0% ; drift 12%', { rate: 0.045 }, '2027-01-04');
    expect(a.text).toBe('compare +1 call 100 2027-03-19 iv 30% spot 100 rate 4.5% ; drift 0% ; drift 12%');
    const r = (await ask(a.text, { channel: 'CDEFTEST01', user: 'U1', store: null, now: NOW })) as Answer;
    expect(((r.json as any).checks as any[]).map((c) => c.market.rate)).toEqual([0.045, 0.045, 0.045]);
  });
});
