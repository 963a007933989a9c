/**
 * The renderer: PNG bytes decode (with node-canvas' libpng-based loadImage, independent of our
 * encoder), have the requested size and are not blank; failures become a text-only note.
 * PNG format facts: W3C/ISO 15948 PNG specification (signature 89 50 4E 47 0D 0A 1A 0A, IHDR first).
 */
import { afterEach, describe, expect, it } from 'vitest';
import { createCanvas, loadImage } from 'canvas';
import { checkChartConfig, compareChartConfig, type ChartInput } from '../../src/report/chart.js';
import { configureRenderer, crc32js, encodePng, renderPng, tryRenderPng } from '../../src/report/render.js';
import { callSpread, closedFormCurves, type Gbm } from './chart-closed-forms.js';

const G: Gbm = { s0: 100, mu: 0.09, r: 0.045, q: 0.01, sigma: 0.26, t: 42 / 365 };
const input: ChartInput = {
  position: '+2/−2 call spread 105/115',
  horizon: '2027-02-15',
  view: { drift: 0.09, vol: 0.26 },
  spot: 100,
  strikes: callSpread.strikes,
  breakevens: callSpread.breakevens,
  probProfit: 0.41,
  expectedPnl: 37.5,
  curves: closedFormCurves(G, callSpread.pnl),
  currency: 'USD',
};

async function pixels(png: Buffer) {
  const img = await loadImage(png);
  const c = createCanvas(img.width, img.height);
  const ctx = c.getContext('2d');
  ctx.drawImage(img, 0, 0);
  return { width: img.width, height: img.height, data: ctx.getImageData(0, 0, img.width, img.height).data };
}

/** Distinct colours (quantised to 4 bits a channel) in a rectangle. */
function distinctColours(p: { width: number; data: Uint8ClampedArray }, x0: number, y0: number, x1: number, y1: number): Set<number> {
  const s = new Set<number>();
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const i = (y * p.width + x) * 4;
      s.add(((p.data[i] >> 4) << 8) | ((p.data[i + 1] >> 4) << 4) | (p.data[i + 2] >> 4));
    }
  }
  return s;
}

afterEach(() => configureRenderer());

describe('renderPng', () => {
  it('gives a PNG that decodes at the requested size with a white background and many colours in the plot', async () => {
    const png = await renderPng(checkChartConfig(input));
    expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    const p = await pixels(png);
    expect([p.width, p.height]).toEqual([900, 500]);
    // corner pixel: white background
    expect([...p.data.subarray(0, 4)]).toEqual([255, 255, 255, 255]);
    // the middle of the plot holds the curves, fills, band and markers
    const cols = distinctColours(p, 150, 100, 750, 400);
    expect(cols.size).toBeGreaterThan(12);
    // the view fill: a light blue (b clearly above r) somewhere in the plot
    let blue = 0;
    for (let y = 100; y < 400; y++) for (let x = 150; x < 750; x++) {
      const i = (y * 900 + x) * 4;
      if (p.data[i + 2] - p.data[i] > 40) blue++;
    }
    expect(blue).toBeGreaterThan(1000);
  });

  it('renders other sizes, and the comparison chart', async () => {
    const small = await pixels(await renderPng(checkChartConfig(input, { width: 640, height: 360 })));
    expect([small.width, small.height]).toEqual([640, 360]);
    const override = await pixels(await renderPng(checkChartConfig(input), { width: 700, height: 420 }));
    expect([override.width, override.height]).toEqual([700, 420]);
    const norm = (m: number, s: number) => {
      const x = Array.from({ length: 201 }, (_, i) => m - 5 * s + (10 * s * i) / 200);
      return { x, density: x.map((v) => Math.exp(-0.5 * ((v - m) / s) ** 2) / (s * Math.sqrt(2 * Math.PI))), atoms: [] };
    };
    const cmp = compareChartConfig([
      { label: 'drift 0%', pnlDensity: norm(-20, 300), expectedPnl: -20 },
      { label: 'drift 12%', pnlDensity: norm(150, 320), expectedPnl: 150 },
    ]);
    const c = await pixels(await renderPng(cmp));
    expect([c.width, c.height]).toEqual([900, 500]);
    expect(distinctColours(c, 150, 100, 750, 400).size).toBeGreaterThan(6);
  });

  it('leaves the configuration as it was', async () => {
    const cfg = checkChartConfig(input);
    const before = JSON.stringify(cfg);
    await renderPng(cfg);
    expect(JSON.stringify(cfg)).toBe(before);
  });

  it('renders a configuration that went through JSON (as across a worker boundary)', async () => {
    const png = await renderPng(JSON.parse(JSON.stringify(checkChartConfig(input))));
    expect((await pixels(png)).width).toBe(900);
  });
});

describe('encodePng', () => {
  it('CRC-32 fallback gives the catalogued check value 0xCBF43926 for "123456789" (Williams, A Painless Guide to CRC Error Detection Algorithms)', () => {
    expect(crc32js(Buffer.from('123456789', 'latin1'))).toBe(0xcbf43926);
    expect(crc32js(Buffer.from('xx123456789yy', 'latin1'), 2, 11)).toBe(0xcbf43926);
  });

  it('writes opaque pixels (the charts: white background) exactly, last pixel included', async () => {
    // 5×3 opaque pixels of distinct colours, native little-endian ARGB32 = bytes B, G, R, A
    const w = 5;
    const h = 3;
    const want = Array.from({ length: w * h }, (_, i) => [(i * 37) % 256, (i * 91 + 7) % 256, 255 - i * 11]);
    const raw = Buffer.alloc(w * h * 4);
    want.forEach(([r, g, b], i) => raw.set([b, g, r, 255], i * 4));
    const p = await pixels(await encodePng(raw, w, h));
    expect([p.width, p.height]).toEqual([w, h]);
    const got = Array.from({ length: w * h }, (_, i) => [...p.data.subarray(i * 4, i * 4 + 4)]);
    expect(got).toEqual(want.map((c) => [...c, 255]));
  });

  it('writes premultiplied ARGB pixels as RGB over white that libpng decodes exactly', async () => {
    // 3×2 pixels, native little-endian ARGB32 = bytes B, G, R, A (node-canvas raw format)
    const w = 3;
    const h = 2;
    const px: [number, number, number, number][] = [
      [255, 0, 0, 255],
      [0, 128, 0, 255],
      [0, 0, 255, 255],
      [0, 0, 0, 0], // transparent → white
      [128, 0, 0, 128], // premultiplied half-red over white → (255, 127, 127)
      [17, 34, 51, 255],
    ];
    const raw = Buffer.alloc(w * h * 4);
    px.forEach(([r, g, b, a], i) => raw.set([b, g, r, a], i * 4));
    const p = await pixels(await encodePng(raw, w, h));
    const got = Array.from({ length: w * h }, (_, i) => [...p.data.subarray(i * 4, i * 4 + 3)]);
    expect(got).toEqual([
      [255, 0, 0],
      [0, 128, 0],
      [0, 0, 255],
      [255, 255, 255],
      [255, 127, 127],
      [17, 34, 51],
    ]);
  });
});

describe('failures become a text-only note, never a crash', () => {
  it('a missing font rejects with a clear Error; tryRenderPng gives { ok: false, note }', async () => {
    configureRenderer({ fontFamily: 'Qzxv Missing Face', fontFiles: ['/nonexistent/qzxv.ttf'], boldFontFiles: [] });
    const cfg = checkChartConfig(input);
    await expect(renderPng(cfg)).rejects.toThrow(/chart font missing: "Qzxv Missing Face"/);
    const r = await tryRenderPng(cfg);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.note).toMatch(/font missing.*text only/);
  });

  it('bad sizes and non-charts reject; tryRenderPng never throws', async () => {
    const cfg = checkChartConfig(input);
    for (const size of [{ width: 0, height: 500 }, { width: 900, height: NaN }, { width: 100000, height: 500 }, { width: 900.5, height: 500 }]) {
      await expect(renderPng(cfg, size)).rejects.toThrow(/chart size/);
      const r = await tryRenderPng(cfg, size);
      expect(r.ok).toBe(false);
    }
    for (const bad of [null, undefined, {}, { type: 'line' }, 'chart']) {
      await expect(renderPng(bad as never)).rejects.toThrow(/not a chart/);
      expect((await tryRenderPng(bad as never)).ok).toBe(false);
    }
    // a chart type chart.js does not know
    const r = await tryRenderPng({ ...cfg, type: 'nosuchtype' } as never);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.note).toMatch(/chart not drawn/);
  });

  it('a degenerate position (no curves) gives the config\'s reason as the note; renderPng still draws a placeholder', async () => {
    const empty = checkChartConfig({ ...input, strikes: [], breakevens: [], curves: { spot: [], densityView: [], densityMarket: [], pnl: [], pnlDensity: { x: [], density: [], atoms: [] } } });
    const r = await tryRenderPng(empty);
    expect(r).toEqual({ ok: false, note: expect.stringMatching(/no chart/) });
    const p = await pixels(await renderPng(empty));
    expect(p.width).toBe(900);
  });
});
