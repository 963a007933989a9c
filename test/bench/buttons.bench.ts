/**
 * A button press to the new answer in its thread, beside a typed request, on loopback: the real
 * app (`node dist/src/main.js`, HTTP mode, one worker) against the fake Web API on 127.0.0.1.
 *
 * One check is typed in a channel; then, alternately, a signed press of "Spot +5%" under it and a
 * signed `/kolmo` with the same request typed out, one at a time. Each is timed from the moment it
 * is sent to the moment the new answer (the message carrying its buttons) reaches the fake. The
 * baseline, measured in the same process and interleaved with the presses, is the typed request.
 */
import { FakeWebApi, type Call } from '../chat/fake-web-api.js';
import { actionBody, httpEnv, post, sendSlash, startApp } from '../chat/harness.js';
import { fmtTime, measureOf } from './harness.js';

const CHECK = '+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const N = Number(process.env.KOLMO_BENCH_N ?? 60);
const WAIT_MS = 60000;

export async function run(): Promise<void> {
  const fake = await FakeWebApi.start();
  const app = await startApp(httpEnv(fake.apiUrl, { KOLMO_WORKERS: '1', LOG_LEVEL: 'info', KOLMO_USER_BURST: '100000', KOLMO_USER_PER_MINUTE: '1000000' }));
  const channel = 'CBENCHBTN1';
  const answerOf = (n: number) => (c: Call) =>
    c.method === 'chat.postMessage' && c.status === 200 && c.body.channel === channel && JSON.stringify(c.body.blocks ?? []).includes(`"value":"n${n}"`);
  const waitAnswer = async (n: number): Promise<number> => {
    let at = -1;
    await fake.waitFor(() => {
      const c = fake.calls.find(answerOf(n));
      if (c) at = c.at;
      return c !== undefined;
    }, WAIT_MS, `answer #${n}`);
    return at;
  };
  const pressed: number[] = [];
  const typed: number[] = [];
  try {
    await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl('root') });
    await waitAnswer(1);
    const root = fake.okCallsOf('chat.postMessage').find((c) => c.body.channel === channel && c.body.thread_ts === undefined)!;
    const rootTs = (root.response as { ts: string }).ts;
    let n = 1;
    for (let i = 0; i < N; i++) {
      // a press of "Spot +5%" under check #1
      const body = actionBody({ channel, messageTs: rootTs, threadTs: rootTs, actionId: 'kolmo_vary_spot_up', value: 'n1' });
      const t = performance.now();
      await post(app.port, body, 'application/x-www-form-urlencoded');
      pressed.push(((await waitAnswer(++n)) - t) / 1000);
      // the same request typed
      const s = await sendSlash(app.port, { text: CHECK.replace('spot 100', 'spot 105'), channel, responseUrl: fake.responseUrl(`t${i}`) });
      typed.push(((await waitAnswer(++n)) - s.sentAt) / 1000);
    }
  } finally {
    await app.stop();
    await fake.close();
  }
  const p = measureOf('button press → new answer in its thread', pressed);
  const b = measureOf('typed /kolmo → its answer', typed);
  for (const m of [b, p]) {
    const ratio = m === p ? `   median ${(p.perOp / b.perOp).toFixed(2)}×, p99 ${(p.p99 / b.p99).toFixed(2)}× typed` : '';
    console.log(`${m.name.padEnd(42)} median ${fmtTime(m.perOp).padStart(10)}  p99 ${fmtTime(m.p99).padStart(10)}  n=${m.samples}${ratio}`);
  }
}
