/**
 * One contract for the async store, run against both backends: SQLite (a file in a temporary
 * folder) and PostgreSQL (a fresh database on the run's real server, see test/setup/postgres.ts).
 * Whatever a shell can observe must be the same on both: numbering, channel isolation, marks,
 * limits, refusals and their words, error codes.
 *
 * What the checks rest on (outside this project): the behaviour a user expects of a numbered
 * per-channel log (common practice): numbers start at 1 in each channel, increase by one without
 * gaps, also when several writers append at once, and a channel never sees another's entries;
 * byte-wise ("C") ordering of symbols, as SQLite's default BINARY collation sorts (SQLite
 * documentation, "Collating Sequences").
 */
import { afterEach, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { LIMITS, StoreError, openDatabase, type AsyncStore, type DatabaseChoice, type LogEntryInput, type QueuedRequest } from '../../src/store/store.js';
import { freshDatabase } from '../support/pg.js';

interface Backend {
  name: 'sqlite' | 'postgres';
  /** a new, empty place for a log */
  place(): Promise<DatabaseChoice>;
}

const cleanups: Array<() => Promise<void> | void> = [];
const opened: AsyncStore[] = [];
afterEach(async () => {
  for (const s of opened.splice(0)) await s.close();
  for (const c of cleanups.splice(0).reverse()) await c();
});

const backends: Backend[] = [
  {
    name: 'sqlite',
    place: async () => {
      const dir = mkdtempSync(join(tmpdir(), 'kolmo-contract-'));
      cleanups.push(() => rmSync(dir, { recursive: true, force: true }));
      return { backend: 'sqlite', path: join(dir, 'log.db') };
    },
  },
  {
    name: 'postgres',
    place: async () => {
      const db = await freshDatabase('contract');
      cleanups.push(db.drop);
      return { backend: 'postgres', url: db.url };
    },
  },
];

let seq = 0;
function input(channel: string, over: Partial<LogEntryInput> = {}): LogEntryInput {
  seq++;
  return {
    channel,
    user: 'U0MAYA',
    at: '2027-01-04T15:30:00.000Z',
    verb: 'check',
    text: `check +1 call 105 2027-03-19 @3.10 spot 100 on FERNWK #${seq}`,
    normalized: JSON.stringify({ verb: 'check', seq }),
    summary: { position: 'long 1 call 105', probProfit: 0.42, expectedPnl: 31.5, viewEdge: 12.25 },
    ...over,
  };
}

/** The StoreError a promise rejects with (fails the test if it resolves or rejects with something else). */
async function storeError(p: Promise<unknown>): Promise<StoreError> {
  try {
    await p;
  } catch (e) {
    expect(e).toBeInstanceOf(StoreError);
    return e as StoreError;
  }
  throw new Error('expected a StoreError, the call succeeded');
}

describe.each(backends)('the store contract on $name', (backend) => {
  async function open(place?: DatabaseChoice): Promise<{ s: AsyncStore; place: DatabaseChoice }> {
    const p = place ?? (await backend.place());
    const s = await openDatabase(p);
    opened.push(s);
    return { s, place: p };
  }

  it('numbers each channel from 1 without gaps and returns what was stored', async () => {
    const { s } = await open();
    expect(s.backend).toBe(backend.name);
    const a1 = await s.appendCheck(input('C0DESKA'));
    const a2 = await s.appendCheck(input('C0DESKA'));
    const b1 = await s.appendCheck(input('C0DESKB'));
    const a3 = await s.appendCheck(input('C0DESKA'));
    expect([a1.number, a2.number, a3.number, b1.number]).toEqual([1, 2, 3, 1]);
    expect(a1.delivered).toBe('pending');
    expect(a1.threadTs).toBeNull();
    const back = await s.get('C0DESKA', 2);
    expect(back).toEqual(a2);
    expect(back?.summary.probProfit).toBe(0.42);
  });

  it('keeps entries across close and reopen, and numbering continues', async () => {
    const first = await open();
    await first.s.appendCheck(input('C0DESKA'));
    await first.s.appendCheck(input('C0DESKA'));
    await first.s.close();
    const { s } = await open(first.place);
    expect((await s.get('C0DESKA', 2))?.number).toBe(2);
    expect((await s.appendCheck(input('C0DESKA'))).number).toBe(3);
  });

  it('records the thread, permalink and delivery state of an entry', async () => {
    const { s } = await open();
    await s.appendCheck(input('C0DESKA'));
    expect(await s.setThread('C0DESKA', 1, '1799999999.000100', 'https://example.invalid/archives/C0DESKA/p1799999999000100')).toBe(true);
    expect(await s.setDelivery('C0DESKA', 1, 'delivered')).toBe(true);
    let e = (await s.get('C0DESKA', 1))!;
    expect([e.threadTs, e.delivered]).toEqual(['1799999999.000100', 'delivered']);
    expect(e.permalink).toContain('p1799999999000100');
    await s.setThread('C0DESKA', 1, '1799999999.000200'); // permalink left out keeps the stored one
    e = (await s.get('C0DESKA', 1))!;
    expect(e.threadTs).toBe('1799999999.000200');
    expect(e.permalink).toContain('p1799999999000100');
    await s.setThread('C0DESKA', 1, '1799999999.000300', null); // null clears it
    expect((await s.get('C0DESKA', 1))!.permalink).toBeNull();
    expect(await s.setDelivery('C0DESKA', 1, 'undelivered')).toBe(true);
    expect((await s.get('C0DESKA', 1))!.delivered).toBe('undelivered');
    expect(await s.setThread('C0DESKA', 9, '1.2')).toBe(false);
    expect(await s.setDelivery('C0DESKA', 9, 'delivered')).toBe(false);
  });

  it('buttons and my desk: a variation records its origin, a tombstone keeps its number and drops its figures', async () => {
    const { s } = await open();
    await s.appendCheck(input('C0DESKA'));
    await s.appendCheck(input('C0DESKA'));
    await s.appendCheck(input('C0DESKA'));
    expect(await s.setVariedFrom('C0DESKA', 2, 1)).toBe(true);
    expect(await s.setVariedFrom('C0DESKB', 2, 1)).toBe(false);
    expect((await s.get('C0DESKA', 2))?.variedFrom).toBe(1);
    expect((await s.get('C0DESKA', 1))?.variedFrom).toBeNull();
    const posted = { channel: 'C0DESKA', ts: ['1799999999.000100', '1799999999.000101'], files: ['F0CHART1'] };
    expect(await s.setPosted('C0DESKA', 2, posted)).toBe(true);
    expect((await s.get('C0DESKA', 2))?.posted).toEqual(posted);
    expect((await storeError(s.setPosted('C0DESKA', 2, { channel: 'C0DESKA', ts: ['x'.repeat(65)], files: [] }))).code).toBe('invalid');
    expect(await s.tombstone('C0DESKA', 2, '2027-01-04T16:00:00.000Z')).toBe(true);
    expect(await s.tombstone('C0DESKA', 2, '2027-01-04T16:00:01.000Z')).toBe(false);
    expect(await s.tombstone('C0DESKA', 9, '2027-01-04T16:00:01.000Z')).toBe(false);
    const t = (await s.get('C0DESKA', 2))!;
    expect(t).toMatchObject({ number: 2, text: '', deletedAt: '2027-01-04T16:00:00.000Z', posted: null, permalink: null, variedFrom: 1 });
    expect(t.summary).toEqual({ position: 'deleted by the asker', deleted: true });
    // numbers stay contiguous: the next check is #4, and the listing still has #2
    expect((await s.appendCheck(input('C0DESKA'))).number).toBe(4);
    expect((await s.recent('C0DESKA', 10)).map((e) => e.number)).toEqual([4, 3, 2, 1]);
    expect(await s.setPosted('C0DESKA', 2, posted)).toBe(false);
  });

  it("a person's checks across channels, newest first, without tombstones; personal defaults stored whole", async () => {
    const { s } = await open();
    await s.appendCheck(input('C0DESKA', { at: '2027-01-04T10:00:00.000Z' }));
    await s.appendCheck(input('C0DESKB', { at: '2027-01-04T11:00:00.000Z' }));
    await s.appendCheck(input('C0DESKA', { at: '2027-01-04T12:00:00.000Z', user: 'U0OTHER' }));
    await s.appendCheck(input('im:U0MAYA', { at: '2027-01-04T13:00:00.000Z' }));
    await s.tombstone('C0DESKA', 1, '2027-01-04T14:00:00.000Z');
    expect((await s.recentOfUser('U0MAYA', 20)).map((e) => [e.channel, e.number])).toEqual([
      ['im:U0MAYA', 1],
      ['C0DESKB', 1],
    ]);
    expect(await s.recentOfUser('U0MAYA', 1)).toHaveLength(1);
    expect(await s.recentOfUser('U0NOBODY', 20)).toEqual([]);
    expect(await s.getDefaults('U0MAYA')).toEqual({});
    await s.putDefaults('U0MAYA', { rate: 0.045, mult: 10, horizon: '30d' }, '2027-01-04T15:00:00.000Z');
    expect(await s.getDefaults('U0MAYA')).toEqual({ rate: 0.045, mult: 10, horizon: '30d' });
    await s.putDefaults('U0MAYA', { yield: 0.01 }, '2027-01-04T15:01:00.000Z');
    expect(await s.getDefaults('U0MAYA')).toEqual({ yield: 0.01 });
    expect(await s.getDefaults('U0OTHER')).toEqual({});
    expect((await storeError(s.putDefaults('U0MAYA', { mult: 2.5 }, '2027-01-04T15:02:00.000Z'))).code).toBe('invalid');
    expect((await storeError(s.putDefaults('U0MAYA', { horizon: '30 days' }, '2027-01-04T15:02:00.000Z'))).code).toBe('invalid');
    await s.putDefaults('U0MAYA', {}, '2027-01-04T15:03:00.000Z');
    expect(await s.getDefaults('U0MAYA')).toEqual({});
  });

  it('recent returns the newest first and clamps n; get of a number that cannot exist is absent', async () => {
    const { s } = await open();
    for (let i = 0; i < 7; i++) await s.appendCheck(input('C0DESKA'));
    const nums = async (n: number) => (await s.recent('C0DESKA', n)).map((e) => e.number);
    expect(await nums(3)).toEqual([7, 6, 5]);
    expect(await nums(50)).toEqual([7, 6, 5, 4, 3, 2, 1]);
    expect(await nums(2.9)).toEqual([7, 6]);
    for (const n of [0, -4, Number.NaN]) expect(await nums(n)).toEqual([]);
    expect(await nums(Number.POSITIVE_INFINITY)).toHaveLength(7);
    expect(await s.recent('C0NOBODY', 10)).toEqual([]);
    for (const n of [0, -1, 1.5, Number.NaN, Number.POSITIVE_INFINITY, 8, 2 ** 40]) expect(await s.get('C0DESKA', n)).toBeUndefined();
  });

  it("another channel's number looks exactly like a number that does not exist; ids are compared exactly", async () => {
    const { s } = await open();
    for (let i = 0; i < 5; i++) await s.appendCheck(input('C0DESKA'));
    await s.appendCheck(input('C0DESKB'));
    expect(await s.get('C0DESKB', 3)).toBeUndefined();
    expect((await s.recent('C0DESKB', 50)).map((e) => [e.channel, e.number])).toEqual([['C0DESKB', 1]]);
    expect(await s.setThread('C0DESKB', 4, '1.1')).toBe(false);
    expect(await s.setDelivery('C0DESKB', 4, 'delivered')).toBe(false);
    expect((await s.get('C0DESKA', 4))!.threadTs).toBeNull();
    expect(await s.get('c0deska', 1)).toBeUndefined();
    expect(await s.get('C0DESK%', 1)).toBeUndefined();
    expect(await s.recent('C0DESK_', 5)).toEqual([]);
    const odd = "C0'; DROP TABLE checks; --";
    expect((await s.appendCheck(input(odd))).number).toBe(1);
    expect((await s.get(odd, 1))?.channel).toBe(odd);
    expect((await s.get('C0DESKA', 5))?.number).toBe(5);
  });

  it('marks: stored in upper case, replaced as a whole, listed by symbol byte order, per channel', async () => {
    const { s } = await open();
    await s.putMark({ channel: 'C0DESKA', symbol: 'fernwk', spot: 84.2, iv: 0.31, yield: 0.012, user: 'U0MAYA', at: '2027-01-04T15:00:00Z' });
    await s.putMark({ channel: 'C0DESKA', symbol: 'BRIXLO', spot: 12.5, rate: 0.045, user: 'U0MAYA', at: '2027-01-04T15:01:00Z' });
    await s.putMark({ channel: 'C0DESKA', symbol: 'BRIX_LO', spot: 1, user: 'U0MAYA', at: '2027-01-04T15:01:00Z' });
    expect(await s.getMark('C0DESKA', 'FERNWK')).toEqual({
      channel: 'C0DESKA', symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, user: 'U0MAYA', at: '2027-01-04T15:00:00Z',
    });
    expect((await s.getMark('C0DESKA', 'Fernwk'))?.spot).toBe(84.2);
    await s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 85, user: 'U0OREN', at: '2027-01-05T15:00:00Z' });
    const m = (await s.getMark('C0DESKA', 'FERNWK'))!;
    expect([m.spot, m.iv, m.user]).toEqual([85, undefined, 'U0OREN']);
    // "_" (0x5F) sorts after "L" (0x4C) byte-wise; a language collation would ignore it
    expect((await s.listMarks('C0DESKA')).map((x) => x.symbol)).toEqual(['BRIXLO', 'BRIX_LO', 'FERNWK']);
    expect(await s.getMark('C0DESKB', 'FERNWK')).toBeUndefined();
    expect(await s.listMarks('C0DESKB')).toEqual([]);
  });

  it("a mark's view (vol, drift and its uncertainty) round-trips; an old mark has none", async () => {
    const { s } = await open();
    const at = '2027-01-04T15:00:00Z';
    await s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 84.2, vol: 0.28, drift: 0.09, driftSe: 0.06, user: 'U0MAYA', at });
    expect(await s.getMark('C0DESKA', 'FERNWK')).toEqual({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 84.2, vol: 0.28, drift: 0.09, driftSe: 0.06, user: 'U0MAYA', at });
    await s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 85, user: 'U0MAYA', at });
    expect(await s.getMark('C0DESKA', 'FERNWK')).toEqual({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 85, user: 'U0MAYA', at });
    expect((await storeError(s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', driftSe: Number.NaN, user: 'U0MAYA', at }))).code).toBe('invalid');
  });

  it('price histories: replaced whole, kept in order, per channel and symbol (upper case), refused when bad', async () => {
    const { s, place } = await open();
    const dated = Array.from({ length: 300 }, (_, i) => ({ date: new Date(Date.UTC(2026, 0, 2 + i)).toISOString().slice(0, 10), close: 80 + Math.sin(i) }));
    await s.putCloses('C0DESKA', 'fernwk', dated);
    expect(await s.getCloses('C0DESKA', 'FERNWK')).toEqual(dated);
    await s.putCloses('C0DESKA', 'FERNWK', [{ close: 1 }, { close: 2.5 }]);
    expect(await s.getCloses('C0DESKA', 'Fernwk')).toEqual([{ close: 1 }, { close: 2.5 }]);
    expect(await s.getCloses('C0DESKB', 'FERNWK')).toEqual([]);
    expect(await s.getCloses('C0DESKA', 'QUILLOP')).toEqual([]);
    for (const bad of [[{ close: 0 }], [{ close: Number.NaN }], [{ date: '5 Jan', close: 1 }]]) {
      expect((await storeError(s.putCloses('C0DESKA', 'FERNWK', bad))).code).toBe('invalid');
    }
    expect((await storeError(s.putCloses('C0DESKA', 'FERNWK', Array.from({ length: LIMITS.closesMax + 1 }, () => ({ close: 1 }))))).code).toBe('invalid');
    // a refused history leaves the stored one as it was, also after reopening
    await s.close();
    const again = await openDatabase(place);
    opened.push(again);
    expect(await again.getCloses('C0DESKA', 'FERNWK')).toEqual([{ close: 1 }, { close: 2.5 }]);
    await again.putCloses('C0DESKA', 'FERNWK', []);
    expect(await again.getCloses('C0DESKA', 'FERNWK')).toEqual([]);
  });

  it('refuses bad marks and bad entries with the same StoreError words, storing nothing and using up no number', async () => {
    const { s } = await open();
    const base = { channel: 'C0DESKA', symbol: 'FERNWK', user: 'U0MAYA', at: '2027-01-04T15:00:00Z' };
    for (const bad of [{ spot: Number.NaN }, { iv: Number.POSITIVE_INFINITY }, { rate: '4.5%' as unknown as number }]) {
      const e = await storeError(s.putMark({ ...base, ...bad }));
      expect([e.code, e.op]).toEqual(['invalid', 'write']);
      expect(e.message).toMatch(/must be a finite number/);
    }
    expect((await storeError(s.putMark({ ...base, symbol: '  ' }))).message).toMatch(/symbol is missing/);
    expect((await storeError(s.putMark({ ...base, at: 'yesterday' }))).message).toMatch(/ISO date-time/);
    expect(await s.listMarks('C0DESKA')).toEqual([]);
    await s.appendCheck(input('C0DESKA'));
    const big = JSON.stringify({ pad: 'x'.repeat(LIMITS.normalizedBytes) });
    expect((await storeError(s.appendCheck(input('C0DESKA', { normalized: big })))).message).toMatch(/^the log could not be written: the request is too large to store/);
    expect((await storeError(s.appendCheck(input('C0DESKA', { normalized: '{not json' })))).code).toBe('invalid');
    expect((await storeError(s.appendCheck(input('')))).message).toMatch(/channel is missing/);
    expect((await storeError(s.appendCheck(input('C'.repeat(LIMITS.idChars + 1))))).message).toMatch(/longer than/);
    expect((await storeError(s.appendCheck(input('C0DE\u0000SKA')))).message).toMatch(/NUL/);
    expect((await storeError(s.appendCheck(input('C0DESKA', { user: '' })))).message).toMatch(/user is missing/);
    expect((await s.appendCheck(input('C0DESKA'))).number).toBe(2);
  });

  it('cuts long request text on a character boundary, keeps NUL out, drops non-finite summary numbers', async () => {
    const { s } = await open();
    const long = 'check ' + '€'.repeat(2000); // "€" is 3 bytes in UTF-8
    const e = await s.appendCheck(input('C0DESKA', { text: long }));
    const stored = (await s.get('C0DESKA', e.number))!.text;
    expect(Buffer.byteLength(stored, 'utf8')).toBeLessThanOrEqual(LIMITS.textBytes);
    expect(stored.endsWith('…')).toBe(true);
    expect(long.startsWith(stored.slice(0, -1))).toBe(true);
    const nul = await s.appendCheck(input('C0DESKA', { text: 'check\u0000 spot 100' }));
    expect((await s.get('C0DESKA', nul.number))!.text).toBe('check\uFFFD spot 100');
    const f = await s.appendCheck(input('C0DESKA', { summary: { position: 'short put', probProfit: Number.NaN, expectedPnl: -Infinity, viewEdge: 3 } }));
    expect((await s.get('C0DESKA', f.number))!.summary).toEqual({ position: 'short put', viewEdge: 3 });
  });

  it('counts rejected requests per channel', async () => {
    const { s } = await open();
    await s.countRejected('C0DESKA');
    await s.countRejected('C0DESKA');
    await s.countRejected('C0DESKB');
    expect([await s.rejectedCount('C0DESKA'), await s.rejectedCount('C0DESKB'), await s.rejectedCount('C0DESKC')]).toEqual([2, 1, 0]);
  });

  it('many appends at once from two connections give each channel unique numbers without gaps', async () => {
    const a = await open();
    const { s: b } = await open(a.place);
    const channels = ['C0PAR0001', 'C0PAR0002', 'C0PAR0003'];
    const jobs = Array.from({ length: 120 }, (_, i) => (i % 2 ? a.s : b).appendCheck(input(channels[i % 3], { normalized: JSON.stringify({ i }) })));
    const got = await Promise.all(jobs);
    for (const ch of channels) {
      const mine = got.filter((e) => e.channel === ch).map((e) => e.number).sort((x, y) => x - y);
      expect(mine).toEqual(Array.from({ length: 40 }, (_, k) => k + 1));
      const stored = (await a.s.recent(ch, 1000)).map((e) => JSON.parse(e.normalized).i as number).sort((x, y) => x - y);
      expect(stored).toEqual(got.filter((e) => e.channel === ch).map((e) => JSON.parse(e.normalized).i as number).sort((x, y) => x - y));
    }
  });

  it('matches a simple model over random sequences of appends and reads (fast-check)', async () => {
    const { s } = await open();
    const channels = ['C0DESKA', 'C0DESKB', 'C0DESKC'];
    const op = fc.oneof(
      fc.record({ kind: fc.constant('append' as const), ch: fc.constantFrom(...channels) }),
      fc.record({ kind: fc.constant('get' as const), ch: fc.constantFrom(...channels), n: fc.integer({ min: -2, max: 40 }) }),
      fc.record({ kind: fc.constant('recent' as const), ch: fc.constantFrom(...channels), n: fc.integer({ min: 0, max: 12 }) }),
    );
    const model = new Map<string, string[]>(channels.map((c) => [c, []]));
    let tag = 0;
    await fc.assert(
      fc.asyncProperty(fc.array(op, { maxLength: 20 }), async (ops) => {
        for (const o of ops) {
          const list = model.get(o.ch)!;
          if (o.kind === 'append') {
            const t = `t${tag++}`;
            const e = await s.appendCheck(input(o.ch, { normalized: JSON.stringify({ t }) }));
            list.push(t);
            expect(e.number).toBe(list.length);
          } else if (o.kind === 'get') {
            const e = await s.get(o.ch, o.n);
            if (o.n >= 1 && o.n <= list.length) expect(JSON.parse(e!.normalized).t).toBe(list[o.n - 1]);
            else expect(e).toBeUndefined();
          } else {
            const got = (await s.recent(o.ch, o.n)).map((e) => JSON.parse(e.normalized).t as string);
            expect(got).toEqual(list.slice(Math.max(0, list.length - o.n)).reverse());
          }
        }
      }),
      { numRuns: 25 },
    );
  });

  it('a closed store answers with a StoreError, not a raw exception; ping answers while open', async () => {
    const { s } = await open();
    await s.ping();
    await s.close();
    const e = await storeError(s.get('C0DESKA', 1));
    expect(e.code).toBe('unavailable');
    expect((await storeError(s.ping())).code).toBe('unavailable');
  });

  it('read-only: reads work, every write is refused with code "readonly"', async () => {
    const first = await open();
    await first.s.appendCheck(input('C0DESKA'));
    await first.s.close();
    const s = await openDatabase(first.place, { readonly: true });
    opened.push(s);
    expect((await s.get('C0DESKA', 1))?.number).toBe(1);
    expect((await storeError(s.appendCheck(input('C0DESKA')))).code).toBe('readonly');
    expect((await storeError(s.putMark({ channel: 'C0DESKA', symbol: 'FERNWK', spot: 1, user: 'U0MAYA', at: '2027-01-04T15:00:00Z' }))).code).toBe('readonly');
    expect((await storeError(s.countRejected('C0DESKA'))).code).toBe('readonly');
  });

  // ---- the request queue and the rate buckets ----

  const req = (key: string, channel: string, over: Partial<QueuedRequest> = {}): QueuedRequest => ({
    key,
    source: 'command',
    channel,
    user: 'U0MAYA',
    responseUrl: 'https://example.invalid/response/1',
    text: `check +1 call 105 2027-03-19 @3.10 spot 100 ${key}`,
    now: '2027-01-04T15:30:00.000Z',
    ...over,
  });
  const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

  it('queue: a key is recorded once (a re-sent delivery is refused), also after it is answered', async () => {
    const { s } = await open();
    expect(await s.accept(req('k1', 'C0Q1'))).toBe(true);
    expect(await s.accept(req('k1', 'C0Q1'))).toBe(false);
    expect(await s.accept(req('k2', 'C0Q1', { source: 'mention', threadTs: '1799999999.000100', responseUrl: undefined }))).toBe(true);
    expect(await s.depth()).toBe(2);
    const c = (await s.claim('inst-a', 10000))!;
    expect(c).toMatchObject({ key: 'k1', channel: 'C0Q1', user: 'U0MAYA', source: 'command', attempts: 1, progress: {} });
    await s.finish('k1', 'inst-a');
    expect(await s.accept(req('k1', 'C0Q1'))).toBe(false);
    // recorded as answered at once (e.g. turned away by the rate limit): caught as a re-send, never claimed
    expect(await s.accept(req('k3', 'C0Q2'), true)).toBe(true);
    expect(await s.accept(req('k3', 'C0Q2'))).toBe(false);
    const d = (await s.claim('inst-a', 10000))!;
    expect(d).toMatchObject({ key: 'k2', source: 'mention', threadTs: '1799999999.000100' });
    expect(d.responseUrl).toBeUndefined();
    expect(await s.claim('inst-a', 10000)).toBeUndefined();
    await s.finish('k2');
    expect(await s.depth()).toBe(0);
  });

  it('queue: an interactive request keeps how it is answered (its log, flat, notices, variation, preface) for whichever claimer', async () => {
    const { s } = await open();
    const interaction = { source: 'action' as const, log: 'im:U0MAYA', flat: true, tellIn: 'U0MAYA', variedFrom: 7, preface: 'Spot 5% higher than #7. Typed, it is: /kolmo check …' };
    expect(await s.accept(req('i1', 'D0MAYA', { source: 'mention', responseUrl: undefined, interaction }))).toBe(true);
    expect(await s.accept(req('i2', 'C0QI', { interaction: { source: 'form' } }))).toBe(true);
    expect((await s.claim('inst-a', 10000))?.interaction).toEqual(interaction);
    expect((await s.claim('inst-b', 10000))?.interaction).toEqual({ source: 'form' });
    await s.accept(req('i3', 'C0QJ'));
    expect((await s.claim('inst-a', 10000))?.interaction).toBeUndefined();
    // refused like any other field: an unknown source, a check number that is not one, a log that is too long
    for (const bad of [{ source: 'robot' }, { source: 'action', variedFrom: 0 }, { source: 'form', log: 'x'.repeat(300) }]) {
      expect((await storeError(s.accept(req('i4', 'C0QK', { interaction: bad as QueuedRequest['interaction'] })))).code).toBe('invalid');
    }
    expect(await s.depth()).toBe(3); // i1, i2, i3 claimed and running; nothing of the refused ones recorded
  });

  it("queue: requests are claimed in arrival order, a channel's next only after its earlier one is answered", async () => {
    const { s } = await open();
    for (const [k, ch] of [['a1', 'C0QA'], ['b1', 'C0QB'], ['a2', 'C0QA'], ['a3', 'C0QA'], ['b2', 'C0QB']]) await s.accept(req(k, ch));
    const first = await s.claim('i1', 10000);
    const second = await s.claim('i2', 10000);
    expect([first?.key, second?.key]).toEqual(['a1', 'b1']);
    expect(first!.seq).toBeLessThan(second!.seq);
    expect(await s.claim('i3', 10000)).toBeUndefined(); // a2 waits for a1, b2 for b1
    await s.finish('b1', 'i2');
    expect((await s.claim('i3', 10000))?.key).toBe('b2');
    await s.finish('a1', 'i1');
    expect((await s.claim('i1', 10000))?.key).toBe('a2');
    expect(await s.claim('i1', 10000)).toBeUndefined();
  });

  it('queue: a lease that runs out is taken over, with what was posted; the old owner can no longer finish or record', async () => {
    const { s } = await open();
    await s.accept(req('t1', 'C0QT'));
    await s.accept(req('t2', 'C0QT'));
    const mine = (await s.claim('dead', 150))!;
    expect(await s.setProgress('t1', 'dead', { rootTs: '1799999999.000500' })).toBe(true);
    expect(await s.claim('alive', 10000)).toBeUndefined(); // the lease is live, t2 waits behind t1
    await sleep(300);
    const taken = (await s.claim('alive', 10000))!;
    expect(taken.key).toBe(mine.key);
    expect(taken.attempts).toBe(2);
    expect(taken.progress).toEqual({ rootTs: '1799999999.000500' });
    expect(await s.setProgress('t1', 'dead', { answered: true })).toBe(false);
    await s.finish('t1', 'dead'); // no effect: it is not dead's any more
    expect(await s.claim('other', 10000)).toBeUndefined();
    await s.finish('t1', 'alive');
    expect((await s.claim('other', 10000))?.key).toBe('t2');
  });

  it('queue: without take-over only requests nobody holds are claimed; a lease that ran out stays its holder\'s', async () => {
    const { s } = await open();
    await s.accept(req('g1', 'C0QG'));
    await s.accept(req('g2', 'C0QH'));
    expect((await s.claim('holder', 150))?.key).toBe('g1');
    await sleep(300);
    // g1's lease ran out: not taken over, and its channel waits; g2 (nobody's) is claimed
    expect((await s.claim('back', 10000, { takeover: false }))?.key).toBe('g2');
    expect(await s.claim('back', 10000, { takeover: false })).toBeUndefined();
    // the holder can still record it (nobody took it)
    expect(await s.setProgress('g1', 'holder', { answered: true })).toBe(true);
    await s.finish('g1', 'holder');
    expect(await s.claim('back', 10000)).toBeUndefined();
  });

  it('queue: renewing keeps a lease; releasing hands the request back without counting the attempt', async () => {
    const { s } = await open();
    await s.accept(req('r1', 'C0QR'));
    await s.claim('i1', 200);
    expect(await s.renew('i1', ['r1', 'nope'], 60000)).toBe(1);
    expect(await s.renew('i2', ['r1'], 60000)).toBe(0);
    await sleep(300);
    expect(await s.claim('i2', 10000)).toBeUndefined();
    await s.release('r1', 'i1');
    const again = (await s.claim('i2', 10000))!;
    expect([again.key, again.attempts]).toEqual(['r1', 1]);
  });

  it('queue: several claimers at once take each request exactly once, each channel in order', async () => {
    const a = await open();
    const { s: b } = await open(a.place);
    const channels = Array.from({ length: 6 }, (_, i) => `C0QP${i}`);
    for (let i = 0; i < 36; i++) await a.s.accept(req(`p${i}`, channels[i % 6]));
    const taken: string[] = [];
    const running = new Set<string>();
    const worker = async (s: AsyncStore, name: string) => {
      let idle = 0;
      while (idle < 3) {
        const c = await s.claim(name, 10000);
        if (!c) {
          idle++;
          await sleep(5);
          continue;
        }
        idle = 0;
        expect(running.has(c.channel), `two requests of ${c.channel} at once`).toBe(false);
        running.add(c.channel);
        taken.push(c.key);
        await sleep(1);
        running.delete(c.channel);
        await s.finish(c.key, name);
      }
    };
    await Promise.all([worker(a.s, 'w1'), worker(b, 'w2'), worker(a.s, 'w3'), worker(b, 'w4')]);
    expect([...taken].sort()).toEqual(Array.from({ length: 36 }, (_, i) => `p${i}`).sort());
    for (let c = 0; c < 6; c++) {
      const order = taken.filter((k) => Number(k.slice(1)) % 6 === c).map((k) => Number(k.slice(1)));
      expect(order).toEqual([...order].sort((x, y) => x - y));
    }
  });

  it('queue: answered keys are pruned after the keep time, open ones never', async () => {
    const { s } = await open();
    await s.accept(req('old', 'C0QX'), true);
    await s.accept(req('open', 'C0QX'));
    await sleep(60);
    expect(await s.prune(30)).toBe(1);
    expect(await s.accept(req('old', 'C0QX'))).toBe(true); // forgotten
    expect(await s.depth()).toBe(2);
  });

  it('admit: a re-sent key takes nothing from the rate bucket, on any connection; turned-away requests are recorded answered', async () => {
    const a = await open();
    const { s: b } = await open(a.place);
    const o = { burst: 2, perMinute: 0.6, noticeEverySeconds: 3600 }; // refills one request per 100 s
    const user = { user: 'U0ADMIT1' };
    expect(await a.s.admit(req('ad1', 'C0AD1', user), o, 100)).toEqual({ kind: 'queued' });
    // the same delivery again, to this connection and to another one: duplicates, no token taken
    expect(await a.s.admit(req('ad1', 'C0AD1', user), o, 100)).toEqual({ kind: 'duplicate' });
    expect(await b.admit(req('ad1', 'C0AD1', user), o, 100)).toEqual({ kind: 'duplicate' });
    // so the second token is still there for a new request
    expect(await b.admit(req('ad2', 'C0AD1', user), o, 100)).toEqual({ kind: 'queued' });
    const refused = await a.s.admit(req('ad3', 'C0AD1', user), o, 100);
    expect(refused).toMatchObject({ kind: 'rate', rate: { ok: false, notify: true } });
    // a turned-away request is recorded answered: its re-send is a duplicate and nothing is claimed for it
    expect(await b.admit(req('ad3', 'C0AD1', user), o, 100)).toEqual({ kind: 'duplicate' });
    expect(await a.s.depth()).toBe(2);
    // the bound on the line: two open, a limit of two turns the next (of another user) away as busy
    expect(await a.s.admit(req('ad4', 'C0AD2', { user: 'U0ADMIT2' }), o, 2)).toEqual({ kind: 'busy', depth: 2 });
    expect(await a.s.admit(req('ad4', 'C0AD2', { user: 'U0ADMIT2' }), o, 3)).toEqual({ kind: 'duplicate' });
    expect(await a.s.admit(req('ad5', 'C0AD2', { user: 'U0ADMIT2' }), o, 3)).toEqual({ kind: 'queued' });
    expect((await a.s.claim('i1', 10000))?.key).toBe('ad1');
    expect((await a.s.claim('i1', 10000))?.key).toBe('ad5');
    expect(await a.s.claim('i1', 10000)).toBeUndefined();
  });

  it('admit: the same key arriving on two connections at once is recorded once and draws one token', async () => {
    const a = await open();
    const { s: b } = await open(a.place);
    const o = { burst: 3, perMinute: 0.6, noticeEverySeconds: 3600 };
    const user = { user: 'U0ADMIT3' };
    for (let k = 0; k < 3; k++) {
      const got = await Promise.all([a.s.admit(req(`race${k}`, 'C0AD3', user), o, 100), b.admit(req(`race${k}`, 'C0AD3', user), o, 100)]);
      expect(got.map((g) => g.kind).sort()).toEqual(['duplicate', 'queued']);
    }
    // three deliveries recorded, three tokens drawn: the fourth request is refused
    expect(await a.s.admit(req('race3', 'C0AD3', user), o, 100)).toMatchObject({ kind: 'rate' });
  });

  it('rate buckets: burst then refusal, one notice per period, one allowance per user across connections', async () => {
    const a = await open();
    const { s: b } = await open(a.place);
    const o = { burst: 3, perMinute: 0.6, noticeEverySeconds: 3600 }; // refills one request per 100 s
    expect([await a.s.take('U0RATE1', o), await b.take('U0RATE1', o), await a.s.take('U0RATE1', o)]).toEqual([{ ok: true }, { ok: true }, { ok: true }]);
    const d1 = await b.take('U0RATE1', o);
    expect(d1).toMatchObject({ ok: false, notify: true });
    expect(d1.ok === false && d1.retryInSeconds).toBeGreaterThan(60);
    expect(await a.s.take('U0RATE1', o)).toMatchObject({ ok: false, notify: false });
    expect(await a.s.take('U0RATE2', o)).toEqual({ ok: true }); // another user has their own
  });
});

