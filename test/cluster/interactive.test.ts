/**
 * The interactive side (buttons, my desk, the check form, direct messages) on three instances of
 * the real app sharing one real PostgreSQL database, against the loopback fake Web API, with
 * correctly signed payloads. A load balancer sends each payload to any instance, and the platform
 * re-sends a payload it thinks was not acknowledged (common practice), possibly to another one.
 *
 * - a button pressed on one instance and the same payload replayed to another: answered once;
 * - my desk opened on another instance lists the checks logged through the first;
 * - a form submission and a direct message are logged in the shared database;
 * - the instance answering a button press is killed with SIGKILL in the middle of its answer:
 *   another takes the request over and posts only the rest (the chart), the check logged once;
 * in Socket Mode (two instances, each on its own connection): a press delivered again over the
 * other connection is answered once, and a direct message is logged in the shared database;
 * and on the embedded SQLite log, one instance: a press acknowledged just before a SIGKILL is
 * answered after the restart, once.
 * Every wait is bounded.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { FakeWebApi, FAKE_BOT, type Call } from '../chat/fake-web-api.js';
import { actionBody, homeOpenedBody, httpEnv, imMessageBody, slashBody, viewSubmissionBody } from '../chat/harness.js';
import { signedPost, startIn, until } from '../robust/harness.js';
import { openDatabase, type AsyncStore } from '../../src/verbs/ask.js';
import { clusterFixture, type ClusterFixture } from './fixture.js';
import { clusterCheck, sendEnvelope, type Instance } from './harness.js';

const WAIT = 60_000;
const FORM = 'application/x-www-form-urlencoded';
const CHANNEL = 'C0BUTTONS1';
const ASKER = 'U0PRESSER1';

/** The shared cluster fixture (fixture.ts) and a connection to read its database. */
function onePg(tag: string, mode: 'http' | 'socket', count: number): ClusterFixture & { store: AsyncStore } {
  const x = clusterFixture(tag, { mode, count }) as ClusterFixture & { store: AsyncStore };
  beforeAll(async () => {
    if (mode === 'socket') await until(() => x.cluster.instances.every((i) => x.fake.socketTagList.includes(i.tag)), WAIT, 'every Socket Mode connection');
    x.store = await openDatabase({ backend: 'postgres', url: x.db.url });
  });
  afterAll(async () => {
    await x.store?.close();
  });
  return x;
}

describe('buttons, my desk, the form and direct messages on three instances, one PostgreSQL database', () => {
  const pg = onePg('cluster_interactive', 'http', 3);
  let fake: FakeWebApi;
  let cluster: ClusterFixture['cluster'];
  let store: AsyncStore;
  let a: Instance;
  let b: Instance;
  let c: Instance;
  beforeAll(() => {
    ({ fake, cluster, store } = pg);
    [a, b, c] = cluster.instances;
  });

  const posts = (channel: string): Call[] => fake.okCallsOf('chat.postMessage').filter((x) => x.body.channel === channel);
  const blocksText = (x: Call): string => JSON.stringify(x.body.blocks ?? []);
  const tsOf = (x: Call): string => (x.response as { ts: string }).ts;
  /** The post carrying the buttons of check #n. */
  const buttonsOf = (channel: string, n: number): Call | undefined => posts(channel).find((x) => blocksText(x).includes('kolmo_answer_actions') && blocksText(x).includes(`"value":"n${n}"`));
  const send = async (to: Instance, body: string, type: string): Promise<void> => {
    expect((await signedPost(to.app.port, body, type)).status).toBe(200);
  };
  /** Every log line of the three instances. */
  const lines = () => cluster.instances.flatMap((x) => x.lines());

  it('a button pressed on one instance and replayed to another is answered once', { timeout: 180_000 }, async () => {
    await send(a, slashBody({ text: clusterCheck(100), channel: CHANNEL, user: ASKER, responseUrl: fake.responseUrl('first') }).replace('trigger_id=1111.2222.3333', 'trigger_id=71.1.1'), FORM);
    await until(() => buttonsOf(CHANNEL, 1) !== undefined, WAIT, 'the answer of check #1');
    const root = posts(CHANNEL).find((x) => x.body.thread_ts === undefined)!;
    const press = actionBody({ user: ASKER, channel: CHANNEL, messageTs: tsOf(buttonsOf(CHANNEL, 1)!), threadTs: tsOf(root), actionId: 'kolmo_vary_spot_up', value: 'n1', triggerId: '72.press.1' });
    const dupes = () => lines().filter((l) => l.outcome === 'duplicate').length;
    const before = dupes();
    await send(a, press, FORM);
    await send(b, press, FORM); // the same payload, replayed to another instance
    await until(() => buttonsOf(CHANNEL, 2) !== undefined, WAIT, 'check #2');
    await until(() => dupes() > before, WAIT, 'the replay seen as one');
    expect(buttonsOf(CHANNEL, 2)!.body.thread_ts).toBe(tsOf(root));
    expect(blocksText(buttonsOf(CHANNEL, 2)!)).toContain('Spot 5% higher than #1. Typed, it is: /kolmo');
    // answered once: a third check never comes, and the log has two
    await until(() => fake.okCallsOf('files.completeUploadExternal').filter((x) => x.body.channel_id === CHANNEL).length >= 2, WAIT, 'the chart of #2');
    expect(buttonsOf(CHANNEL, 3)).toBeUndefined();
    expect((await store.recent(CHANNEL, 10)).map((e) => e.number)).toEqual([2, 1]);
    const e2 = await store.get(CHANNEL, 2);
    expect(e2?.variedFrom).toBe(1);
    expect(e2?.summary.spot).toBe(105);
  });

  it('my desk opened on another instance lists the checks logged through the first', async () => {
    const before = fake.okCallsOf('views.publish').length;
    await send(c, homeOpenedBody({ user: ASKER, botUserId: FAKE_BOT.user_id }), 'application/json');
    await until(() => fake.okCallsOf('views.publish').length > before, WAIT, 'my desk');
    const text = JSON.stringify(fake.homeOf(ASKER)!.view);
    for (const n of [1, 2]) expect(text).toContain(`"value":"${CHANNEL}:n${n}"`);
  });

  it('a form submission and a direct message are logged in the shared database', { timeout: 120_000 }, async () => {
    const state = { leg1_qty: '1', leg1_strike: '100', leg1_expiry: '2027-03-19', leg1_iv: '30', spot: '100', rate: '4.5', asof: '2027-01-04' };
    const values: Record<string, Record<string, Record<string, unknown>>> = {
      leg1_type: { v: { type: 'static_select', selected_option: { value: 'call' } } },
      style: { v: { type: 'static_select', selected_option: { value: 'european' } } },
    };
    for (const [k, v] of Object.entries(state)) values[k] = /expiry|asof/.test(k) ? { v: { type: 'datepicker', selected_date: v } } : { v: { type: 'number_input', value: v } };
    const form = 'C0FORMPOST';
    const meta = JSON.stringify({ legs: 1, channel: form });
    const r = await signedPost(b.app.port, viewSubmissionBody({ user: ASKER, viewId: 'V0FORM0001', callbackId: 'kolmo_check_form', privateMetadata: meta, values }), FORM);
    expect(JSON.parse(r.body)).toEqual({ response_action: 'clear' });
    await until(() => buttonsOf(form, 1) !== undefined, WAIT, 'the form’s check');
    expect(blocksText(buttonsOf(form, 1)!)).toContain('From the check form. Typed, it is: /kolmo +1 call 100 2027-03-19');
    expect((await store.get(form, 1))?.user).toBe(ASKER);

    const dm = `D${ASKER.slice(1)}`;
    await send(c, imMessageBody({ user: ASKER, channel: dm, text: '+1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% asof 2027-01-04', ts: '1798761600.200001', botUserId: FAKE_BOT.user_id }), 'application/json');
    await until(() => buttonsOf(dm, 1) !== undefined, WAIT, 'the private answer');
    expect(buttonsOf(dm, 1)!.body.thread_ts).toBeUndefined();
    const priv = await store.get(`im:${ASKER}`, 1);
    expect(priv?.user).toBe(ASKER);
    expect(priv?.text).toContain('put 95');
    expect(await store.get(dm, 1)).toBeUndefined();
  });

  it('the instance answering a button press is killed mid-answer: another posts the rest, the check logged once', { timeout: 180_000 }, async () => {
    const root = posts(CHANNEL).find((x) => x.body.thread_ts === undefined)!;
    const charts = () => fake.okCallsOf('files.completeUploadExternal').filter((x) => x.body.channel_id === CHANNEL);
    // nothing else in flight: the first chart upload after the press is this request's
    for (let k = 0; k < 1200 && (await store.depth()) > 0; k++) await new Promise((r) => setTimeout(r, 50));
    expect(await store.depth()).toBe(0);
    const n0 = charts().length;
    // the instance that claims the press's request is killed as its chart upload reaches the platform (the answer is posted)
    let victim: Instance | undefined;
    fake.onCall = (x) => {
      if (!victim && x.method === 'files.getUploadURLExternal') {
        victim = cluster.instances.find((i) => i.tag === x.tag);
        victim?.kill('SIGKILL');
      }
    };
    await send(b, actionBody({ user: ASKER, channel: CHANNEL, messageTs: tsOf(buttonsOf(CHANNEL, 2)!), threadTs: tsOf(root), actionId: 'kolmo_vary_vol_up', value: 'n2', triggerId: '73.press.2' }), FORM);
    await until(() => victim !== undefined, WAIT, 'the kill');
    fake.onCall = undefined;
    await until(() => charts().length > n0, WAIT, 'the chart of #3, posted by another instance');
    expect(charts()[n0].tag).not.toBe(victim!.tag);
    // the one that took it over says so once it is done (its log line follows the chart)
    const taken = () => lines().filter((l) => l.msg === 'request' && l.attempt === 2 && l.source === 'action');
    await until(() => taken().length > 0, WAIT, 'the take-over logged');
    expect(taken()).toHaveLength(1);
    // the answer was posted once (by the victim), the chart once (by the one that took over)
    expect(posts(CHANNEL).filter((x) => blocksText(x).includes('Vol 5 points higher than #2'))).toHaveLength(1);
    const e3 = await store.get(CHANNEL, 3);
    expect(e3?.variedFrom).toBe(2);
    expect(await store.get(CHANNEL, 4)).toBeUndefined();
    await victim!.restart();
  });
});

describe('buttons and direct messages in Socket Mode: two instances, each on its own connection', () => {
  const pg = onePg('cluster_interactive_socket', 'socket', 2);
  let fake: FakeWebApi;
  let cluster: ClusterFixture['cluster'];
  let store: AsyncStore;
  beforeAll(() => {
    ({ fake, cluster, store } = pg);
  });

  const channel = 'C0SOCKBTN1';
  const user = 'U0SOCKET01';
  const posts = (ch: string): Call[] => fake.okCallsOf('chat.postMessage').filter((x) => x.body.channel === ch);
  const blocksText = (x: Call): string => JSON.stringify(x.body.blocks ?? []);
  const buttonsOf = (ch: string, n: number) => posts(ch).find((x) => blocksText(x).includes('kolmo_answer_actions') && blocksText(x).includes(`"value":"n${n}"`));
  /** the JSON of an interaction payload (the HTTP form's `payload` field), as Socket Mode carries it */
  const payloadOf = (form: string) => JSON.parse(new URLSearchParams(form).get('payload') ?? '{}') as Record<string, unknown>;

  it('a press delivered again over the other connection is answered once; a direct message is logged', { timeout: 180_000 }, async () => {
    const [a, b] = cluster.instances;
    const slash = Object.fromEntries(new URLSearchParams(slashBody({ text: clusterCheck(100), channel, user, responseUrl: fake.responseUrl('s1') }).replace('trigger_id=1111.2222.3333', 'trigger_id=91.1.1')));
    expect(await sendEnvelope(fake, a, { type: 'slash_commands', accepts_response_payload: true, payload: slash })).toBe(true);
    await until(() => buttonsOf(channel, 1) !== undefined, WAIT, 'check #1');
    const root = posts(channel).find((x) => x.body.thread_ts === undefined)!;
    const press = payloadOf(actionBody({ user, channel, messageTs: (buttonsOf(channel, 1)!.response as { ts: string }).ts, threadTs: (root.response as { ts: string }).ts, actionId: 'kolmo_vary_vol_down', value: 'n1', triggerId: '92.sock.1' }));
    const dupes = () => cluster.instances.flatMap((x) => x.lines()).filter((l) => l.outcome === 'duplicate').length;
    const before = dupes();
    expect(await sendEnvelope(fake, a, { type: 'interactive', accepts_response_payload: false, payload: press })).toBe(true);
    expect(await sendEnvelope(fake, b, { type: 'interactive', accepts_response_payload: false, payload: press, retry_attempt: 1, retry_reason: 'timeout' })).toBe(true);
    await until(() => buttonsOf(channel, 2) !== undefined, WAIT, 'check #2');
    await until(() => dupes() > before, WAIT, 'the second delivery seen as one');
    expect(blocksText(buttonsOf(channel, 2)!)).toContain('Vol 5 points lower than #1. Typed, it is: /kolmo');
    for (let k = 0; k < 1200 && (await store.depth()) > 0; k++) await new Promise((r) => setTimeout(r, 50));
    expect(buttonsOf(channel, 3)).toBeUndefined();
    expect((await store.recent(channel, 10)).map((e) => [e.number, e.variedFrom ?? null])).toEqual([
      [2, 1],
      [1, null],
    ]);

    const dm = `D${user.slice(1)}`;
    const event = JSON.parse(imMessageBody({ user, channel: dm, text: '+1 put 95 2027-03-19 iv 30% spot 100 rate 4.5% asof 2027-01-04', ts: '1798761600.300001', botUserId: FAKE_BOT.user_id })) as Record<string, unknown>;
    expect(await sendEnvelope(fake, b, { type: 'events_api', accepts_response_payload: false, payload: event })).toBe(true);
    await until(() => buttonsOf(dm, 1) !== undefined, WAIT, 'the private answer');
    expect((await store.get(`im:${user}`, 1))?.text).toContain('put 95');
  });
});

describe('one instance on SQLite', () => {
  let fake: FakeWebApi;
  let dir: string;
  beforeAll(async () => {
    fake = await FakeWebApi.start();
    dir = mkdtempSync(join(tmpdir(), 'kolmo-press-'));
  });
  afterAll(async () => {
    await fake?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('a button press acknowledged just before a SIGKILL is answered after the restart, once', { timeout: 180_000 }, async () => {
    const channel = 'C0PRESSKIL';
    const env = httpEnv(fake.apiUrl, { KOLMO_WORKERS: '1' });
    const posts = () => fake.okCallsOf('chat.postMessage').filter((x) => x.body.channel === channel);
    const blocks = (x: Call) => JSON.stringify(x.body.blocks ?? []);
    const charts = () => fake.okCallsOf('files.completeUploadExternal').filter((x) => x.body.channel_id === channel);
    let app = await startIn(dir, env);
    try {
      expect((await signedPost(app.port, slashBody({ text: clusterCheck(100), channel, responseUrl: fake.responseUrl('k1') }).replace('trigger_id=1111.2222.3333', 'trigger_id=81.1.1'), FORM)).status).toBe(200);
      await until(() => charts().length === 1, WAIT, 'check #1 and its chart');
      const answer = posts().find((x) => blocks(x).includes('"value":"n1"'))!;
      const root = posts().find((x) => x.body.thread_ts === undefined)!;
      const press = actionBody({ channel, messageTs: (answer.response as { ts: string }).ts, threadTs: (root.response as { ts: string }).ts, actionId: 'kolmo_vary_spot_down', value: 'n1', triggerId: '82.press.1' });
      expect((await signedPost(app.port, press, FORM)).status).toBe(200);
      // killed the moment the acknowledgement arrived: nothing after it may be needed
      app.child.kill('SIGKILL');
      await app.exited;
      app = await startIn(dir, env);
      await until(() => charts().length === 2, WAIT, 'check #2 answered after the restart');
      expect(posts().filter((x) => blocks(x).includes('Spot 5% lower than #1'))).toHaveLength(1);
      const s = await openDatabase({ backend: 'sqlite', path: join(dir, 'kolmo.db') }, { readonly: true });
      try {
        expect((await s.recent(channel, 10)).map((e) => [e.number, e.variedFrom ?? null])).toEqual([
          [2, 1],
          [1, null],
        ]);
      } finally {
        await s.close();
      }
    } finally {
      await app.stop();
    }
  });
});
