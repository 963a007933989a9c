/**
 * `npm run bench`: runs every benchmark module in this folder (compiled to dist/test/bench) one
 * after another in this process, or only those whose file name contains an argument.
 * Each module exports `run(): Promise<void> | void` that prints its own figures.
 */
import '../../src/runtime.js';
import { readdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const filters = process.argv.slice(2);
const files = readdirSync(here)
  .filter((f) => f.endsWith('.bench.js'))
  .filter((f) => filters.length === 0 || filters.some((x) => f.includes(x)))
  .sort();

for (const f of files) {
  console.log(`\n== ${f.replace(/\.bench\.js$/, '')}`);
  const mod = (await import(pathToFileURL(join(here, f)).href)) as { run: () => unknown };
  await mod.run();
}
