#!/usr/bin/env node
/** Entry point of a worker process: `tsx worker/src/cli.ts --coordinator URL …`. */
import { describeError } from '@netbreeder/shared-types';
import { runWorkerCli } from './worker-cli.js';

runWorkerCli(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (err: unknown) => {
    process.stderr.write(`netbreeder worker: ${describeError(err)}\n`);
    process.exit(1);
  },
);
