/**
 * The workspace app end to end: the real app (`node dist/src/main.js`, HTTP mode) against the fake
 * Web API on 127.0.0.1. 200 signed `/kolmo` checks, 10 in flight at a time (each of 10 clients
 * sends its next request once its previous answer's chart has been completed at the fake), each
 * in its own channel.
 *
 * Reported: median and p99 of (a) the ack (request sent → HTTP 200) and (b) the full answer
 * (request sent → files.completeUploadExternal of its chart recorded at the fake). Baselines run
 * in this same process: the same load with the work on the app's main thread (KOLMO_WORKERS=0),
 * and a bare loopback round trip to the fake (the floor of any call).
 */
import { availableParallelism } from 'node:os';
import { request } from 'node:http';
import { FakeWebApi } from '../chat/fake-web-api.js';
import { httpEnv, sendSlash, startApp } from '../chat/harness.js';
import { fmtTime, measureOf, type Measure } from './harness.js';

const CHECK =
  'check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04';
const N = Number(process.env.KOLMO_BENCH_N ?? 200);
const CONCURRENCY = 10;
const ANSWER_TIMEOUT_MS = 120000;

interface RunFigures {
  ack: Measure;
  answer: Measure;
  wallSeconds: number;
  failed: number;
}

async function load(label: string, workers: number): Promise<RunFigures> {
  const fake = await FakeWebApi.start();
  const app = await startApp(httpEnv(fake.apiUrl, { KOLMO_WORKERS: String(workers), LOG_LEVEL: 'info', KOLMO_QUEUE_LIMIT: '1000', KOLMO_USER_BURST: '100000', KOLMO_USER_PER_MINUTE: '1000000' }));
  const acks: number[] = [];
  const answers: number[] = [];
  let failed = 0;
  try {
    // warm-up: one request, so worker start-up and module loading are not measured
    await sendSlash(app.port, { text: CHECK, channel: `CWARM${label}`, responseUrl: fake.responseUrl('warm') });
    await fake.waitFor(() => fake.okCallsOf('files.completeUploadExternal').length > 0, ANSWER_TIMEOUT_MS, 'warm-up answer');

    const doneAt = new Map<string, number>();
    let seen = 0;
    const scan = () => {
      const calls = fake.calls;
      for (; seen < calls.length; seen++) {
        const c = calls[seen];
        if (c.method === 'files.completeUploadExternal' && c.status === 200) doneAt.set(String(c.body.channel_id), c.at);
      }
    };
    let next = 0;
    const t0 = performance.now();
    const client = async () => {
      while (next < N) {
        const i = next++;
        const channel = `CBENCH${label}${String(i).padStart(4, '0')}`;
        const sent = await sendSlash(app.port, { text: CHECK, channel, responseUrl: fake.responseUrl(`b${i}`) }, { timeoutMs: 30000 });
        acks.push((sent.at - sent.sentAt) / 1000);
        try {
          await fake.waitFor(() => {
            scan();
            return doneAt.has(channel);
          }, ANSWER_TIMEOUT_MS, channel);
          answers.push((doneAt.get(channel)! - sent.sentAt) / 1000);
        } catch {
          failed++;
        }
      }
    };
    await Promise.all(Array.from({ length: CONCURRENCY }, client));
    const wallSeconds = (performance.now() - t0) / 1000;
    return {
      ack: measureOf(`${label}: ack (sent → 200)`, acks),
      answer: measureOf(`${label}: answer + chart posted`, answers),
      wallSeconds,
      failed,
    };
  } finally {
    await app.stop();
    await fake.close();
  }
}

async function floor(): Promise<Measure> {
  const fake = await FakeWebApi.start();
  const secs: number[] = [];
  try {
    for (let i = 0; i < 200; i++) {
      const t = performance.now();
      await new Promise<void>((resolve, reject) => {
        const req = request({ host: '127.0.0.1', port: fake.port, path: '/api/auth.test', method: 'POST', headers: { authorization: 'Bearer xoxb-bench' } }, (res) => {
          res.resume();
          res.on('end', () => resolve());
        });
        req.on('error', reject);
        req.end();
      });
      secs.push((performance.now() - t) / 1000);
    }
  } finally {
    await fake.close();
  }
  return measureOf('loopback round trip to the fake', secs);
}

function line(m: Measure, base?: Measure): void {
  const ratio = base ? `   median ${(m.perOp / base.perOp).toFixed(2)}×, p99 ${(m.p99 / base.p99).toFixed(2)}× ${base.name}` : '';
  console.log(`${m.name.padEnd(40)} median ${fmtTime(m.perOp).padStart(10)}  p99 ${fmtTime(m.p99).padStart(10)}  n=${m.samples}${ratio}`);
}

export async function run(): Promise<void> {
  const cores = Math.max(1, availableParallelism());
  console.log(`${N} signed /kolmo checks, ${CONCURRENCY} in flight, each in its own channel; ${cores} cores`);
  const rt = await floor();
  line(rt);
  const inline = await load('main thread', 0);
  const pool = await load(`pool of ${cores}`, cores);
  line(inline.ack, rt);
  line(inline.answer, rt);
  line(pool.ack, inline.ack);
  line(pool.answer, inline.answer);
  console.log(
    `throughput: main thread ${(N / inline.wallSeconds).toFixed(1)}/s, pool ${(N / pool.wallSeconds).toFixed(1)}/s; ` +
      `unanswered: main thread ${inline.failed}, pool ${pool.failed}`,
  );
}
