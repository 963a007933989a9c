/**
 * What waking idle dispatchers with LISTEN/NOTIFY does to answer latency on PostgreSQL (a
 * throwaway local cluster, or KOLMO_TEST_DATABASE_URL's server): the real app (HTTP mode, one
 * worker per instance) against the loopback fake Web API, with KOLMO_QUEUE_LISTEN on and off,
 * interleaved in one process; the figures are ratios of "on" to "off". Each request is timed from
 * the moment it is sent to the moment its answer (the message carrying its buttons) reaches the
 * fake.
 *
 * - One at a time, to the first instance: a typed `/kolmo` check and a press of "Spot +5%" under
 *   an answer. The instance that records a request wakes its own dispatcher at once, so no change
 *   is expected; this shows what listening costs.
 * - A pair of typed checks (two channels) sent together to the first instance: it claims one; the
 *   other is taken by the second instance if it learns of it in time — from the notification (on)
 *   or at its next poll (off: every KOLMO_QUEUE_POLL_MS, 500 ms by default) — else by the first
 *   once it is free. Timed to the later of the two answers.
 */
import { FakeWebApi, type Call } from '../chat/fake-web-api.js';
import { actionBody, post, sendSlash } from '../chat/harness.js';
import { startCluster } from '../cluster/harness.js';
import { createDatabase, startCluster as startPg, type Cluster } from '../support/pg-cluster.js';
import { fmtTime } from './harness.js';

const CHECK = '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const N = Number(process.env.KOLMO_BENCH_N ?? 20);
const WAIT_MS = 60000;
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

interface Figures {
  typed: number[];
  pressed: number[];
  /** each pair: from sending to the later of its two answers */
  pair: number[];
  /** pairs of which the second instance answered one */
  byOther: number;
}

export async function run(): Promise<void> {
  const fake = await FakeWebApi.start();
  const given = process.env.KOLMO_TEST_DATABASE_URL?.trim();
  let pg: Cluster | undefined;
  const env = (listen: string) => ({ KOLMO_QUEUE_LISTEN: listen, KOLMO_USER_BURST: '100000', KOLMO_USER_PER_MINUTE: '1000000' });
  /** the first answer (a message with buttons) of that check number in the channel, after `since` calls */
  const answerAt = async (channel: string, n: number, since: number): Promise<number> => {
    const isIt = (c: Call) => c.method === 'chat.postMessage' && c.status === 200 && c.body.channel === channel && JSON.stringify(c.body.blocks ?? []).includes(`"value":"n${n}"`);
    let at = -1;
    await fake.waitFor(() => {
      const c = fake.calls.slice(since).find(isIt);
      if (c) at = c.at;
      return c !== undefined;
    }, WAIT_MS, `answer #${n} in ${channel}`);
    return at;
  };
  const figures: Record<'on' | 'off', Figures> = { on: { typed: [], pressed: [], pair: [], byOther: 0 }, off: { typed: [], pressed: [], pair: [], byOther: 0 } };
  const clusters: Array<{ close(): Promise<void> }> = [];
  const dbs: Array<{ drop(): Promise<void> }> = [];
  try {
    pg = given ? undefined : await startPg();
    // both set-ups run side by side and are measured in turn (alternating which goes first), so
    // the machine's load and the database's warm-up fall on both alike
    const setups = [];
    for (const listen of ['on', 'off'] as const) {
      const db = await createDatabase(given ?? pg!.url, `wake_${listen}`);
      dbs.push(db);
      const c = await startCluster({ fake, databaseUrl: db.url, mode: 'http', count: 2, env: env(listen) });
      clusters.push(c);
      const a = c.instances[0].app.port;
      const channel = `CWAKE1${listen.toUpperCase()}`;
      const since0 = fake.calls.length;
      await sendSlash(a, { text: CHECK, channel, responseUrl: fake.responseUrl(`w-${listen}-root`) });
      await answerAt(channel, 1, since0);
      const root = fake.okCallsOf('chat.postMessage').find((x) => x.body.channel === channel && x.body.thread_ts === undefined)!;
      setups.push({ listen, a, channel, rootTs: (root.response as { ts: string }).ts, n: 1, otherTag: c.instances[1].tag, f: figures[listen] });
    }
    for (let i = 0; i < N; i++) {
      for (const u of i % 2 === 0 ? setups : [...setups].reverse()) {
        const { listen, a, channel, rootTs, f } = u;
        // one at a time, to the first instance: typed, then pressed
        let since = fake.calls.length;
        const s = await sendSlash(a, { text: CHECK.replace('spot 100', `spot ${101 + i}`), channel, responseUrl: fake.responseUrl(`w-${listen}-t${i}`) });
        f.typed.push(((await answerAt(channel, ++u.n, since)) - s.sentAt) / 1000);
        since = fake.calls.length;
        const t = performance.now();
        await post(a, actionBody({ channel, messageTs: rootTs, threadTs: rootTs, actionId: 'kolmo_vary_spot_up', value: 'n1' }), 'application/x-www-form-urlencoded');
        f.pressed.push(((await answerAt(channel, ++u.n, since)) - t) / 1000);
        // a pair sent together to the first instance: the second instance answers one of them
        const chans = [`CWAKEP${listen.toUpperCase()}${i}A`, `CWAKEP${listen.toUpperCase()}${i}B`];
        since = fake.calls.length;
        const sent = await Promise.all(chans.map((ch, k) => sendSlash(a, { text: CHECK, channel: ch, responseUrl: fake.responseUrl(`w-${listen}-p${i}${k}`) })));
        const at = await Promise.all(chans.map((ch) => answerAt(ch, 1, since)));
        f.pair.push((Math.max(...at) - Math.min(...sent.map((x) => x.sentAt))) / 1000);
        if (chans.some((ch) => fake.calls.slice(since).some((x) => x.method === 'chat.postMessage' && x.body.channel === ch && x.tag === u.otherTag))) f.byOther++;
      }
    }
    const line = (what: string, on: number[], off: number[]) =>
      console.log(`${what.padEnd(44)} on ${fmtTime(median(on)).padStart(9)}  off ${fmtTime(median(off)).padStart(9)}  on/off ${(median(on) / median(off)).toFixed(2)}×  (medians of ${on.length} / ${off.length})`);
    line('one at a time: typed check → answer', figures.on.typed, figures.off.typed);
    line('one at a time: button press → answer', figures.on.pressed, figures.off.pressed);
    line('a pair to the first of two instances: both answered', figures.on.pair, figures.off.pair);
    console.log(`the second instance answered one of the pair in ${figures.on.byOther} (on) / ${figures.off.byOther} (off) of ${N} pairs`);
  } finally {
    for (const c of clusters) await c.close();
    for (const d of dbs) await d.drop();
    await fake.close();
    await pg?.stop();
  }
}
