/**
 * Chart configuration → PNG bytes, through chart.js and chartjs-node-canvas.
 *
 *  - One ChartJSNodeCanvas per size, created on first use and reused (creating one loads a
 *    fresh chart.js and is slow).
 *  - Kolmo's own chart.js plugin (`kolmo`) draws what chart.js has no native option for: the
 *    profit band, the P&L zero line, labelled marker lines and the stems of point masses. It
 *    reads only `options.plugins.kolmo` (see KolmoPluginOptions in ./chart.ts).
 *  - Fonts: one family (DejaVu Sans by default), registered from its font file when found,
 *    else confirmed with fontconfig's `fc-list`; when neither finds it the render is refused
 *    with a clear Error rather than drawn with missing glyphs.
 *  - PNG encoding: chart.js draws into the canvas, chartjs-node-canvas hands back its raw
 *    pixels, and a small encoder here writes a standard PNG (8-bit RGB, no filtering, zlib on
 *    the thread pool). It is about twice as fast as the canvas' own encoder at this size.
 */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { promisify } from 'node:util';
import * as zlibNs from 'node:zlib';
import { deflate as deflateCb } from 'node:zlib';
import { createRequire } from 'node:module';
import type { Chart, ChartConfiguration, Plugin } from 'chart.js';
import type { ChartJSNodeCanvas as ChartJSNodeCanvasType } from 'chartjs-node-canvas';
import { DEFAULT_SIZE, type ChartSize, type KolmoPluginOptions, type MarkerKind } from './chart.js';

const require = createRequire(import.meta.url);
const deflate = promisify(deflateCb);
const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

// ---------------------------------------------------------------------------------------------
// Fonts.

export interface RendererSettings {
  /** font family used for every text of the chart */
  fontFamily: string;
  /** font files to register under `fontFamily` (first regular, optionally a bold one); the first that exists wins */
  fontFiles: string[];
  boldFontFiles: string[];
  /** ask fontconfig (`fc-list`) when no font file is found */
  useFontconfig: boolean;
}

const DEFAULT_SETTINGS: RendererSettings = {
  fontFamily: 'DejaVu Sans',
  fontFiles: [
    '/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf',
    '/usr/share/fonts/dejavu/DejaVuSans.ttf',
    '/usr/share/fonts/TTF/DejaVuSans.ttf',
    '/usr/local/share/fonts/DejaVuSans.ttf',
  ],
  boldFontFiles: [
    '/usr/share/fonts/truetype/dejavu/DejaVuSans-Bold.ttf',
    '/usr/share/fonts/dejavu/DejaVuSans-Bold.ttf',
    '/usr/share/fonts/TTF/DejaVuSans-Bold.ttf',
    '/usr/local/share/fonts/DejaVuSans-Bold.ttf',
  ],
  useFontconfig: true,
};

let settings: RendererSettings = { ...DEFAULT_SETTINGS };
let fontCheck: { ok: true } | { ok: false; error: string } | null = null;
const registered = new Set<string>();
const canvases = new Map<string, ChartJSNodeCanvasType>();

/**
 * Changes the renderer's font settings (all fields optional; no argument restores the
 * defaults). Clears the cached canvases so the next render uses the new family.
 */
export function configureRenderer(s: Partial<RendererSettings> = {}): void {
  settings = { ...DEFAULT_SETTINGS, ...s };
  fontCheck = null;
  canvases.clear();
}

export function rendererSettings(): Readonly<RendererSettings> {
  return settings;
}

function checkFont(): { ok: true } | { ok: false; error: string } {
  if (fontCheck) return fontCheck;
  const { registerFont } = require('canvas') as typeof import('canvas');
  const regular = settings.fontFiles.find((f) => existsSync(f));
  if (regular) {
    try {
      const key = `${settings.fontFamily}|${regular}`;
      if (!registered.has(key)) {
        registerFont(regular, { family: settings.fontFamily });
        const bold = settings.boldFontFiles.find((f) => existsSync(f));
        if (bold) registerFont(bold, { family: settings.fontFamily, weight: 'bold' });
        registered.add(key);
      }
      fontCheck = { ok: true };
      return fontCheck;
    } catch (e) {
      // fall through to fontconfig
      void e;
    }
  }
  if (settings.useFontconfig) {
    try {
      const out = execFileSync('fc-list', [`${settings.fontFamily}`, 'family'], { encoding: 'utf8', timeout: 5000, stdio: ['ignore', 'pipe', 'ignore'] });
      const want = settings.fontFamily.toLowerCase();
      if (out.split('\n').some((line) => line.toLowerCase().split(',').some((f) => f.trim() === want))) {
        fontCheck = { ok: true };
        return fontCheck;
      }
    } catch {
      // fc-list missing or failed: treated as "not found"
    }
  }
  fontCheck = {
    ok: false,
    error: `chart font missing: "${settings.fontFamily}" was found neither as a font file (${settings.fontFiles.join(', ') || 'none given'}) nor by fontconfig`,
  };
  return fontCheck;
}

// ---------------------------------------------------------------------------------------------
// Kolmo's chart.js plugin.

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

function makePlugin(family: string): Plugin {
  return {
    id: 'kolmo',
    beforeDraw(chart) {
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
    },
    beforeDatasetsDraw(chart) {
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
    },
    afterDatasetsDraw(chart) {
      const o = pluginOptions(chart);
      const x = chart.scales.x;
      if (!o || !x) return;
      const { ctx, chartArea: a } = chart;
      ctx.save();
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
        g.forEach((p, i) => {
          const px = g.length > 1 ? centre + (i - (g.length - 1) / 2) * gap : p.px;
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
      ctx.restore();
    },
    afterDraw(chart) {
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
    },
  };
}

// ---------------------------------------------------------------------------------------------
// PNG encoding (ISO/IEC 15948 / W3C PNG specification: signature, IHDR, IDAT, IEND; CRC-32).

const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

const nativeCrc32 = (zlibNs as { crc32?: (data: Uint8Array, value?: number) => number }).crc32;

function crc32(buf: Buffer, start: number, end: number): number {
  if (nativeCrc32) return nativeCrc32(buf.subarray(start, end)) >>> 0;
  return crc32js(buf, start, end);
}

/** CRC-32 (IEEE 802.3, reflected, as PNG uses) in plain JS, for Node versions without zlib.crc32. */
export function crc32js(buf: Uint8Array, start = 0, end = buf.length): number {
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = CRC_TABLE[(c ^ buf[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Buffer): Buffer {
  const out = Buffer.alloc(12 + data.length);
  out.writeUInt32BE(data.length, 0);
  out.write(type, 4, 'latin1');
  data.copy(out, 8);
  out.writeUInt32BE(crc32(out, 4, 8 + data.length), 8 + data.length);
  return out;
}

/**
 * Raw canvas pixels (premultiplied ARGB32 in native byte order, as node-canvas returns them)
 * → PNG bytes. Opaque images (every chart: the background is painted white) are written as
 * 8-bit RGBA straight from the canvas bytes; others as 8-bit RGB composited over white.
 * `raw` may be modified (byte-swapped in place).
 */
export async function encodePng(raw: Buffer, width: number, height: number): Promise<Buffer> {
  const n = width * height;
  if (!(width > 0 && height > 0) || raw.length < n * 4) throw new Error(`chart rendering failed: ${raw.length} raw bytes for ${width}×${height}`);
  const px = raw.byteOffset % 4 === 0 ? new Uint32Array(raw.buffer, raw.byteOffset, n) : new Uint32Array(Uint8Array.from(raw.subarray(0, n * 4)).buffer);
  let opaque = true;
  for (let i = 0; i < n; i++) {
    if (px[i] < 0xff000000) {
      opaque = false;
      break;
    }
  }
  let rows: Buffer;
  let colourType: number;
  if (opaque) {
    // Each pixel 0xAARRGGBB as a native 32-bit word. In memory, big-endian words read A R G B;
    // little-endian ones are swapped to that order. Read from byte 1 on, A R G B A R G B … is
    // R G B A R G B A … — the next pixel's alpha, which is 255 like every alpha here.
    const bytes = Buffer.from(px.buffer, px.byteOffset, n * 4);
    if (LITTLE_ENDIAN) bytes.swap32();
    const stride = width * 4 + 1;
    rows = Buffer.allocUnsafe(stride * height);
    for (let y = 0; y < height; y++) {
      const o = y * stride;
      rows[o] = 0; // filter: none
      const from = y * width * 4 + 1;
      const to = Math.min(from + width * 4, n * 4);
      bytes.copy(rows, o + 1, from, to);
      if (to - from < width * 4) rows[o + width * 4] = 255; // the very last alpha
    }
    colourType = 6; // RGBA
  } else {
    const stride = width * 3 + 1;
    rows = Buffer.allocUnsafe(stride * height);
    let s = 0;
    for (let y = 0; y < height; y++) {
      let o = y * stride;
      rows[o++] = 0; // filter: none
      for (let x = 0; x < width; x++, s++) {
        const p = px[s];
        const w = 255 - (p >>> 24); // premultiplied colour over white: c + (255 − a)
        rows[o++] = ((p >>> 16) & 255) + w;
        rows[o++] = ((p >>> 8) & 255) + w;
        rows[o++] = (p & 255) + w;
      }
    }
    colourType = 2; // RGB
  }
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(width, 0);
  ihdr.writeUInt32BE(height, 4);
  ihdr[8] = 8; // bit depth
  ihdr[9] = colourType;
  ihdr[10] = 0;
  ihdr[11] = 0;
  ihdr[12] = 0;
  // level 3: a tenth of level 6's time on flat chart images for ~15% more bytes
  const idat = await deflate(rows, { level: 3, chunkSize: 1 << 20 });
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr),
    chunk('IDAT', idat),
    chunk('IEND', Buffer.alloc(0)),
  ]);
}

// ---------------------------------------------------------------------------------------------
// Rendering.

export const MAX_SIDE = 4000;
const MAX_CACHED_SIZES = 8;
export const MIN_SIDE = 50;

function sizeOf(config: ChartConfiguration | undefined, size?: ChartSize): ChartSize {
  const fromConfig = (config?.options?.plugins as { kolmo?: KolmoPluginOptions } | undefined)?.kolmo?.size;
  const s = size ?? fromConfig ?? DEFAULT_SIZE;
  const ok = (v: unknown) => typeof v === 'number' && Number.isInteger(v) && v >= MIN_SIDE && v <= MAX_SIDE;
  if (!s || !ok(s.width) || !ok(s.height)) {
    throw new Error(`chart size must be whole pixels from ${MIN_SIDE} to ${MAX_SIDE} on each side; got ${JSON.stringify(s ?? null)}`);
  }
  return { width: s.width, height: s.height };
}

function canvasFor(size: ChartSize): ChartJSNodeCanvasType {
  const key = `${size.width}x${size.height}|${settings.fontFamily}`;
  let c = canvases.get(key);
  if (!c) {
    const { ChartJSNodeCanvas } = require('chartjs-node-canvas') as typeof import('chartjs-node-canvas');
    const family = settings.fontFamily;
    c = new ChartJSNodeCanvas({
      width: size.width,
      height: size.height,
      backgroundColour: '#ffffff',
      plugins: { modern: [makePlugin(family)] },
      chartCallback: (C) => {
        C.defaults.font.family = `"${family}"`;
        C.defaults.color = '#1f1f1f';
        C.defaults.devicePixelRatio = 1;
      },
    });
    // a few sizes at most in practice; keep the cache bounded anyway (oldest out first)
    if (canvases.size >= MAX_CACHED_SIZES) canvases.delete(canvases.keys().next().value as string);
    canvases.set(key, c);
  }
  return c;
}

/**
 * Renders a chart configuration to PNG bytes. The configuration is not modified. Rejects with a
 * clear Error when the font is missing, the size is out of bounds, the configuration is not a
 * chart, or the canvas fails.
 */
export async function renderPng(config: ChartConfiguration, size?: ChartSize): Promise<Buffer> {
  if (!config || typeof config !== 'object' || typeof (config as { type?: unknown }).type !== 'string' || !config.data) {
    throw new Error('chart rendering failed: the configuration is not a chart (no type or data)');
  }
  const sz = sizeOf(config, size);
  const font = checkFont();
  if (!font.ok) throw new Error(font.error);
  let raw: Buffer;
  try {
    const copy = structuredClone(config) as ChartConfiguration;
    raw = canvasFor(sz).renderToBufferSync(copy, 'raw' as 'image/png');
  } catch (e) {
    throw new Error(`chart rendering failed: ${e instanceof Error ? e.message : String(e)}`);
  }
  return encodePng(raw, sz.width, sz.height);
}

export type RenderOutcome = { ok: true; png: Buffer } | { ok: false; note: string };

/**
 * Like renderPng, but never throws: a configuration that says there is nothing to draw, or any
 * rendering failure, gives `{ ok: false, note }` for a text-only answer.
 */
export async function tryRenderPng(config: ChartConfiguration, size?: ChartSize): Promise<RenderOutcome> {
  try {
    const empty = (config?.options?.plugins as { kolmo?: KolmoPluginOptions } | undefined)?.kolmo?.empty;
    if (typeof empty === 'string' && empty) return { ok: false, note: empty };
    return { ok: true, png: await renderPng(config, size) };
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e);
    return { ok: false, note: `chart not drawn (${msg}); the answer is text only` };
  }
}
