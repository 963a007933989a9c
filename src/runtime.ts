/**
 * Settings of the JavaScript engine that every Kolmo process runs with. Each entry point
 * (main.ts, cli.ts, chat/worker.ts) and the benchmark runner import this module first, so the
 * figures the benchmarks report are those of the processes that answer requests.
 *
 * Inlining budget. The pricing core is written as small functions (bsm.ts calls φ and Φ; Φ calls
 * Cody's rational functions), and its speed depends on V8 inlining the whole chain into the loop
 * that calls it: only then does the optimiser keep every number in registers and drop the records
 * the functions return. V8's default cumulative budget (920 bytes of bytecode per optimised
 * function, sized for web pages) is used up part way down that chain, and which part is left out
 * varies from run to run: bsmGreeks then measured between 2.4× and 3.5× its benchmark's floor loop
 * in the same build. With the budget below the chain fits (bsmGreeks about 2.1×, the outcome
 * engines 10–20% faster); optimised code grows somewhat, which a long-running server does not
 * mind. The flag only steers the optimiser: results are identical to the last bit either way
 * (DEVELOPERS.md, "Speed").
 */
import { setFlagsFromString } from 'node:v8';

/** Bytes of bytecode V8 may inline into one optimised function (its default is 920). */
export const INLINING_BUDGET = 3000;

setFlagsFromString(`--max-inlined-bytecode-size-cumulative=${INLINING_BUDGET}`);
