/**
 * One unit of heavy work for the chat app: the engine's answer and its chart as PNG bytes.
 * Runs inside a worker process (worker.ts) or, with KOLMO_WORKERS=0, on the main thread.
 *
 * The seam (src/verbs/ask.ts) holds the request's estimated cost against the compute budget
 * before the engine runs. A request resumed after a restart (`resumed`) may already be in the log — the
 * previous process can have logged it and died before posting — so its log entry is found again
 * instead of being appended twice (see `onceOnly`).
 */
import { ask, type LogEntry, type LogEntryInput, type LogStore } from '../verbs/ask.js';
import type { Reply } from '../reply.js';
import { renderAnswerChart } from '../report/answer-chart.js';
import { applyDefaults } from './desk/defaults.js';

export interface Job {
  text: string;
  channel: string;
  user: string;
  /** ISO time the request arrived */
  now: string;
  /** compute units this request may use (default: the seam's COMPUTE_BUDGET_DEFAULT) */
  budget?: number;
  /** answered once before by a process that stopped before finishing: log it at most once */
  resumed?: boolean;
  /** a button's variation of this check (same log): recorded with the new entry */
  variedFrom?: number;
  /** a line put before the answer (what the button or the form did, and the request typed out) */
  preface?: string;
  /** apply the asker's personal defaults (my desk) where the request leaves a term out */
  defaults?: boolean;
  /** files shared with the request (downloaded by the app), for `history` */
  files?: { name: string; base64: string }[];
}

export interface WorkResult {
  /** the engine's reply, without its chart input (rendered here) */
  reply: Reply;
  /** chart bytes when the answer has a chart and it rendered */
  png?: Uint8Array;
  /** why an answer that should have a chart has none */
  chartNote?: string;
  /** milliseconds spent computing and rendering */
  ms: number;
}

/** how far back a resumed request looks for its own entry */
const RESUME_LOOKBACK = 500;

/**
 * A store whose appendCheck returns the channel's existing entry for the same request (same
 * user, same arrival time to the millisecond, same parsed request) instead of appending another.
 */
export function onceOnly(store: LogStore): LogStore {
  const find = async (e: LogEntryInput): Promise<LogEntry | undefined> =>
    (await store.recent(e.channel, RESUME_LOOKBACK)).find((x) => x.user === e.user && x.at === e.at && x.normalized === e.normalized);
  return new Proxy(store, {
    get(target, prop, receiver) {
      if (prop === 'appendCheck') return async (e: LogEntryInput) => (await find(e)) ?? target.appendCheck(e);
      const v = Reflect.get(target, prop, receiver) as unknown;
      return typeof v === 'function' ? (v as (...a: unknown[]) => unknown).bind(target) : v;
    },
  });
}

export async function work(job: Job, store: LogStore | null): Promise<WorkResult> {
  const t0 = performance.now();
  const s = store && job.resumed ? onceOnly(store) : store;
  let text = job.text;
  let used: string[] = [];
  if (job.defaults && store) {
    try {
      const d = await store.getDefaults(job.user);
      const marks = new Map((await store.listMarks(job.channel)).map((m) => [m.symbol, m]));
      const markHas = (sym: string): ReadonlySet<string> => {
        const m = marks.get(sym.toUpperCase());
        return new Set((['rate', 'yield'] as const).filter((k) => m?.[k] !== undefined));
      };
      const applied = applyDefaults(text, d, job.now.slice(0, 10), markHas);
      text = applied.text;
      used = applied.used;
    } catch {
      /* defaults that cannot be read leave the request as written */
    }
  }
  let reply = await ask(text, { channel: job.channel, user: job.user, now: new Date(job.now), store: s, inWorkspace: true, budget: job.budget, ...(job.files?.length ? { files: job.files } : {}) });
  if (reply.kind === 'answer') {
    const lines = [
      ...(job.preface ? [job.preface] : []),
      ...(used.length ? [`Used your defaults (my desk): ${used.map((u) => u.replace(/^your default /, '')).join(', ')}. Request run: ${text}`] : []),
    ];
    if (lines.length) reply = { ...reply, text: `${lines.join('\n')}\n\n${reply.text}`, json: { ...reply.json, ...(used.length ? { defaultsUsed: used } : {}) } };
    if (job.variedFrom !== undefined && reply.logNumber !== undefined && store) {
      try {
        await store.setVariedFrom(job.channel, reply.logNumber, job.variedFrom);
      } catch {
        /* the new check stands; only its link to the one it came from is missing */
      }
    }
  }
  if (reply.kind !== 'answer' || reply.chart === undefined || reply.chart === null) {
    return { reply, ms: performance.now() - t0 };
  }
  const { chart, ...rest } = reply;
  const r = await renderAnswerChart(chart);
  const out: WorkResult = { reply: { ...rest }, ms: 0 };
  if (r.ok) {
    // a plain byte array of its own (not a view into a pooled buffer) for the trip to the app
    out.png = new Uint8Array(r.png.byteLength);
    out.png.set(r.png);
  } else {
    out.chartNote = r.note;
  }
  out.ms = performance.now() - t0;
  return out;
}
