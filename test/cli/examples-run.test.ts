/**
 * Every example Kolmo shows is a request Kolmo answers:
 * - every example in `help` and its topics, run in order on the command line (the compiled
 *   binary) against a fresh database, is answered (exit 0);
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { HELP_TOPICS, helpExamples } from '../../src/request/help.js';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kolmo.js');

function helpExampleList(): string[] {
  const out: string[] = [];
  for (const t of HELP_TOPICS) for (const e of helpExamples(t)) if (!out.includes(e)) out.push(e);
  return out;
}

describe('help examples answer from a fresh database on the command line', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'kolmo-help-ex-'));
  const env = { ...process.env, KOLMO_DB: join(tmp, 'fresh.db'), KOLMO_OUT: join(tmp, 'out') };
  afterAll(() => rmSync(tmp, { recursive: true, force: true }));

  it('each example, in the order help lists them', () => {
    const failed: string[] = [];
    for (const e of helpExampleList()) {
      const r = spawnSync(process.execPath, [bin, e], { env, encoding: 'utf8', timeout: 60_000 });
      if (r.status !== 0) failed.push(`${e}\n${r.stderr}${r.stdout}`);
    }
    expect(failed, failed.join('\n\n')).toEqual([]);
  }, 300_000);
});
