/**
 * Input that accepts what Kolmo itself prints (issue: "input that forgives"), end to end through
 * the compiled `kolmo --json` command line. Each form is checked against the same request written
 * in the canonical grammar (identity: two spellings of one position give the same figures).
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kolmo.js');
const tmp = mkdtempSync(join(tmpdir(), 'kolmo-forms-'));
const env = { ...process.env, KOLMO_DB: join(tmp, 'kolmo.db'), KOLMO_OUT: join(tmp, 'out') };

function run(args: string[]): { code: number; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [bin, '--no-log', ...args], { env, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

function json(request: string): Record<string, any> {
  const r = run(['--json', request]);
  expect(r.code, `${request}\n${r.stderr}${r.stdout}`).toBe(0);
  return JSON.parse(r.stdout);
}

function text(request: string): string {
  const r = run([request]);
  expect(r.code, r.stderr + r.stdout).toBe(0);
  return r.stdout;
}

/** The figures of two checks agree (the same position written two ways). */
function same(a: Record<string, any>, b: Record<string, any>) {
  expect(a.legs.map((l: any) => [l.qty, l.type, l.strike, l.expiry, l.iv])).toEqual(b.legs.map((l: any) => [l.qty, l.type, l.strike, l.expiry, l.iv]));
  expect(a.position).toEqual(b.position);
  expect(a.outcome).toEqual(b.outcome);
  expect(a.horizon).toBe(b.horizon);
}

const MKT = 'spot 100 rate 4.5% yield 1% drift 8% asof 2027-01-04';

describe('a trailing iv applies to every leg without one', () => {
  const condor = `+1 put 85 2027-03-19 -1 put 90 2027-03-19 -1 call 110 2027-03-19 +1 call 115 2027-03-19 iv 25% ${MKT}`;

  it('the four-leg condor typed the natural way', () => {
    const c = json(condor);
    expect(c.legs.map((l: any) => l.iv)).toEqual([0.25, 0.25, 0.25, 0.25]);
    same(c, json(`+1 put 85 2027-03-19 -1 put 90 2027-03-19 -1 call 110 2027-03-19 +1 call 115 2027-03-19 ${MKT} iv 25%`));
    expect(c.notes.join(' ')).toMatch(/iv 25%.*every leg|every leg.*iv 25%/i);
    expect(text(condor)).toMatch(/iv 25%.*every leg|every leg.*iv 25%/i);
  });

  it('a leg with its own iv keeps it', () => {
    const c = json(`+1 call 100 2027-03-19 iv 30% -1 call 110 2027-03-19 +1 call 120 2027-03-19 iv 22% ${MKT}`);
    expect(c.legs.map((l: any) => l.iv)).toEqual([0.3, 0.22, 0.22]);
  });

  it('a position-level iv written after a market term is not overridden by a trailing leg iv', () => {
    const c = json(`+1 call 100 2027-03-19 -1 call 110 2027-03-19 iv 22% ${MKT} iv 30%`);
    expect(c.legs.map((l: any) => l.iv)).toEqual([0.3, 0.22]);
  });
});

describe('expiries as Kolmo prints them, and month codes', () => {
  it('19Mar27 is 2027-03-19', () => {
    same(json(`+1 call 100 19Mar27 iv 30% ${MKT}`), json(`+1 call 100 2027-03-19 iv 30% ${MKT}`));
    same(json(`+1 call 100 19mar27 iv 30% ${MKT} horizon 15Feb27`), json(`+1 call 100 2027-03-19 iv 30% ${MKT} horizon 2027-02-15`));
  });

  it('Mar27 is the third Friday of March 2027, 2027-03-19 (common practice: monthly options expire on the third Friday)', () => {
    const c = json(`+1 call 100 Mar27 iv 30% ${MKT}`);
    expect(c.legs[0].expiry).toBe('2027-03-19');
    // June 2027 starts on a Tuesday: Fridays 4, 11, 18 → the 18th
    expect(json(`-1 put 90 jun27 iv 30% ${MKT}`).legs[0].expiry).toBe('2027-06-18');
    // January 2027 starts on a Friday: 1, 8, 15 → the 15th
    expect(json(`+1 put 90 Jan27 iv 30% ${MKT}`).legs[0].expiry).toBe('2027-01-15');
  });

  it('help states the month code rule', () => {
    expect(text('help check')).toMatch(/third Friday/);
  });

  it('an expiry printed by a check is accepted back as typed', () => {
    // the table prints expiries in the short style; typing one back gives the same leg
    const t = text(`+1 call 100 2027-04-16 iv 30% ${MKT}`);
    expect(t).toMatch(/16Apr27/);
    expect(json(`+1 call 100 16Apr27 iv 30% ${MKT}`).legs[0].expiry).toBe('2027-04-16');
  });
});

describe('buy/sell and multipliers', () => {
  it('buy and sell as the sign', () => {
    same(
      json(`buy 2 call 105 2027-03-19 @3.10 iv 28% sell 2 call 115 2027-03-19 @1.05 iv 25% ${MKT}`),
      json(`+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% ${MKT}`),
    );
    same(json(`sell 1 put 95 2027-03-19 iv 30% ${MKT}`), json(`-1 put 95 2027-03-19 iv 30% ${MKT}`));
    same(json(`buy call 100 2027-03-19 iv 30% ${MKT}`), json(`+1 call 100 2027-03-19 iv 30% ${MKT}`));
  });

  it('2x as a quantity', () => {
    same(json(`2x call 105 2027-03-19 iv 28% ${MKT}`), json(`+2 call 105 2027-03-19 iv 28% ${MKT}`));
    same(json(`sell 3x put 95 2027-03-19 iv 30% ${MKT}`), json(`-3 put 95 2027-03-19 iv 30% ${MKT}`));
    same(json(`-2x call 110 2027-03-19 iv 30% ${MKT}`), json(`-2 call 110 2027-03-19 iv 30% ${MKT}`));
  });

  it('buy with a signed quantity is refused with a clear error', () => {
    const r = run(['--json', `sell -2 call 110 2027-03-19 iv 30% ${MKT}`]);
    expect(r.code).toBe(2);
    const e = JSON.parse(r.stdout);
    expect(e.kind).toBe('error');
    expect(e.at).toBe(5);
  });
});
