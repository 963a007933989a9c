#!/usr/bin/env node
// `npm start`: the workspace app (Socket Mode or HTTP) or, without tokens, the local console.
import { main } from '../dist/src/main.js';

const code = await main();
if (code !== 'running') process.exitCode = code;
