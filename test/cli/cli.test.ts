/**
 * The `kolmo` command line end to end: the compiled binary (npm test compiles first) run as a
 * child process, as a desk member or a script would run it.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, existsSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kolmo.js');
const tmp = mkdtempSync(join(tmpdir(), 'kolmo-cli-'));
const env = { ...process.env, KOLMO_DB: join(tmp, 'kolmo.db'), KOLMO_OUT: join(tmp, 'out') };

function kolmo(args: string[]): { code: number; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [bin, ...args], { env, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

function json(args: string[]): Record<string, any> {
  const r = kolmo(['--json', ...args]);
  expect(r.code, r.stderr + r.stdout).toBe(0);
  return JSON.parse(r.stdout);
}

const MARKET = 'spot 100 rate 4.5% yield 1% asof 2027-01-04';

describe('kolmo --json check', () => {
  it('answers the two-leg example of the design notes with every field of docs/design.md §4', () => {
    const c = json([
      `check +2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% ${MARKET} drift 9% vol 26% horizon 2027-02-15`,
    ]);
    expect(c.kind).toBe('check');
    expect(c.asof).toBe('2027-01-04');
    expect(c.horizon).toBe('2027-02-15');
    expect(c.horizonYears).toBeCloseTo(42 / 365, 12); // calendar days / 365 (docs/design.md §3)
    expect(c.market).toEqual({ spot: 100, rate: 0.045, yield: 0.01 });
    expect(c.view).toMatchObject({ drift: 0.09, vol: 0.26, model: 'lognormal' });
    expect(c.legs).toHaveLength(2);
    for (const k of ['qty', 'type', 'strike', 'expiry', 'years', 'iv', 'entry', 'value', 'delta', 'gamma', 'vega', 'theta', 'rho', 'probItmRiskNeutral', 'probItmView'])
      expect(c.legs[0]).toHaveProperty(k);
    expect(c.legs[0]).toMatchObject({ qty: 2, type: 'call', strike: 105, expiry: '2027-03-19', iv: 0.28, entry: 3.1 });
    for (const k of ['cost', 'value', 'delta', 'gamma', 'vega', 'theta', 'rho']) expect(Number.isFinite(c.position[k])).toBe(true);
    // cost = Σ qty × mult × entry (docs/design.md §3)
    expect(c.position.cost).toBeCloseTo(2 * 100 * 3.1 - 2 * 100 * 1.05, 9);
    const o = c.outcome;
    for (const k of ['probProfit', 'expectedPnl', 'expectedPnlAtRate', 'viewEdge', 'tailMean05']) expect(Number.isFinite(o[k])).toBe(true);
    // the attribution adds up to the expected P&L, and its drift part is the view edge (docs/design.md §4)
    const a = o.attribution;
    expect(a.entryVsFair + a.carry + a.earlyExercise + a.legIv + a.vol + a.drift).toBeCloseTo(o.expectedPnl, 6);
    expect(o.viewEdge).toBeCloseTo(o.expectedPnl - o.expectedPnlAtRate, 9);
    // the market vol: the iv of the leg nearest the money (105 of 105/115 at spot 100)
    expect(c.marketVol).toBe(0.28);
    expect(o.attribution.drift).toBeCloseTo(o.viewEdge, 9);
    // a debit call spread: bounded both ways
    expect(o.maxGain).not.toBeNull();
    expect(o.maxLoss).not.toBeNull();
    const q = o.pnlQuantiles;
    expect(q.p05 <= q.p25 && q.p25 <= q.p50 && q.p50 <= q.p75 && q.p75 <= q.p95).toBe(true);
    expect(o.tailMean05).toBeLessThanOrEqual(q.p05 + 1e-9);
  });

  it('satisfies put-call parity through the whole pipeline (identity: C − P = S e^{−qT} − K e^{−rT})', () => {
    const c = json([`+1 call 100 2027-07-02 iv 30% -1 put 100 2027-07-02 iv 30% ${MARKET} drift 9%`]);
    const T = c.legs[0].years;
    const perShare = c.position.value / 100;
    expect(perShare).toBeCloseTo(100 * Math.exp(-0.01 * T) - 100 * Math.exp(-0.045 * T), 9);
    // a synthetic forward has delta e^{−qT} per share
    expect(c.position.delta / 100).toBeCloseTo(Math.exp(-0.01 * T), 9);
  });

  it('with no drift the view is the risk-neutral walk and the answer says so', () => {
    const c = json([`+1 put 95 2027-03-19 iv 30% ${MARKET}`]);
    expect(c.view.drift).toBe(0.045);
    expect(c.outcome.viewEdge).toBeCloseTo(0, 9);
    expect(c.notes.join(' ')).toMatch(/drift/i);
  });
});

describe('kolmo --json iv and touch', () => {
  it('iv inverts the value the check reports for a leg (round trip through the command line)', () => {
    const c = json([`+1 call 105 2027-03-19 iv 27.5% ${MARKET}`]);
    const price = c.legs[0].value;
    const v = json([`iv call 105 2027-03-19 price ${price.toFixed(10)} ${MARKET}`]);
    expect(v.kind).toBe('iv');
    expect(v.iv).toBeCloseTo(0.275, 8);
    expect(v.vega).toBeCloseTo(c.legs[0].vega, 6);
  });

  it('touch gives view and risk-neutral probabilities, touching at least as likely as ending beyond', () => {
    const t = json(['touch 120 by 2027-03-19 spot 100 drift 8% vol 25% rate 4.5% asof 2027-01-04']);
    expect(t.kind).toBe('touch');
    expect(t.level).toBe(120);
    for (const k of ['probTouchView', 'probTouchMarket', 'probBeyondAtEndView']) {
      expect(t[k]).toBeGreaterThan(0);
      expect(t[k]).toBeLessThan(1);
    }
    expect(t.probTouchView).toBeGreaterThanOrEqual(t.probBeyondAtEndView);
    // a higher drift makes an upper level likelier
    expect(t.probTouchView).toBeGreaterThan(t.probTouchMarket);
  });
});

describe('kolmo rejections', () => {
  it('exits 2 with a JSON error that points at the bad token', () => {
    const text = `+1 call 105 2027-03-19 iv 28% spot 100 rate 4.5% vol 0.25 asof 2027-01-04`;
    const r = kolmo(['--json', text]);
    expect(r.code).toBe(2);
    const e = JSON.parse(r.stdout);
    expect(e.kind).toBe('error');
    expect(typeof e.message).toBe('string');
    expect(e.at).toBe(text.indexOf('0.25'));
    expect(e.message).toMatch(/25%/);
  });

  it('prints a caret under the first bad token in text mode, with exit code 2', () => {
    const r = kolmo(['+1 call 105 2027-03-19 iv 28% spot 100 frobnicate 3']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/\^/);
    expect(r.stderr).not.toMatch(/at .*\.js:\d+/); // no stack trace
  });
});

describe('kolmo text answer and chart', () => {
  it('prints the table, the assumptions line and the caution, and writes the chart', () => {
    const file = join(tmp, 'spread.png');
    const r = kolmo([`+1 call 100 2027-03-19 @4 iv 28% -1 call 110 2027-03-19 @1.2 iv 26% ${MARKET} drift 10% vol 27%`, '--chart', file]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/chance of profit/);
    expect(r.stdout).toMatch(/Assumptions:/);
    expect(r.stdout).toMatch(/not advice/);
    expect(existsSync(file)).toBe(true);
    const png = readFileSync(file);
    expect(png.subarray(1, 4).toString('latin1')).toBe('PNG');
  });

  it('runs through npx from the checkout', () => {
    const out = execFileSync('npx', ['--no-install', 'kolmo', '--json', `+1 put 90 30d iv 35% ${MARKET}`], { cwd: root, env, encoding: 'utf8' });
    expect(JSON.parse(out).kind).toBe('check');
  });
});

describe('kolmo history --file', () => {
  it('reads a TSV of date, close, keeps it for the channel, and writes the history chart', () => {
    // an invented walk of 60 weekday closes
    const lines = ['date\tclose'];
    let t = Date.UTC(2026, 2, 2);
    let x = 50;
    for (let i = 0; lines.length <= 60; i++, t += 86_400_000) {
      const d = new Date(t);
      if (d.getUTCDay() === 0 || d.getUTCDay() === 6) continue;
      x *= Math.exp(0.015 * Math.sin(i * 1.7));
      lines.push(`${d.toISOString().slice(0, 10)}\t${x.toFixed(2)}`);
    }
    const file = join(tmp, 'quillop.tsv');
    writeFileSync(file, lines.join('\n'));
    const h = json(['--channel', 'hist', 'history QUILLOP yield 2%', '--file', file]);
    expect(h).toMatchObject({ kind: 'history', symbol: 'QUILLOP', n: 60, first: '2026-03-02', source: 'quillop.tsv', kept: 60 });
    expect(h.drift - h.priceDrift - 0.5 * h.vol ** 2).toBeCloseTo(0.02, 12);
    const again = json(['--channel', 'hist', 'history QUILLOP']);
    expect(again.vol).toBe(h.vol);
    const chart = join(tmp, 'out', 'history.png');
    const r = kolmo(['--channel', 'hist', 'history QUILLOP', '--chart', chart]);
    expect(r.code, r.stderr).toBe(0);
    expect(readFileSync(chart).subarray(0, 4).toString('hex')).toBe('89504e47');
  });
  it('a missing file or one that is not text: a clear error, exit 2', () => {
    const miss = kolmo(['history QUILLOP', '--file', join(tmp, 'nope.csv')]);
    expect(miss.code).toBe(2);
    expect(miss.stderr).toMatch(/--file .*nope\.csv/);
    const bin2 = join(tmp, 'x.bin');
    writeFileSync(bin2, Buffer.from([0, 1, 2, 3, 255]));
    const r = kolmo(['history QUILLOP', '--file', bin2]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/not text/);
  });
});

describe('the local console', () => {
  it('ships an invented year of FERNWK closes: `history FERNWK` answers from a fresh database', () => {
    const dir = mkdtempSync(join(tmpdir(), 'kolmo-console-'));
    const r = spawnSync(process.execPath, [join(root, 'bin', 'kolmo-main.js')], {
      env: { PATH: process.env.PATH ?? '', HOME: dir, KOLMO_DB: join(dir, 'k.db'), KOLMO_OUT: join(dir, 'out') },
      input: 'history FERNWK save\n+1 call 90 2027-12-17 iv 30% on FERNWK asof 2027-01-04\nquit\n',
      encoding: 'utf8',
      timeout: 60_000,
    });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/History FERNWK \(the channel's stored history\): 260 closes, 2026-01-02 → 2026-12-31/);
    expect(r.stdout).toMatch(/Saved into the mark FERNWK/);
    expect(r.stdout).toMatch(/the view uses the mark's drift/);
  });
});
