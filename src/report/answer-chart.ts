/**
 * Turns the chart part of an answer (a plain chart input: see ./chart-input.ts and ./compare.ts)
 * into PNG bytes. Never throws: a failure becomes a note, and the shell sends the text alone.
 */
import { checkChartConfig, compareChartConfig, type ChartInput } from './chart.js';
import { historyChartConfig, type HistoryChartInput } from './history-chart.js';
import { tryRenderPng } from './render.js';

export type AnswerChart =
  | (ChartInput & { kind?: 'check' })
  | { kind: 'compare'; inputs: Parameters<typeof compareChartConfig>[0] }
  | HistoryChartInput;

export async function renderAnswerChart(chart: unknown): Promise<{ ok: true; png: Buffer } | { ok: false; note: string }> {
  try {
    const c = chart as AnswerChart;
    const config =
      c.kind === 'compare' ? compareChartConfig(c.inputs) : c.kind === 'history' ? historyChartConfig(c) : checkChartConfig(c as ChartInput);
    return await tryRenderPng(config);
  } catch (err) {
    return { ok: false, note: `the chart could not be drawn (${err instanceof Error ? err.message : String(err)})` };
  }
}
