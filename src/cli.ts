/**
 * The command line and the local console: the same engine as the chat app, when no workspace is
 * at hand.
 *
 *   kolmo "<request>"                 text answer (exit 0; 2 on a rejected request)
 *   kolmo --json "<request>"          one JSON object (docs/design.md §4)
 *   kolmo "<request>" --chart F.png   also writes the chart
 *   kolmo "history SYM" --file F.csv  closes from a CSV/TSV file (date, close)
 *   kolmo                             the local console (a prompt)
 *
 * The command line is channel `cli` in the store, the console channel `console` (override with
 * --channel); --no-log answers without touching the store.
 */
import './runtime.js';
import { mkdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { DEMO_HISTORY, DEMO_HISTORY_SYMBOL } from './demo/history.js';
import { createInterface } from 'node:readline';
import { ask, CLOSES_FILE_BYTES, COMPUTE_BUDGET_DEFAULT, databaseFromEnv, defaultDbPath, openDatabase, type AskContext, type AsyncStore } from './verbs/ask.js';
import { localSettings, type LocalSettings } from './config.js';
import type { Reply } from './reply.js';
import { renderAnswerChart } from './report/answer-chart.js';

export interface CliOptions {
  json: boolean;
  chart?: string;
  channel?: string;
  /** a CSV/TSV file of closes for `history` */
  file?: string;
  log: boolean;
  help: boolean;
  request: string;
}

const USAGE = `usage: kolmo [--json] [--chart FILE.png] [--channel NAME] [--no-log] [--file CLOSES.csv] "<request>"
       kolmo                      (no request: the local console)
       kolmo help                 (the request grammar)`;

export function parseArgs(argv: string[]): CliOptions | { error: string } {
  const o: CliOptions = { json: false, log: true, help: false, request: '' };
  const words: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--json') o.json = true;
    else if (a === '--no-log') o.log = false;
    else if (a === '--help' || a === '-h') o.help = true;
    else if (a === '--chart' || a === '--channel' || a === '--file') {
      const v = argv[++i];
      if (v === undefined || v.startsWith('--')) return { error: `${a} needs a value` };
      if (a === '--chart') o.chart = v;
      else if (a === '--file') o.file = v;
      else o.channel = v;
    } else if (a.startsWith('--chart=')) o.chart = a.slice(8);
    else if (a.startsWith('--file=')) o.file = a.slice(7);
    else if (a.startsWith('--channel=')) o.channel = a.slice(10);
    else if (a.startsWith('--') && !/^--?\d/.test(a)) return { error: `unknown option ${a}` };
    else words.push(a);
  }
  o.request = words.join(' ').trim();
  return o;
}

/** The log of the settings: KOLMO_DATABASE_URL (PostgreSQL), else the SQLite file; without it the answer still comes, with a warning. */
async function openStoreQuietly(enabled: boolean, dbPath: string | undefined): Promise<{ store: AsyncStore | null; warning?: string }> {
  if (!enabled) return { store: null };
  try {
    const choice = databaseFromEnv();
    return { store: await openDatabase(choice.backend === 'postgres' ? choice : { backend: 'sqlite', path: defaultDbPath(dbPath) }) };
  } catch (err) {
    return { store: null, warning: `the log is unavailable (${err instanceof Error ? err.message : String(err)}); answering without it` };
  }
}

/** The settings of the command line and the console (src/config.ts); null after reporting a bad one. */
function settingsOr(say: (line: string) => void): LocalSettings | null {
  const s = localSettings();
  if (s.ok) return s.settings;
  say('kolmo: fix these settings:');
  for (const e of s.errors) say(`  - ${e}`);
  return null;
}

/** One request from the command line or the console: the seam, with the compute budget of the settings (ctx.budget). */
export function answerLocal(text: string, ctx: AskContext): Promise<Reply> {
  return ask(text, { budget: COMPUTE_BUDGET_DEFAULT, ...ctx });
}

/** The text a terminal shows for a reply (answer, caution, warnings) — also used by the console. */
export function replyText(r: Reply): string {
  if (r.kind === 'rejected') return r.message;
  const out = [r.text, '', r.caution];
  if (r.logNumber !== undefined) out.push(`(logged as #${r.logNumber})`);
  for (const w of r.warnings) out.push(`! ${w}`);
  return out.join('\n');
}

async function writeChart(r: Reply, file: string): Promise<string | null> {
  if (r.kind !== 'answer' || !r.chart) return 'no chart for this answer';
  const png = await renderAnswerChart(r.chart);
  if (!png.ok) return `chart not drawn: ${png.note}`;
  mkdirSync(dirname(resolve(file)), { recursive: true });
  writeFileSync(file, png.png);
  return null;
}

export async function runCli(argv: string[], out = process.stdout, err = process.stderr): Promise<number> {
  const o = parseArgs(argv);
  if ('error' in o) {
    err.write(`kolmo: ${o.error}\n${USAGE}\n`);
    return 2;
  }
  if (o.help) {
    out.write(`${USAGE}\n`);
    return 0;
  }
  const settings = settingsOr((line) => err.write(line + '\n'));
  if (!settings) return 2;
  let files: AskContext['files'];
  if (o.file !== undefined) {
    try {
      const st = statSync(o.file);
      if (!st.isFile()) throw new Error('not a regular file');
      if (st.size > CLOSES_FILE_BYTES) throw new Error(`${st.size} bytes; at most ${CLOSES_FILE_BYTES} are read`);
      files = [{ name: basename(o.file), base64: readFileSync(o.file).toString('base64') }];
    } catch (e) {
      err.write(`kolmo: --file ${o.file}: ${e instanceof Error ? e.message : String(e)}\n`);
      return 2;
    }
  }
  const { store, warning } = await openStoreQuietly(o.log, settings.dbPath);
  try {
    const ctx: AskContext = { channel: o.channel ?? 'cli', user: settings.user, store, budget: settings.computeBudget, ...(files ? { files } : {}) };
    // the command line starts a channel on the console's demo marks (only symbols it has no mark
    // for), so that `on FERNWK` in help's examples answers from a fresh database
    if (store) {
      for (const m of DEMO_MARKS) {
        if (!(await store.getMark(ctx.channel, m.symbol).catch(() => undefined))) {
          await store.putMark({ channel: ctx.channel, symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, user: 'demo', at: new Date().toISOString() }).catch(() => undefined);
        }
      }
    }
    const r = await answerLocal(o.request, ctx);
    if (warning && r.kind === 'answer') r.warnings.push(warning);
    let chartNote: string | null = null;
    if (o.chart && r.kind === 'answer') chartNote = await writeChart(r, o.chart);
    if (o.json) {
      if (r.kind === 'rejected') out.write(JSON.stringify({ kind: 'error', message: r.message, at: r.at }) + '\n');
      else out.write(JSON.stringify(r.json) + '\n');
      if (chartNote) err.write(`kolmo: ${chartNote}\n`);
    } else {
      (r.kind === 'rejected' ? err : out).write(replyText(r) + '\n');
      if (o.chart && r.kind === 'answer') out.write(chartNote ? `! ${chartNote}\n` : `chart: ${o.chart}\n`);
    }
    return r.kind === 'rejected' ? 2 : 0;
  } finally {
    await store?.close();
  }
}

/** Invented demo marks the console starts with (invented companies, invented symbols). */
export const DEMO_MARKS = [
  { symbol: 'FERNWK', spot: 84.2, iv: 0.31, yield: 0.012, rate: 0.045, about: 'Fernwick Freight, a rail and road haulier' },
  { symbol: 'QUORVEL', spot: 142.5, iv: 0.38, yield: 0.0, rate: 0.045, about: 'Quorvel Systems, chip-design software' },
  { symbol: 'BRISAND', spot: 23.75, iv: 0.24, yield: 0.031, rate: 0.045, about: 'Brisand Utilities, a water company' },
];

export const CONSOLE_EXAMPLES = [
  'check +2 call 90 2027-03-19 @3.10 -2 call 100 2027-03-19 @1.05 on FERNWK drift 9% vol 28% asof 2027-01-04',
  'touch 160 by 2027-06-18 on QUORVEL drift 12% asof 2027-01-04',
  'iv put 22 2027-04-16 price 0.85 on BRISAND asof 2027-01-04',
  'history FERNWK save',
];

export async function runConsole(
  opts: { input?: NodeJS.ReadableStream; output?: NodeJS.WritableStream; channel?: string; outDir?: string } = {},
): Promise<number> {
  const output = opts.output ?? process.stdout;
  const input = opts.input ?? process.stdin;
  const say = (s: string) => output.write(s + '\n');
  const settings = settingsOr(say);
  if (!settings) return 2;
  const outDir = opts.outDir ?? settings.outDir;
  const channel = opts.channel ?? 'console';
  const { store, warning } = await openStoreQuietly(true, settings.dbPath);
  if (store) {
    for (const m of DEMO_MARKS) {
      if (!(await store.getMark(channel, m.symbol).catch(() => undefined))) {
        await store.putMark({ channel, symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, user: 'demo', at: new Date().toISOString() }).catch(() => undefined);
      }
    }
    // an invented year of closes (src/demo/history.ts), so `history FERNWK` answers at once
    try {
      if ((await store.getCloses(channel, DEMO_HISTORY_SYMBOL)).length === 0) {
        await store.putCloses(channel, DEMO_HISTORY_SYMBOL, DEMO_HISTORY.map(([date, close]) => ({ date, close })));
      }
    } catch {
      /* the demo history is a convenience: the console works without it */
    }
  }
  say('Kolmo local console — the same engine as the chat app. Type a request, `help`, or `quit`.');
  if (warning) say(`! ${warning}`);
  say(`Demo marks (invented): ${DEMO_MARKS.map((m) => `${m.symbol} ${m.spot} (${m.about})`).join('; ')}`);
  say('Try:');
  for (const e of CONSOLE_EXAMPLES) say(`  ${e}`);
  const rl = createInterface({ input, output, terminal: Boolean((input as { isTTY?: boolean }).isTTY), prompt: 'kolmo> ' });
  rl.prompt();
  let n = 0;
  let chain: Promise<void> = Promise.resolve();
  await new Promise<void>((done) => {
    rl.on('line', (line) => {
      chain = chain.then(async () => {
        const text = line.trim();
        if (text === 'quit' || text === 'exit') {
          rl.close();
          return;
        }
        if (text) {
          const r = await answerLocal(text, { channel, user: settings.user, store, budget: settings.computeBudget });
          say(replyText(r));
          if (r.kind === 'answer' && r.chart) {
            n++;
            const file = join(outDir, `${r.logNumber !== undefined ? `check-${r.logNumber}` : `answer-${Date.now()}-${n}`}.png`);
            const note = await writeChart(r, file);
            say(note ? `! ${note}` : `chart: ${file}`);
          }
        }
        rl.prompt();
      });
    });
    rl.on('close', () => {
      chain.then(() => done(), () => done());
    });
  });
  await store?.close();
  return 0;
}
