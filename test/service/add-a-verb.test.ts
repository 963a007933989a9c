/**
 * DEVELOPERS.md "Adding a verb", walked for real: a copy of src/ gets one new verb file and its
 * line in the registry (its import and its name in `verbs()`), and nothing else. The copy must
 * type-check, and through its own seam the new verb is in the help overview and has its page, is
 * parsed (a bad value is refused with the caret on it; the unknown-verb message offers it),
 * answers with the caution, is logged, and is listed by `log` with its words. No mock: the copy is
 * the project's code plus the verb, run against a real SQLite log in a temporary folder.
 */
import { execFileSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Answer } from '../../src/reply.js';
import type * as Seam from '../../src/verbs/ask.js';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));

/** The new verb, as a newcomer would write it from the recipe: `spread BID ASK`. */
const SPREAD = `/** \`spread BID ASK\`: the quoted spread in % of the mid. */
import { z } from 'zod';
import type { Tok } from '../request/lex.js';
import { Cursor } from '../request/grammar/cursor.js';
import { readPrice } from '../request/grammar/values.js';
import { isNum, level, pct } from '../report/format.js';
import { answer, type Verb } from './verb.js';

const spreadSchema = z.strictObject({ verb: z.literal('spread'), bid: z.number().positive(), ask: z.number().positive() });
type SpreadRequest = z.infer<typeof spreadSchema>;

function parseSpread(src: string, toks: Tok[]): SpreadRequest {
  const c = new Cursor(src, toks, 1, toks.length, 'spread');
  const bid = readPrice(c, toks[0], 'the bid', '99.50');
  const ask = readPrice(c, toks[1], 'the ask', '100.50');
  const extra = c.peek();
  if (extra) throw c.reject(extra, 'spread takes a bid and an ask, e.g. spread 99.50 100.50');
  if (ask < bid) throw c.reject(toks[2], 'the ask must not be below the bid');
  return { verb: 'spread', bid, ask };
}

export const spread: Verb<SpreadRequest> = {
  name: 'spread',
  words: ['spread'],
  schema: spreadSchema,
  grammar: parseSpread,
  example: 'spread 99.50 100.50',
  help: { title: 'spread — the quoted spread in % of the mid', lines: ['spread BID ASK'], examples: ['spread 99.50 100.50'] },
  overview: { usage: 'spread BID ASK', says: 'the quoted spread in % of the mid' },
  run: (text, req) => {
    const mid = (req.bid + req.ask) / 2;
    const width = (req.ask - req.bid) / mid;
    const position = \`spread \${level(req.bid)}/\${level(req.ask)}\`;
    return {
      answer: answer({ verb: 'spread', headline: \`\${position}: \${pct(width, 2)}\`, text: \`\${position}: \${pct(width, 2)} of the mid \${level(mid)}\`, json: { kind: 'spread', mid, width } }),
      log: { verb: 'spread', text, request: req, summary: { position, width } },
    };
  },
  logWords: (s) => (isNum(s.width) ? \` → \${pct(s.width, 2)} of the mid\` : ''),
};
`;

let dir: string;
let seam: typeof Seam;
let store: Seam.AsyncStore;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'kolmo-add-a-verb-'));
  cpSync(join(ROOT, 'src'), join(dir, 'src'), { recursive: true });
  symlinkSync(join(ROOT, 'node_modules'), join(dir, 'node_modules'), 'dir');
  writeFileSync(join(dir, 'package.json'), JSON.stringify({ type: 'module' }));
  const tsconfig = JSON.parse(readFileSync(join(ROOT, 'tsconfig.json'), 'utf8'));
  writeFileSync(join(dir, 'tsconfig.json'), JSON.stringify({ ...tsconfig, include: ['src/**/*.ts'] }));
  // step 1: the verb file; step 2: its line in the registry (and its import)
  writeFileSync(join(dir, 'src/verbs/spread.ts'), SPREAD);
  const registry = join(dir, 'src/verbs/registry.ts');
  const before = readFileSync(registry, 'utf8');
  const after = before
    .replace("import { touch } from './touch.js';", "import { touch } from './touch.js';\nimport { spread } from './spread.js';")
    .replace('help] as const;', 'help, spread] as const;');
  expect(after.split('\n').length - before.split('\n').length, 'the registry took its import and its name').toBe(1);
  expect(after).toContain('help, spread] as const;');
  writeFileSync(registry, after);
  seam = (await import(pathToFileURL(join(dir, 'src/verbs/ask.ts')).href)) as typeof Seam;
  store = await seam.openDatabase({ backend: 'sqlite', path: join(dir, 'log.db') });
});

afterAll(async () => {
  await store?.close();
  if (dir) rmSync(dir, { recursive: true, force: true });
});

const T0 = new Date('2027-01-04T14:00:00Z');
const ctx = () => ({ channel: 'C-RECIPE', user: 'U-NEWCOMER', now: T0, store });

async function answered(text: string): Promise<Answer> {
  const r = await seam.ask(text, ctx());
  if (r.kind !== 'answer') throw new Error(`rejected: ${r.message}`);
  return r;
}

describe('adding a verb is one file and one registry line', () => {
  it('the copy with the new verb type-checks without touching any other file', () => {
    // the request union, the reply's verb and every attribute a verb declares follow from the registry
    try {
      execFileSync(join(ROOT, 'node_modules/.bin/tsc'), ['--noEmit', '-p', dir], { stdio: 'pipe' });
    } catch (err) {
      throw new Error(`the copy does not type-check:\n${String((err as { stdout?: Buffer }).stdout ?? err)}`);
    }
  });

  it('help lists it in the overview and has its page', async () => {
    const overview = (await answered('help')).text;
    const verbLines = overview.split('\n\n')[1].split('\n');
    expect(verbLines).toContain('  spread BID ASK   the quoted spread in % of the mid');
    expect(overview).toMatch(/topics: .*\bspread\b/);
    expect((await answered('help spread')).text).toContain('spread — the quoted spread in % of the mid');
  });

  it('is parsed: it answers, a bad value is refused with the caret on it, a near miss is offered it', async () => {
    const a = await answered('spread 99.50 100.50');
    expect(a.verb).toBe('spread');
    // (100.50 − 99.50) / 100 = 1.00% of the mid (arithmetic)
    expect(a.text).toBe('spread 99.50/100.50: 1.00% of the mid 100');
    expect(a.caution).not.toBe('');
    const bad = await seam.ask('spread 99.50 lots', ctx());
    expect(bad.kind).toBe('rejected');
    if (bad.kind === 'rejected') {
      expect(bad.at).toBe('spread 99.50 '.length);
      expect(bad.message).toContain('the ask needs a number');
    }
    const near = await seam.ask('spreed 99.50 100.50', ctx());
    expect(near.kind === 'rejected' && near.message).toContain('did you mean spread?');
  });

  it('is logged, and log lists it with its words', async () => {
    const a = await answered('spread 20 21');
    expect(a.logNumber).toBeGreaterThan(0);
    // (21 − 20) / 20.5 = 4.88% of the mid (arithmetic)
    expect((await answered('log 5')).text).toContain('spread 20/21 → 4.88% of the mid');
  });
});
