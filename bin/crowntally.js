#!/usr/bin/env node
// Thin launcher: the command line lives in the compiled library (npm run build).
import { main } from '../dist/lib/node/cli.js';

main(process.argv.slice(2)).then(
  (code) => { process.exitCode = code; },
  (err) => {
    process.stderr.write(`error: internal failure: ${err && err.message ? err.message : String(err)}\n`);
    process.exitCode = 1;
  },
);
