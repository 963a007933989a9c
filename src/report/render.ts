/**
 * Chart configuration → PNG bytes, through chart.js and chartjs-node-canvas.
 *
 *  - One ChartJSNodeCanvas per size, created on first use and reused (creating one loads a
 *    fresh chart.js and is slow).
 *  - Kolmo's own chart.js plugin (`kolmo`) draws what chart.js has no native option for: the
 *    profit band, the P&L zero line, labelled marker lines and the stems of point masses. It
 *    reads only `options.plugins.kolmo` (see KolmoPluginOptions in ./chart.ts; drawn by ./chart/plugin.ts).
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
import type { ChartConfiguration } from 'chart.js';
import type { ChartJSNodeCanvas as ChartJSNodeCanvasType } from 'chartjs-node-canvas';
import { DEFAULT_SIZE, type ChartSize, type KolmoPluginOptions } from './chart.js';
import { makePlugin } from './chart/plugin.js';

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
