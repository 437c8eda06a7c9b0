#!/usr/bin/env node
/**
 * The `netbreeder` command: coordinator, worker, demo, status, export.
 * Installed and built, `netbreeder <command> …` runs the compiled `dist/cli/main.js`; from a checkout's
 * sources, `npm run netbreeder -- <command> …` (tsx with the `source` export condition).
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
