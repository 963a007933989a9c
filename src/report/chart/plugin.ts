/**
 * Kolmo's chart.js plugin: draws what chart.js has no native option for (the profit band, the P&L
 * zero line, labelled marker lines, the stems of point masses, the "no chart" note), reading only
 * `options.plugins.kolmo` (KolmoPluginOptions, ./style.ts).
 */
import type { Chart, Plugin } from 'chart.js';
import type { KolmoPluginOptions, MarkerKind } from './style.js';

const MARKER_STYLE: Record<MarkerKind, { color: string; width: number; dash: number[] }> = {
  spot: { color: '#3a3a3a', width: 1.6, dash: [] },
  strike: { color: '#6a6a6a', width: 1.3, dash: [2, 3] },
  breakeven: { color: '#007a59', width: 1.8, dash: [7, 4] },
  zero: { color: '#6a6a6a', width: 1.4, dash: [] },
  mean: { color: '#000000', width: 1.5, dash: [3, 3] },
};
const MARKER_PRIORITY: Record<MarkerKind, number> = { spot: 0, zero: 0, breakeven: 1, strike: 2, mean: 3 };

function pluginOptions(chart: Chart): KolmoPluginOptions | undefined {
  const o = (chart.options.plugins as { kolmo?: KolmoPluginOptions } | undefined)?.kolmo;
  return o && typeof o === 'object' ? o : undefined;
}

const finite = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

/** node-canvas: horizontal text as glyphs (about five times faster), rotated text as paths. */
function glyphText(chart: Chart): void {
  // node-canvas: draw horizontal text as glyphs rather than paths (about five times faster
  // at this size); rotated text (the y-axis titles) stays in path mode, where glyph mode
  // spaces letters unevenly. Context properties of node-canvas only; ignored elsewhere.
  const ctx = chart.ctx as unknown as {
    textDrawingMode?: string;
    currentTransform?: { b: number; c: number };
    fillText: (t: string, x: number, y: number, w?: number) => void;
    kolmoText?: boolean;
  };
  if (ctx.kolmoText || !('textDrawingMode' in ctx)) return;
  const fill = ctx.fillText.bind(ctx);
  ctx.fillText = (t, x, y, w) => {
    const m = ctx.currentTransform;
    ctx.textDrawingMode = m && (Math.abs(m.b) > 1e-9 || Math.abs(m.c) > 1e-9) ? 'path' : 'glyph';
    if (w === undefined) fill(t, x, y);
    else fill(t, x, y, w);
  };
  ctx.kolmoText = true;
}

/** The profit bands and the horizontal lines, under the datasets. */
function drawBands(chart: Chart, family: string): void {
  const o = pluginOptions(chart);
  const x = chart.scales.x;
  if (!o || !x) return;
  const { ctx, chartArea: a } = chart;
  ctx.save();
  ctx.beginPath();
  ctx.rect(a.left, a.top, a.right - a.left, a.bottom - a.top);
  ctx.clip();
  ctx.fillStyle = o.bandColor;
  for (const b of o.bands ?? []) {
    if (!finite(b.from) || !finite(b.to)) continue;
    const p0 = Math.max(a.left, x.getPixelForValue(b.from));
    const p1 = Math.min(a.right, x.getPixelForValue(b.to));
    if (p1 > p0) ctx.fillRect(p0, a.top, p1 - p0, a.bottom - a.top);
  }
  for (const h of o.hlines ?? []) {
    const s = chart.scales[h.axis];
    if (!s || !finite(h.y)) continue;
    const py = s.getPixelForValue(h.y);
    if (py < a.top - 0.5 || py > a.bottom + 0.5) continue;
    ctx.strokeStyle = h.color;
    ctx.lineWidth = h.width;
    ctx.setLineDash(h.dash ?? []);
    ctx.beginPath();
    ctx.moveTo(a.left, py);
    ctx.lineTo(a.right, py);
    ctx.stroke();
    if (h.label) {
      ctx.font = `12px "${family}"`;
      ctx.fillStyle = h.color;
      ctx.textAlign = 'right';
      ctx.textBaseline = 'bottom';
      ctx.fillText(h.label, a.right - 4, py - 3);
    }
  }
  ctx.restore();
}

/** Stems of point masses. */
function drawStems(chart: Chart, o: KolmoPluginOptions, family: string): void {
  const x = chart.scales.x;
  const { ctx, chartArea: a } = chart;
  // Stems of point masses. Stems of several checks at (nearly) one value stand side by side
  // and their labels stack above the tallest, each in its check's colour.
  ctx.font = `12px "${family}"`;
  ctx.textAlign = 'center';
  ctx.textBaseline = 'bottom';
  const placed = (o.stems ?? [])
    .map((s) => ({ s, sc: chart.scales[s.axis] }))
    .filter(({ s, sc }) => sc && finite(s.x) && finite(s.y))
    .map(({ s, sc }) => ({ s, px: x.getPixelForValue(s.x), base: Math.min(a.bottom, sc.getPixelForValue(0)), top: Math.max(a.top, sc.getPixelForValue(s.y)) }))
    .filter((p) => p.px >= a.left - 0.5 && p.px <= a.right + 0.5)
    .sort((p1, p2) => p1.px - p2.px);
  const groups: (typeof placed)[] = [];
  for (const p of placed) {
    const g = groups[groups.length - 1];
    if (g && p.px - g[0].px < 24) g.push(p);
    else groups.push([p]);
  }
  for (const g of groups) {
    const centre = g.reduce((t, p) => t + p.px, 0) / g.length;
    const gap = 9;
    // equal atoms (stems marked `together`: one P&L) are drawn at one place, the tallest behind
    const oneValue = g.length > 1 && g.every((p) => p.s.together && p.s.x === g[0].s.x);
    if (oneValue) g.sort((p1, p2) => p1.top - p2.top);
    g.forEach((p, i) => {
      const px = oneValue ? p.px : g.length > 1 ? centre + (i - (g.length - 1) / 2) * gap : p.px;
      ctx.strokeStyle = p.s.color;
      ctx.fillStyle = p.s.color;
      ctx.setLineDash([]);
      ctx.lineWidth = 3;
      ctx.beginPath();
      ctx.moveTo(px, p.base);
      ctx.lineTo(px, p.top);
      ctx.stroke();
      ctx.beginPath();
      ctx.arc(px, p.top, 4, 0, Math.PI * 2);
      ctx.fill();
    });
    const highest = Math.min(...g.map((p) => p.top));
    const labelled = g.filter((p) => p.s.label).sort((p1, p2) => p1.top - p2.top);
    labelled.forEach((p, j) => {
      const y = highest - 7 - (labelled.length - 1 - j) * 13;
      ctx.fillStyle = p.s.color;
      ctx.fillText(p.s.label, centre, Math.max(a.top + 11, y));
    });
  }
}

/** Marker lines, their labels in the strip above the plot, each on a white box. */
function drawMarkers(chart: Chart, o: KolmoPluginOptions, family: string): void {
  const x = chart.scales.x;
  const { ctx, chartArea: a } = chart;
  // Marker lines, and their labels in the strip above the plot area.
  const strip = Math.max(0, o.labelStrip ?? 0);
  const rowH = 16;
  const rows = Math.max(0, Math.floor((strip - 4) / rowH));
  const taken: [number, number][][] = Array.from({ length: rows }, () => []);
  ctx.font = `13px "${family}"`;
  ctx.textBaseline = 'alphabetic';
  const markers = [...(o.markers ?? [])]
    .filter((m) => finite(m.x))
    .sort((m1, m2) => MARKER_PRIORITY[m1.kind] - MARKER_PRIORITY[m2.kind] || m1.x - m2.x);
  const labels: { text: string; cx: number; baseline: number; w: number; color: string }[] = [];
  for (const m of markers) {
    const st = MARKER_STYLE[m.kind] ?? MARKER_STYLE.strike;
    const color = m.color ?? st.color;
    const px = x.getPixelForValue(m.x);
    if (px < a.left - 0.5 || px > a.right + 0.5) continue;
    if (m.kind === 'mean') {
      // a small triangle on the x axis pointing at the value
      ctx.fillStyle = color;
      ctx.beginPath();
      ctx.moveTo(px, a.bottom - 11);
      ctx.lineTo(px - 6, a.bottom);
      ctx.lineTo(px + 6, a.bottom);
      ctx.closePath();
      ctx.fill();
      continue;
    }
    // Find a label row (row 0 is nearest the plot); the line runs up to its label.
    let lineTop = a.top;
    if (m.label && rows > 0) {
      const w = ctx.measureText(m.label).width + 8;
      let l = px - w / 2;
      l = Math.max(2, Math.min(chart.width - 2 - w, l));
      const r = l + w;
      const row = taken.findIndex((spans) => spans.every(([s0, s1]) => r <= s0 || l >= s1));
      if (row >= 0) {
        taken[row].push([l, r]);
        const baseline = a.top - 5 - row * rowH;
        labels.push({ text: m.label, cx: l + w / 2, baseline, w, color });
        lineTop = baseline + 2;
      }
    }
    ctx.strokeStyle = color;
    ctx.lineWidth = st.width;
    ctx.setLineDash(st.dash);
    ctx.beginPath();
    ctx.moveTo(px, a.bottom);
    ctx.lineTo(px, lineTop);
    ctx.stroke();
  }
  // Labels last, each on a white box so no line runs through its text.
  ctx.textAlign = 'center';
  for (const lb of labels) {
    ctx.fillStyle = '#ffffff';
    ctx.fillRect(lb.cx - lb.w / 2, lb.baseline - 13, lb.w, 16);
    ctx.fillStyle = lb.color;
    ctx.fillText(lb.text, lb.cx, lb.baseline);
  }
}

/** The "no chart" note in the middle of the plot area. */
function drawEmpty(chart: Chart, family: string): void {
  const o = pluginOptions(chart);
  if (!o?.empty) return;
  const { ctx, chartArea: a } = chart;
  ctx.save();
  ctx.font = `15px "${family}"`;
  ctx.textAlign = 'center';
  ctx.textBaseline = 'middle';
  const cx = (a.left + a.right) / 2;
  const cy = (a.top + a.bottom) / 2;
  const w = ctx.measureText(o.empty).width + 24;
  ctx.fillStyle = '#ffffff';
  ctx.fillRect(cx - w / 2, cy - 14, w, 28);
  ctx.fillStyle = '#444444';
  ctx.fillText(o.empty, cx, cy);
  ctx.restore();
}

export function makePlugin(family: string): Plugin {
  return {
    id: 'kolmo',
    beforeDraw: glyphText,
    beforeDatasetsDraw: (chart) => drawBands(chart, family),
    afterDatasetsDraw(chart) {
      const o = pluginOptions(chart);
      if (!o || !chart.scales.x) return;
      chart.ctx.save();
      drawStems(chart, o, family);
      drawMarkers(chart, o, family);
      chart.ctx.restore();
    },
    afterDraw: (chart) => drawEmpty(chart, family),
  };
}
