/**
 * The direction of the imports between the folders of src/ (docs/design.md §5, DEVELOPERS.md "Layout"):
 * data flows text → request → verb → result → reply → shell, and each layer imports only what
 * lies below it. Reads the import and re-export statements (and dynamic imports) of every file.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, normalize, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const SRC = fileURLToPath(new URL('../../src', import.meta.url));

function files(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
    e.isDirectory() ? files(join(dir, e.name)) : e.name.endsWith('.ts') ? [join(dir, e.name)] : [],
  );
}

interface Edge {
  from: string;
  to: string;
  typeOnly: boolean;
  names: string;
}

/** Every relative import of a file, as paths under src/ ("verbs/ask.ts"). */
const IMPORT = /(?:^|\n)\s*(import|export)\s+(type\s+)?([^;]*?)\s*from\s*'([^']+)'|import\(\s*'([^']+)'\s*\)/g;

/** The packages a file imports (node:…, zod, …), with whether the import is of types only. */
function packages(file: string): { from: string; pkg: string; typeOnly: boolean }[] {
  const text = readFileSync(file, 'utf8');
  const re = new RegExp(IMPORT.source, 'g');
  const out = [];
  for (let m = re.exec(text); m; m = re.exec(text)) {
    const spec = m[4] ?? m[5];
    if (!spec.startsWith('.')) out.push({ from: relative(SRC, file), pkg: spec, typeOnly: Boolean(m[2]) });
  }
  return out;
}

function edges(file: string): Edge[] {
  const text = readFileSync(file, 'utf8');
  const from = relative(SRC, file);
  const out: Edge[] = [];
  const re = new RegExp(IMPORT.source, 'g');
  for (let m = re.exec(text); m; m = re.exec(text)) {
    const spec = m[4] ?? m[5];
    if (!spec.startsWith('.')) continue;
    const to = normalize(join(dirname(from), spec)).replace(/\.js$/, '.ts');
    out.push({ from, to, typeOnly: Boolean(m[2]), names: m[3] ?? '' });
  }
  return out;
}

const ALL = files(SRC).flatMap(edges);
const layer = (p: string) => (p.includes('/') ? p.split('/')[0] : p);
// demo/ holds the local console's invented data (a shell's own module)
const SHELLS = (p: string) => layer(p) === 'chat' || p === 'cli.ts' || p === 'main.ts' || layer(p) === 'demo';
const show = (es: Edge[]) => es.map((e) => `${e.from} → ${e.to}`);

describe('import direction in src/', () => {
  it('finds the imports it checks', () => {
    expect(ALL.length).toBeGreaterThan(100);
    expect(ALL.some((e) => e.from === 'cli.ts' && e.to === 'verbs/ask.ts')).toBe(true);
  });

  it('core imports only core', () => {
    expect(show(ALL.filter((e) => layer(e.from) === 'core' && layer(e.to) !== 'core'))).toEqual([]);
    // and no package either (no I/O, no platform): pure numerics
    const core = files(join(SRC, 'core')).flatMap(packages);
    expect(core.map((p) => `${p.from} → ${p.pkg}`)).toEqual([]);
  });

  it('request imports core and request only, and the verb registry where it lists verbs', () => {
    const bad = ALL.filter((e) => layer(e.from) === 'request' && !['core', 'request'].includes(layer(e.to)) && e.to !== 'verbs/registry.ts');
    expect(show(bad)).toEqual([]);
    // the registry is read where the request layer lists or picks verbs: the grammar (its dispatch,
    // the keywords, each verb's body terms), the examples and help pages, again's rewriting, the
    // resolver's check of a corrected example; types.ts takes the union of the verbs' requests
    const readers = ALL.filter((e) => layer(e.from) === 'request' && e.to === 'verbs/registry.ts');
    const listers = ['request/parse.ts', 'request/examples.ts', 'request/help.ts', 'request/again.ts', 'request/resolve/context.ts'];
    const allowed = (e: Edge) => listers.includes(e.from) || e.from.startsWith('request/grammar/') || (e.from === 'request/types.ts' && e.typeOnly);
    expect(show(readers.filter((e) => !allowed(e)))).toEqual([]);
  });

  it('report imports no chat, store, verbs or request code', () => {
    const bad = ALL.filter((e) => layer(e.from) === 'report' && ['chat', 'store', 'verbs', 'request', 'cli.ts', 'main.ts'].includes(layer(e.to)));
    expect(show(bad)).toEqual([]);
  });

  it('verbs reach the store only through its interface (types, and the errors it throws); only the seam re-exports it', () => {
    const bad = ALL.filter(
      (e) =>
        layer(e.from) === 'verbs' &&
        e.from !== 'verbs/ask.ts' &&
        layer(e.to) === 'store' &&
        !(e.to === 'store/store.ts' && (e.typeOnly || /^\{\s*StoreError(,\s*type\s+\w+)*\s*\}$/.test(e.names))),
    );
    expect(show(bad)).toEqual([]);
    expect(show(ALL.filter((e) => layer(e.from) === 'verbs' && (SHELLS(e.to) || layer(e.to) === 'chat')))).toEqual([]);
  });

  it('a verb file never imports the registry or the seam: what it needs of them arrives in its VerbEnv', () => {
    const seamSide = ['verbs/registry.ts', 'verbs/ask.ts'];
    const bad = ALL.filter((e) => layer(e.from) === 'verbs' && !seamSide.includes(e.from) && seamSide.includes(e.to));
    expect(show(bad)).toEqual([]);
  });

  it('shells import only the seam, what renders, the reply, config, logging and their own modules', () => {
    const allowed = (e: Edge) =>
      e.to === 'verbs/ask.ts' ||
      e.to === 'reply.ts' ||
      layer(e.to) === 'report' ||
      e.to === 'config.ts' ||
      e.to === 'log.ts' ||
      SHELLS(e.to);
    expect(show(ALL.filter((e) => SHELLS(e.from) && !allowed(e)))).toEqual([]);
  });

  it('nothing imports the shells except the shells', () => {
    expect(show(ALL.filter((e) => SHELLS(e.to) && !SHELLS(e.from)))).toEqual([]);
  });

  it('every entry point sets the engine up first: its first import is runtime.ts (the settings the benchmarks measure)', () => {
    for (const entry of ['main.ts', 'cli.ts', 'chat/worker.ts']) {
      const text = readFileSync(join(SRC, entry), 'utf8');
      const first = /(?:^|\n)import\s[^;]*;/.exec(text)?.[0].trim();
      expect(first, entry).toBe(`import '${entry.includes('/') ? '../' : './'}runtime.js';`);
    }
    const bench = readFileSync(join(SRC, '..', 'test', 'bench', 'run.ts'), 'utf8');
    expect(/(?:^|\n)import\s[^;]*;/.exec(bench)?.[0].trim()).toBe("import '../../src/runtime.js';");
  });
});
