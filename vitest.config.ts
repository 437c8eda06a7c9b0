import { defaultServerConditions } from 'vite';
import { defineConfig } from 'vitest/config';

/** Our packages resolve to their TypeScript sources (their `source` export condition), never to a built `dist/`. */
const sourceFirst = { ssr: { resolve: { conditions: ['source', ...defaultServerConditions] } } };

/**
 * Two projects: `unit` (pure logic, fast, beside the code it checks) and
 * `integration` (real Redis, real worker processes, real training; in tests/). Two integration
 * files run at a time: one alone keeps about two thirds of one core busy (process start-ups,
 * lock expiries, HTTP round trips), so on a 2-core machine the pair roughly fills it. Each file
 * has its own queue prefix, ports (port 0), folders and private Redis servers, so they never meet.
 * Run one file with `npx vitest run path/to/file.test.ts`.
 */
export default defineConfig({
  test: {
    projects: [
      {
        ...sourceFirst,
        test: {
          name: 'unit',
          include: ['shared-types/src/**/*.test.ts', 'coordinator/src/**/*.test.ts', 'worker/src/**/*.test.ts'],
          testTimeout: 60_000,
        },
      },
      {
        ...sourceFirst,
        test: {
          name: 'integration',
          include: ['tests/src/**/*.test.ts'],
          testTimeout: 300_000,
          hookTimeout: 120_000,
          maxWorkers: 2,
          // After the unit files (projects with different maxWorkers need their own group).
          sequence: { groupOrder: 1 },
        },
      },
    ],
  },
});
