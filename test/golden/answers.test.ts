/**
 * Byte-identity guard for restructuring: every help example (and the canonical examples, the
 * console's examples, a few `again`/`log`/`mark` sequences and some rejected requests) is answered
 * through the command-line path with a fixed clock and a fresh log, and the text a terminal shows,
 * the `--json` line and the rest of the reply are compared with test/golden/answers.json.
 *
 * The golden file was produced by the code as it stood before the verbs were moved into
 * src/verbs (a regression guard, not a source of truth for the figures: those are checked against
 * published values elsewhere). Regenerate only for a deliberate change of an answer:
 *   KOLMO_GOLDEN_WRITE=1 npx vitest run test/golden
 */
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { answerLocal, replyText, CONSOLE_EXAMPLES, DEMO_MARKS } from '../../src/cli.js';
import { helpExamples, helpTopics } from '../../src/request/help.js';
import { canonicalExamples } from '../support/examples.js';
import type { Reply } from '../../src/reply.js';
import { openDatabase, type AsyncStore } from '../../src/store/store.js';

const GOLDEN = fileURLToPath(new URL('./answers.json', import.meta.url));
const NOW = new Date('2027-01-04T15:30:00Z');

/** The requests, in order (later ones read the log and marks the earlier ones wrote). */
function requests(): string[] {
  const out: string[] = ['help', ...helpTopics().map((t) => `help ${t}`)];
  for (const t of helpTopics()) out.push(...helpExamples(t));
  out.push(...canonicalExamples(), ...CONSOLE_EXAMPLES);
  out.push(
    'log',
    'log 3',
    'again 1',
    'again 2 spot 102 asof today',
    'again 3 drift 2%',
    'again 9999',
    'mark',
    'mark FERNWK',
    'log 100',
    // rejections: caret, message and example
    '+2 call 105 2027-03-19 iv 0.28 spot 100',
    'chek +1 call 100 3m',
    'compare +1 call 90 3m iv 30% spot 100 ; drift 1% ; drift 2% ; drift 3% ; drift 4% ; drift 5% ; drift 6%',
    'compare +1 call 90 3m iv 30% spot 100 ; drift 1% ; drift 2% ; drift 3% ; drift 4% ; drift 5% ; drift 6% ; drift 7% ; drift 8%',
    'iv call 105 2027-03-19 price 300 spot 100',
    '+1 put 95 2027-03-19 iv 30% spot 100 on NOSUCHSYM',
    '+50 put 95 30y iv 30% spot 100 jumps 100/yr -8% 200% horizon 1y',
    '',
  );
  return out;
}

function record(text: string, r: Reply) {
  if (r.kind === 'rejected') return { text, shown: replyText(r), json: JSON.stringify({ kind: 'error', message: r.message, at: r.at }) };
  const { chart, json, text: body, caution, ...rest } = r;
  return {
    text,
    shown: replyText(r),
    json: JSON.stringify(json),
    rest: JSON.stringify(rest),
    chart: chart === undefined ? null : createHash('sha256').update(JSON.stringify(chart)).digest('hex'),
  };
}

describe('answers to the help examples are unchanged', () => {
  const dir = mkdtempSync(join(tmpdir(), 'kolmo-golden-'));
  let log: AsyncStore;
  beforeAll(async () => {
    log = await openDatabase({ backend: 'sqlite', path: join(dir, 'log.db') });
    for (const m of DEMO_MARKS) {
      await log.putMark({ channel: 'cli', symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, user: 'demo', at: '2027-01-04T09:00:00.000Z' });
    }
    await log.putMark({ channel: 'cli', symbol: 'QUILLOP', spot: 41.05, iv: 0.36, rate: 0.0425, user: 'demo', at: '2027-01-02T09:00:00.000Z' });
  });
  afterAll(async () => {
    await log?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('byte for byte', async () => {
    const got = [];
    for (const text of requests()) got.push(record(text, await answerLocal(text, { channel: 'cli', user: 'golden', now: NOW, store: log })));
    if (process.env.KOLMO_GOLDEN_WRITE === '1') writeFileSync(GOLDEN, JSON.stringify(got, null, 1) + '\n');
    const want = JSON.parse(readFileSync(GOLDEN, 'utf8')) as unknown[];
    expect(got.length).toBe(want.length);
    got.forEach((g, i) => expect(g, g.text).toEqual(want[i]));
  });
});
