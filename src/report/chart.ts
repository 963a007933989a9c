/**
 * Result → chart configuration (pure). The chart reads a check result and never recomputes
 * finance: every density and P&L value drawn is one the engine sampled (docs/design.md §6).
 *
 * Kolmo's chart design (its own, not any trading program's look):
 *  - white background, about 900×500, DejaVu Sans chosen by the renderer (src/report/render.ts);
 *  - colours from the Okabe–Ito palette, which stays distinguishable for the common forms of
 *    colour blindness, and a line style as a second cue:
 *      view density          blue #0072B2, solid, filled;
 *      market walk's density vermillion #D55E00, dashed, unfilled;
 *      P&L at the horizon    near-black, solid, thick, on the right-hand axis, with its zero line;
 *      profit region         pale bluish green #009E73 band over the spots where P&L > 0;
 *      markers               spot (solid grey), strikes (dotted grey), breakevens (dashed green),
 *                            labelled in a strip above the plot so no label covers a curve.
 *  - the configuration is a plain JSON-serialisable object (no functions), so it can be built in
 *    one thread and rendered in another; what chart.js cannot say natively (marker lines with
 *    labels, the profit band, atoms of a P&L distribution) goes to Kolmo's own small plugin under
 *    `options.plugins.kolmo` (drawn by src/report/render.ts).
 *
 * The pieces: chart/style.ts (plugin options, inputs, palette), chart/scale.ts (ranges, ticks,
 * areas, quantiles, thinning), chart/axes.ts (axes, base options, profit bands),
 * chart/check-chart.ts (one check), chart/compare-chart.ts (a comparison); numbers are written by
 * ./format.ts.
 */
export * from './chart/style.js';
export * from './chart/scale.js';
export { profitBands } from './chart/axes.js';
export { checkChartConfig, chartInputFromCheck } from './chart/check-chart.js';
export { compareChartConfig, type CompareChartOptions } from './chart/compare-chart.js';
export { describeView, fmtChance, fmtMoney, fmtPct, fmtPrice } from './format.js';
