/**
 * `npm run load`: the real app (`node dist/src/main.js`, HTTP mode, one worker process per core)
 * against the recording fake Web API, all on 127.0.0.1. Bounded in count and in time.
 *
 * The burst: N signed `/kolmo` requests (default 500) spread round-robin over C channels (default
 * 50) and U users (default 100), offered at R per second (default 125: the 500 in four seconds)
 * with at most K (default 50) unacknowledged at any moment; R = 0 offers them as fast as the K
 * bound allows (a closed loop: K requests in flight at every moment, a saturation test). Most are checks (one to four legs, different strikes, so each answer is
 * its own work); one in ten is `help` (ephemeral) and one in twenty is a malformed request
 * (rejected, ephemeral).
 *
 * Reported: acknowledgement latency (request sent → HTTP 200) median / p99 / max; answer latency
 * (request sent → its chart's files.completeUploadExternal at the fake, or its ephemeral reply)
 * median / p99 / max; answers delivered vs sent; per-channel order (log numbers and root lines in
 * the order the requests were sent); busy or rate-limited refusals; peak resident memory of the app
 * and of its workers (VmHWM from /proc). Exit code 1 when the goal is missed (p99 ack ≥ 100 ms or
 * anything undelivered) so a CI job can run it.
 *
 * Settings (environment): KOLMO_LOAD_N, KOLMO_LOAD_CHANNELS, KOLMO_LOAD_USERS,
 * KOLMO_LOAD_CONCURRENCY, KOLMO_LOAD_RATE, KOLMO_LOAD_TIMEOUT_S (default 300: the answers must all arrive within it),
 * KOLMO_LOAD_WORKERS (default: cores).
 */
import { availableParallelism, loadavg } from 'node:os';
import { readFileSync } from 'node:fs';
import { FakeWebApi, type Call } from '../chat/fake-web-api.js';
import { httpEnv, sendSlash, startApp } from '../chat/harness.js';
import { mulberry32 as rng } from '../support/rng.js';

const envInt = (name: string, def: number, lo: number, hi: number): number => {
  const v = process.env[name];
  if (v === undefined || v.trim() === '') return def;
  const n = Number(v);
  if (!Number.isInteger(n) || n < lo || n > hi) throw new Error(`${name} must be a whole number from ${lo} to ${hi}`);
  return n;
};

const N = envInt('KOLMO_LOAD_N', 500, 1, 20000);
const CHANNELS = envInt('KOLMO_LOAD_CHANNELS', 50, 1, 5000);
const USERS = envInt('KOLMO_LOAD_USERS', 100, 1, 100000);
const CONCURRENCY = envInt('KOLMO_LOAD_CONCURRENCY', 50, 1, 1000);
/** requests per second offered; 0 = a closed loop (the next request as soon as one is acknowledged) */
const RATE = envInt('KOLMO_LOAD_RATE', 125, 0, 100000);
const TIMEOUT_S = envInt('KOLMO_LOAD_TIMEOUT_S', 300, 10, 3600);
const WORKERS = envInt('KOLMO_LOAD_WORKERS', Math.max(1, availableParallelism()), 0, 64);

type Kind = 'check' | 'help' | 'bad';

interface Req {
  i: number;
  kind: Kind;
  channel: string;
  user: string;
  text: string;
  responseId: string;
  /** position of this check among the checks of its channel, 1-based (its expected log number) */
  nthCheck: number;
  strike: number;
  sentAt?: number;
  ackAt?: number;
  status?: number;
  doneAt?: number;
}


function requests(): Req[] {
  const r = rng(20261201);
  const perChannel = new Map<string, number>();
  const out: Req[] = [];
  for (let i = 0; i < N; i++) {
    const channel = `CLOAD${String(i % CHANNELS).padStart(5, '0')}`;
    const user = `ULOAD${String(i % USERS).padStart(6, '0')}`;
    const kind: Kind = i % 20 === 7 ? 'bad' : i % 10 === 3 ? 'help' : 'check';
    let text: string;
    let nthCheck = 0;
    let strike = 0;
    if (kind === 'check') {
      nthCheck = (perChannel.get(channel) ?? 0) + 1;
      perChannel.set(channel, nthCheck);
      strike = 80 + Math.floor(r() * 40);
      const legs = [`+1 call ${strike} 2027-03-19 iv ${20 + Math.floor(r() * 15)}%`];
      const extra = Math.floor(r() * 4);
      for (let k = 0; k < extra; k++) {
        const s = Math.round(60 + r() * 80);
        legs.push(`${r() < 0.5 ? '-' : '+'}${1 + Math.floor(r() * 3)} ${r() < 0.5 ? 'put' : 'call'} ${s} ${r() < 0.5 ? '2027-03-19' : '2027-06-18'} iv ${18 + Math.floor(r() * 20)}%`);
      }
      const horizon = r() < 0.5 ? ' horizon 2027-02-15' : '';
      // the spot is distinct per channel (100 + the check's place in it), so the answers show their order
      text = `check ${legs.join(' ')} spot ${100 + nthCheck} rate 4.5% yield 1% drift ${Math.round(r() * 20 - 5)}% vol ${20 + Math.floor(r() * 20)}%${horizon} asof 2027-01-04`;
    } else if (kind === 'help') {
      text = 'help';
    } else {
      text = `check +2 call 105 2027-03-19 vol 0.25 spot 100 #${i}`;
    }
    out.push({ i, kind, channel, user, text, responseId: `load${i}`, nthCheck, strike });
  }
  return out;
}

function quantile(sorted: number[], p: number): number {
  if (sorted.length === 0) return NaN;
  return sorted[Math.min(sorted.length - 1, Math.ceil(sorted.length * p) - 1)];
}

function stats(ms: number[]): string {
  const s = [...ms].sort((a, b) => a - b);
  if (s.length === 0) return 'no samples';
  return `median ${quantile(s, 0.5).toFixed(1)} ms · p99 ${quantile(s, 0.99).toFixed(1)} ms · max ${s[s.length - 1].toFixed(1)} ms (n=${s.length})`;
}

/** peak resident memory (VmHWM) of a process, in MiB; NaN where /proc is not available */
function peakMiB(pid: number): number {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) / 1024 : NaN;
  } catch {
    return NaN;
  }
}

function rssMiB(pid: number): number {
  try {
    const m = /VmRSS:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) / 1024 : NaN;
  } catch {
    return NaN;
  }
}

/** CPU seconds (user + system) a process has used, from /proc/<pid>/stat; NaN without /proc */
function cpuSeconds(pid: number): number {
  try {
    const f = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const rest = f.slice(f.lastIndexOf(')') + 2).split(' ');
    return (Number(rest[11]) + Number(rest[12])) / 100; // utime, stime in clock ticks (USER_HZ = 100)
  } catch {
    return NaN;
  }
}

function childrenOf(pid: number): number[] {
  try {
    return readFileSync(`/proc/${pid}/task/${pid}/children`, 'utf8')
      .trim()
      .split(/\s+/)
      .filter(Boolean)
      .map(Number);
  } catch {
    return [];
  }
}

export async function main(): Promise<number> {
  const reqs = requests();
  const checks = reqs.filter((r) => r.kind === 'check').length;
  console.log(
    `load: ${N} requests (${checks} checks, ${reqs.filter((r) => r.kind === 'help').length} help, ${reqs.filter((r) => r.kind === 'bad').length} malformed) ` +
      `over ${CHANNELS} channels and ${Math.min(USERS, N)} users, ${RATE > 0 ? `${RATE}/s offered, ` : 'closed loop, '}at most ${CONCURRENCY} in flight; app with ${WORKERS} worker processes on ${availableParallelism()} cores; loopback only`,
  );
  const fake = await FakeWebApi.start();
  const app = await startApp(
    httpEnv(fake.apiUrl, {
      KOLMO_WORKERS: String(WORKERS),
      LOG_LEVEL: 'info',
      KOLMO_QUEUE_LIMIT: String(Math.max(500, N)),
    }),
  );
  const pid = app.child.pid!;
  let code = 0;
  let peakRss = 0;
  const workerPeak = new Map<number, number>();
  const sampler = setInterval(() => {
    peakRss = Math.max(peakRss, rssMiB(pid));
    for (const c of childrenOf(pid)) workerPeak.set(c, Math.max(workerPeak.get(c) ?? 0, peakMiB(c)));
  }, 100);
  try {
    // warm-up: one check so module loading in the workers is not measured
    await sendSlash(app.port, { text: reqs.find((r) => r.kind === 'check')!.text, channel: 'CWARMUP001', responseUrl: fake.responseUrl('warm') });
    await fake.waitFor(() => fake.okCallsOf('files.completeUploadExternal').length > 0, 60000, 'the warm-up answer');
    const base = fake.calls.length;
    const memBefore = rssMiB(pid);

    const byResponse = new Map(reqs.map((r) => [r.responseId, r]));
    const byCheck = new Map(reqs.filter((r) => r.kind === 'check').map((r) => [`${r.channel}#${r.nthCheck}`, r]));
    let seen = base;
    const scan = () => {
      const calls = fake.calls;
      for (; seen < calls.length; seen++) {
        const c: Call = calls[seen];
        if (c.status !== 200 || c.error !== undefined) continue;
        if (c.method === 'files.completeUploadExternal') {
          const files = Array.isArray(c.body.files) ? (c.body.files as Array<{ title?: string }>) : [];
          const n = /#(\d+)/.exec(files[0]?.title ?? '')?.[1];
          const r = n ? byCheck.get(`${String(c.body.channel_id)}#${n}`) : undefined;
          if (r && r.doneAt === undefined) r.doneAt = c.at;
        } else if (c.method === 'response') {
          const r = byResponse.get(String(c.body.response_id));
          if (r && r.kind !== 'check' && r.doneAt === undefined) r.doneAt = c.at;
        }
      }
    };

    // Requests leave at RATE per second (0: as fast as the in-flight bound allows), at most
    // CONCURRENCY unacknowledged at a time; a channel's next request leaves only after its previous
    // one was acknowledged, so within a channel send order is arrival order (what Kolmo keeps).
    const t0 = performance.now();
    const appCpu0 = cpuSeconds(pid);
    const selfCpu0 = process.cpuUsage();
    const send = async (r: Req): Promise<void> => {
      try {
        const sent = await sendSlash(app.port, { text: r.text, channel: r.channel, user: r.user, responseUrl: fake.responseUrl(r.responseId) }, { timeoutMs: 10000 });
        r.sentAt = sent.sentAt;
        r.ackAt = sent.at;
        r.status = sent.status;
      } catch {
        r.status = -1;
      }
    };
    let inFlight = 0;
    let wake: (() => void) | undefined;
    const tails = new Map<string, Promise<void>>();
    for (const r of reqs) {
      if (RATE > 0) {
        const due = t0 + (r.i * 1000) / RATE - performance.now();
        if (due > 0) await new Promise((res) => setTimeout(res, due));
      }
      while (inFlight >= CONCURRENCY) await new Promise<void>((res) => (wake = res));
      inFlight++;
      const tail = (tails.get(r.channel) ?? Promise.resolve()).then(() => send(r)).finally(() => {
        inFlight--;
        const w = wake;
        wake = undefined;
        w?.();
      });
      tails.set(r.channel, tail);
    }
    await Promise.all(tails.values());
    const burstS = (performance.now() - t0) / 1000;
    const appBusy = (cpuSeconds(pid) - appCpu0) / burstS;
    const selfCpu = process.cpuUsage(selfCpu0);
    const selfBusy = (selfCpu.user + selfCpu.system) / 1e6 / burstS;
    console.log(
      `burst sent in ${burstS.toFixed(2)} s (${(N / burstS).toFixed(0)} requests/s); CPU during the burst: the app's main process ${(100 * appBusy).toFixed(0)}% of a core, ` +
        `this load generator and fake Web API ${(100 * selfBusy).toFixed(0)}%; machine load average ${loadavg()[0].toFixed(2)}`,
    );

    const deadline = performance.now() + TIMEOUT_S * 1000;
    const allDone = () => {
      scan();
      return reqs.every((r) => r.doneAt !== undefined || r.status !== 200);
    };
    try {
      await fake.waitFor(allDone, Math.max(1, deadline - performance.now()), 'every answer');
    } catch {
      /* reported below */
    }
    scan();
    const wallS = (performance.now() - t0) / 1000;

    const acks = reqs.filter((r) => r.status === 200).map((r) => r.ackAt! - r.sentAt!);
    const notAcked = reqs.filter((r) => r.status !== 200);
    const done = reqs.filter((r) => r.doneAt !== undefined);
    const answerMs = (k?: Kind) => done.filter((r) => k === undefined || r.kind === k).map((r) => r.doneAt! - r.sentAt!);

    // per-channel order: the answers in each channel's threads carry their spots in send order
    let outOfOrder = 0;
    for (let c = 0; c < CHANNELS; c++) {
      const channel = `CLOAD${String(c).padStart(5, '0')}`;
      const spots = fake.calls
        .slice(base)
        .filter((x) => x.method === 'chat.postMessage' && x.status === 200 && x.body.channel === channel && x.body.thread_ts !== undefined)
        .map((x) => /Assumptions: asof \S+ · spot (\d+)/.exec(String(x.body.text))?.[1])
        .filter((x): x is string => x !== undefined)
        .map(Number);
      const want = reqs.filter((r) => r.channel === channel && r.kind === 'check').map((r) => 100 + r.nthCheck);
      if (JSON.stringify(spots) !== JSON.stringify(want)) outOfOrder++;
    }
    const busy = app.lines.filter((l) => l.msg === 'request' && (l.outcome === 'busy' || l.outcome === 'rate-limited')).length;
    const failedLines = app.lines.filter((l) => l.msg === 'request' && (l.outcome === 'error' || l.outcome === 'undelivered')).length;
    const p99ack = quantile([...acks].sort((a, b) => a - b), 0.99);

    peakRss = Math.max(peakRss, rssMiB(pid));
    const hwm = peakMiB(pid);
    const workers = [...workerPeak.values()];
    console.log(`acknowledgement: ${stats(acks)}; not acknowledged: ${notAcked.length}`);
    console.log(`answer (sent → chart in thread or ephemeral reply): ${stats(answerMs())}`);
    console.log(`  checks: ${stats(answerMs('check'))}`);
    console.log(`  help/rejected (ephemeral): ${stats([...answerMs('help'), ...answerMs('bad')])}`);
    console.log(`delivered ${done.length} of ${N} sent (${((100 * done.length) / N).toFixed(1)}%); channels out of order: ${outOfOrder} of ${CHANNELS}; busy/rate-limited: ${busy}; failed: ${failedLines}`);
    console.log(`all answered in ${wallS.toFixed(1)} s (${(done.length / wallS).toFixed(1)} answers/s)`);
    console.log(
      `memory: app ${memBefore.toFixed(0)} MiB after warm-up, peak ${Math.max(peakRss, hwm).toFixed(0)} MiB; ` +
        `workers peak ${workers.length ? workers.map((w) => w.toFixed(0)).join(', ') : 'n/a'} MiB`,
    );
    const goal = p99ack < 100 && done.length === N && outOfOrder === 0;
    console.log(`goal (p99 ack < 100 ms, 100% delivered, in order per channel): ${goal ? 'met' : 'MISSED'}`);
    if (!goal) code = 1;
  } finally {
    clearInterval(sampler);
    const exit = await app.stop();
    await fake.close();
    const st = app.lines.find((l) => l.msg === 'stopped') as { loopDelayMs?: { p50: number; p99: number; max: number } } | undefined;
    if (st?.loopDelayMs) {
      console.log(`the app's event loop delay over the run: p50 ${st.loopDelayMs.p50} ms · p99 ${st.loopDelayMs.p99} ms · max ${st.loopDelayMs.max} ms`);
    }
    if (exit !== 0) {
      console.log(`the app exited with ${exit} on SIGTERM`);
      code = 1;
    }
  }
  return code;
}

main().then(
  (code) => {
    process.exitCode = code;
  },
  (err) => {
    console.error(err);
    process.exitCode = 1;
  },
);
