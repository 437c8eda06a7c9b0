#!/usr/bin/env node
/** Entry point of a worker process: `tsx worker/src/cli.ts --coordinator URL …`. */
import { runWorkerCli } from './worker-cli.js';

runWorkerCli(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (err: Error) => {
    process.stderr.write(`netbreeder worker: ${err.message}\n`);
    process.exit(1);
  },
);
