#!/usr/bin/env node
// The compiled composition root; `npm ci` builds dist/ through the prepare script.
import { main } from '../dist/src/cli.js';

main(process.argv).then(
  (code) => {
    process.exitCode = code;
  },
  (error) => {
    process.stderr.write(`roundwire: ${error instanceof Error ? error.stack : String(error)}\n`);
    process.exitCode = 1;
  },
);
