/**
 * The channel's log through the engine seam (ask) on a real SQLite file: numbering, what is
 * logged, `log [N]`, isolation between channels, thread links.
 *
 * What the checks rest on: the behaviour a user expects of a numbered per-channel log (common
 * practice: numbers 1, 2, … per channel without gaps, newest first in a listing, a channel never
 * sees another's entries), and the rule that a number of another channel is answered
 * exactly like one that does not exist. The figures in a listing are compared with the answers
 * the same requests got (an identity: the log shows what was answered).
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { linkMessages } from '../../src/chat/deliver.js';
import { pct } from '../../src/report/format.js';
import { SPREAD, answered, ask, at, desk, numbersIn, rejected, type Desk } from './helpers.js';

let d: Desk;
beforeEach(async () => {
  d = await desk();
});
afterEach(() => d.close());

const PUT = '-1 put 95 2027-03-19 @2.40 iv 33% spot 100 rate 4.5% drift 6% asof 2027-01-04';
const TOUCH = 'touch 120 by 2027-03-19 spot 100 drift 8% vol 25% asof 2027-01-04';
const IV = 'iv call 105 2027-03-19 price 3.10 spot 100 rate 4.5% yield 1% asof 2027-01-04';

describe('numbering and what is logged', () => {
  it('check, compare, iv and touch take the next number of their channel; help, log, mark and rejected requests take none', async () => {
    const s = d.store;
    expect(answered(await ask(s, SPREAD)).logNumber).toBe(1);
    expect(answered(await ask(s, 'help')).logNumber).toBeUndefined();
    expect(answered(await ask(s, 'mark FERNWK spot 84.20 iv 31%')).logNumber).toBeUndefined();
    expect(answered(await ask(s, 'mark')).logNumber).toBeUndefined();
    expect(answered(await ask(s, 'log')).logNumber).toBeUndefined();
    rejected(await ask(s, '+2 call 105 2027-03-19 vol 0.25'));
    expect(answered(await ask(s, `compare ${SPREAD} ; drift 0%`)).logNumber).toBe(2);
    expect(answered(await ask(s, IV)).logNumber).toBe(3);
    expect(answered(await ask(s, TOUCH)).logNumber).toBe(4);
    expect(answered(await ask(s, 'again 1')).logNumber).toBe(5);
    expect((await s.recent('C0DESKA', 100)).map((e) => e.number)).toEqual([5, 4, 3, 2, 1]);
    expect((await s.recent('C0DESKA', 100)).map((e) => e.verb)).toEqual(['check', 'touch', 'iv', 'compare', 'check']);
    expect(await s.rejectedCount('C0DESKA')).toBe(1);
    // a request refused after reading (no such check) counts as rejected too, and takes no number
    rejected(await ask(s, 'again 99'));
    expect(await s.rejectedCount('C0DESKA')).toBe(2);
    expect(answered(await ask(s, TOUCH)).logNumber).toBe(6);
  });

  it('stores who, when, the request as typed, the parsed request and the figures of the answer', async () => {
    const a = answered(await ask(d.store, SPREAD, { user: 'U0BOB', now: at(2) }));
    const e = (await d.store.get('C0DESKA', a.logNumber!))!;
    expect(e.user).toBe('U0BOB');
    expect(e.at).toBe(at(2).toISOString());
    expect(e.text).toBe(SPREAD);
    expect(JSON.parse(e.normalized)).toMatchObject({ verb: 'check', terms: { spot: 100, drift: 0.09 } });
    const o = (a.json as { outcome: { probProfit: number; expectedPnl: number; viewEdge: number } }).outcome;
    expect(e.summary).toMatchObject({ probProfit: o.probProfit, expectedPnl: o.expectedPnl, viewEdge: o.viewEdge, spot: 100, asof: '2027-01-04' });
  });
});

describe('log [N]', () => {
  it('lists the last N of the channel, newest first, with who, when, the position and the figures answered at the time', async () => {
    const s = d.store;
    const a1 = answered(await ask(s, SPREAD, { user: 'U0ALICE', now: at(0) }));
    const a2 = answered(await ask(s, PUT, { user: 'U0BOB', now: at(1) }));
    const a3 = answered(await ask(s, SPREAD.replace('drift 9%', 'drift 2%'), { user: 'U0CAROL', now: at(2) }));
    const all = answered(await ask(s, 'log'));
    expect(all.ephemeral).toBe(true);
    expect(all.headline).toBe('');
    const nums = (all.json.entries as { number: number }[]).map((e) => e.number);
    expect(nums).toEqual([3, 2, 1]);
    const lines = all.text.split('\n');
    const row = (n: number) => lines.find((l) => l.startsWith(`#${n} `))!;
    expect(lines.indexOf(row(3))).toBeLessThan(lines.indexOf(row(2)));
    expect(lines.indexOf(row(2))).toBeLessThan(lines.indexOf(row(1)));
    for (const [n, a, who, when] of [
      [1, a1, 'U0ALICE', '2027-01-04 14:00'],
      [2, a2, 'U0BOB', '2027-01-04 15:00'],
      [3, a3, 'U0CAROL', '2027-01-04 16:00'],
    ] as const) {
      expect(row(n)).toContain(who);
      expect(row(n)).toContain(when);
      expect(row(n)).toContain(pct((a.json as { outcome: { probProfit: number } }).outcome.probProfit));
    }
    // the position in words on the line under each entry
    expect(lines[lines.indexOf(row(2)) + 1]).toContain('short 1 put 95');
    expect(lines[lines.indexOf(row(1)) + 1]).toContain('call spread 105/115');
    expect(Math.max(...lines.slice(0, 8).map((l) => [...l].length))).toBeLessThanOrEqual(72);
    const two = answered(await ask(s, 'log 2'));
    expect((two.json.entries as { number: number }[]).map((e) => e.number)).toEqual([3, 2]);
    expect(numbersIn(all.json).every(Number.isFinite)).toBe(true);
  });

  it('an empty log says so', async () => {
    const r = answered(await ask(d.store, 'log'));
    expect(r.text).toMatch(/no checks/i);
    expect(r.json.entries).toEqual([]);
  });

  it('in a workspace the thread links come apart (Answer.links) and render as mrkdwn links; outside one they are lines of the text', async () => {
    const s = d.store;
    answered(await ask(s, SPREAD));
    answered(await ask(s, PUT));
    await s.setThread('C0DESKA', 1, '1700000000.000100', 'https://desk.example.test/archives/C0DESKA/p1700000000000100');
    await s.setThread('C0DESKA', 2, '1700000000.000200', 'javascript:alert(1)');
    const ws = answered(await ask(s, 'log', { inWorkspace: true }));
    expect(ws.links).toEqual([{ label: '#1', url: 'https://desk.example.test/archives/C0DESKA/p1700000000000100' }]);
    expect(ws.text).not.toContain('https://');
    const msgs = linkMessages(ws.links);
    expect(JSON.stringify(msgs[0].blocks)).toContain('<https://desk.example.test/archives/C0DESKA/p1700000000000100|#1>');
    const local = answered(await ask(s, 'log', { inWorkspace: false }));
    expect(local.links).toBeUndefined();
    expect(local.text).toContain('#1 https://desk.example.test/archives/C0DESKA/p1700000000000100');
    expect(local.text).not.toContain('javascript:');
  });

  it('linkMessages drops addresses that are not plain http(s) links', async () => {
    expect(linkMessages([{ label: '#1', url: 'https://a.test/x|y' }, { label: '#2', url: 'ftp://a.test' }])).toEqual([]);
    expect(linkMessages(undefined)).toEqual([]);
  });
});

describe('isolation between channels', () => {
  it('a channel sees only its own entries; another channel\'s number is answered exactly like a number that does not exist', async () => {
    const s = d.store;
    for (let i = 0; i < 3; i++) answered(await ask(s, SPREAD.replace('drift 9%', `drift 1${i}%`), { channel: 'C0DESKA' }));
    expect(answered(await ask(s, PUT, { channel: 'C0DESKB' })).logNumber).toBe(1);

    const fromB = rejected(await ask(s, 'again 3', { channel: 'C0DESKB' }));
    const fromEmpty = rejected(await ask(s, 'again 3', { channel: 'C0DESKC' }));
    expect(fromB.message).toContain('no check #3 in this channel');
    expect(fromB).toEqual(fromEmpty);
    expect(rejected(await ask(s, 'again 999', { channel: 'C0DESKA' })).message).toContain('no check #999 in this channel');

    const logB = answered(await ask(s, 'log 100', { channel: 'C0DESKB' }));
    expect((logB.json.entries as unknown[]).length).toBe(1);
    const seen = JSON.stringify(logB);
    for (const word of ['drift 10%', 'drift 11%', 'drift 12%', 'call 105']) expect(seen).not.toContain(word);
    // B's own number 1 reruns B's put, not A's spread
    const againB = answered(await ask(s, 'again 1', { channel: 'C0DESKB' }));
    expect(againB.text).toContain('short 1 put 95');
    expect(againB.logNumber).toBe(2);
  });

  it('marks are per channel too', async () => {
    const s = d.store;
    answered(await ask(s, 'mark FERNWK spot 84.20 iv 31%', { channel: 'C0DESKA' }));
    const r = rejected(await ask(s, '+1 call 90 2027-03-19 on FERNWK asof 2027-01-04', { channel: 'C0DESKB' }));
    expect(r.message).toContain('no mark for FERNWK in this channel');
    expect(answered(await ask(s, 'mark', { channel: 'C0DESKB' })).json.marks).toEqual([]);
  });
});
