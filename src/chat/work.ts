/**
 * One unit of heavy work for the chat app: the engine's answer and its chart as PNG bytes.
 * Runs inside a worker process (worker.ts) or, with KOLMO_WORKERS=0, on the main thread.
 */
import { ask } from '../service.js';
import type { Reply } from '../reply.js';
import { renderAnswerChart } from '../report/answer-chart.js';
import type { Store } from '../store/store.js';

export interface Job {
  text: string;
  channel: string;
  user: string;
  /** ISO time the request arrived */
  now: string;
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

export async function work(job: Job, store: Store | null): Promise<WorkResult> {
  const t0 = performance.now();
  const reply = await ask(job.text, { channel: job.channel, user: job.user, now: new Date(job.now), store, inWorkspace: true });
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
