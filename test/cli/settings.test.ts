/**
 * The command line reads its settings through the one schema of src/config.ts: a malformed
 * KOLMO_COMPUTE_BUDGET is refused with a message naming it and exit code 2 (it used to be
 * ignored silently), and a valid one is honoured (a check over it is refused before the engine runs).
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kolmo.js');
const tmp = mkdtempSync(join(tmpdir(), 'kolmo-cli-settings-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

const CHECK = 'check +1 call 105 2027-03-19 @3.10 iv 28% spot 100 rate 4.5% drift 9% asof 2027-01-04';

function kolmo(args: string[], extra: Record<string, string>, input?: string): { code: number; stdout: string; stderr: string } {
  const env = { PATH: process.env.PATH ?? '', HOME: tmp, KOLMO_DB: join(tmp, 'kolmo.db'), KOLMO_OUT: join(tmp, 'out'), ...extra };
  const r = spawnSync(process.execPath, [bin, ...args], { env, encoding: 'utf8', timeout: 60_000, cwd: tmp, ...(input !== undefined ? { input } : {}) });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

describe('settings of the command line', () => {
  it('a malformed compute budget stops it with one message naming the variable, exit code 2', () => {
    const r = kolmo(['--no-log', CHECK], { KOLMO_COMPUTE_BUDGET: 'lots' });
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('KOLMO_COMPUTE_BUDGET="lots" is malformed');
    expect(r.stdout).toBe('');
  });

  it('a negative or fractional budget is malformed too', () => {
    for (const bad of ['-5', '2.5', '0']) {
      const r = kolmo(['--no-log', CHECK], { KOLMO_COMPUTE_BUDGET: bad });
      expect(r.code, bad).toBe(2);
      expect(r.stderr).toContain(`KOLMO_COMPUTE_BUDGET="${bad}" is malformed`);
    }
  });

  it('a valid budget is honoured: a check over it is refused before the engine runs', () => {
    const within = kolmo(['--no-log', CHECK], { KOLMO_COMPUTE_BUDGET: '6000' });
    expect(within.code, within.stderr).toBe(0);
    const over = kolmo(['--no-log', `${CHECK} style american`], { KOLMO_COMPUTE_BUDGET: '1' });
    expect(over.code).toBe(2);
    expect(over.stderr).toMatch(/units of computing and Kolmo allows 1 per request/);
  });

  it('the console reports a malformed setting and ends with exit code 2', () => {
    const r = kolmo([], { KOLMO_COMPUTE_BUDGET: 'x' }, 'quit\n');
    expect(r.code).toBe(2);
    expect(r.stdout).toContain('KOLMO_COMPUTE_BUDGET="x" is malformed');
  });
});
