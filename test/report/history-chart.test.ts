/**
 * The history chart: a serialisable configuration with the closes on the left and the histogram
 * of log returns beside the fitted normal on the right; the histogram has area one (a density) and
 * the renderer draws it (PNG signature and size per the W3C/ISO 15948 PNG specification).
 */
import { writeFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createCanvas, loadImage } from 'canvas';
import { estimateHistory } from '../../src/core/history.js';
import { DEMO_HISTORY, DEMO_HISTORY_SYMBOL } from '../../src/demo/history.js';
import { historyChartConfig, historyChartInput } from '../../src/report/history-chart.js';
import { renderPng } from '../../src/report/render.js';

const closes = DEMO_HISTORY.map(([date, close]) => ({ date, close }));
const est = estimateHistory(closes, 0.012);
const input = historyChartInput(DEMO_HISTORY_SYMBOL, closes, est);

describe('history chart', () => {
  it('is plain JSON, with the closes and a histogram of area one', () => {
    const cfg = historyChartConfig(input);
    expect(JSON.parse(JSON.stringify(cfg))).toEqual(cfg);
    const ds = cfg.data.datasets;
    expect(ds[0].data).toEqual(closes.map((c) => c.close));
    const hist = ds[1].data as { x: number; y: number }[];
    let area = 0;
    for (let i = 1; i < hist.length; i++) area += (hist[i].x - hist[i - 1].x) * (hist[i].y + hist[i - 1].y) / 2;
    expect(area).toBeCloseTo(1, 10);
    // the fitted normal has area one on its range (trapezoid rule, ±4 s.d. at least)
    const nrm = ds[2].data as { x: number; y: number }[];
    let a2 = 0;
    for (let i = 1; i < nrm.length; i++) a2 += (nrm[i].x - nrm[i - 1].x) * (nrm[i].y + nrm[i - 1].y) / 2;
    expect(a2).toBeGreaterThan(0.999);
    expect(a2).toBeLessThan(1.0001);
  });
  it('renders to a PNG of the default size with ink in both halves', async () => {
    const png = await renderPng(historyChartConfig(input));
    expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    if (process.env.KOLMO_CHART_OUT) writeFileSync(process.env.KOLMO_CHART_OUT, png);
    const img = await loadImage(png);
    if (process.env.KOLMO_CHART_OUT) writeFileSync(process.env.KOLMO_CHART_OUT, png);
    expect([img.width, img.height]).toEqual([900, 500]);
    const c = createCanvas(img.width, img.height);
    const ctx = c.getContext('2d');
    ctx.drawImage(img, 0, 0);
    const blue = (x0: number, x1: number) => {
      const d = ctx.getImageData(x0, 80, x1 - x0, 300).data;
      let n = 0;
      for (let i = 0; i < d.length; i += 4) if (d[i + 2] - d[i] > 40) n++;
      return n;
    };
    expect(blue(60, 480)).toBeGreaterThan(100); // the closes (blue line) on the left
    expect(blue(560, 880)).toBeGreaterThan(100); // the histogram (sky blue fill) on the right
  });
});
