#!/usr/bin/env node
/**
 * The `netbreeder` command: coordinator, worker, demo, status, export.
 * Run from a checkout with `npm run netbreeder -- <command> …` (or `npx tsx coordinator/src/cli/main.ts`).
 */
import { describeError } from '@netbreeder/shared-types';
import { main } from './commands.js';

main(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (err: unknown) => {
    process.stderr.write(`netbreeder: ${describeError(err)}\n`);
    process.exit(1);
  },
);
