#!/usr/bin/env node
// The `kolmo` command: a request → its answer; no request → the local console.
import { runCli, runConsole } from '../dist/src/cli.js';

const args = process.argv.slice(2);
if (args.length === 0) {
  process.exitCode = await runConsole();
} else {
  process.exitCode = await runCli(args);
}
