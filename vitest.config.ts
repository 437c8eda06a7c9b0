import { defineConfig } from 'vitest/config';

/**
 * Two projects: `unit` (pure logic, fast, beside the code it checks) and
 * `integration` (real Redis, real worker processes, real training; in tests/).
 * Run one file with `npx vitest run path/to/file.test.ts`.
 */
export default defineConfig({
  test: {
    projects: [
      {
        test: {
          name: 'unit',
          include: ['shared-types/src/**/*.test.ts', 'coordinator/src/**/*.test.ts', 'worker/src/**/*.test.ts'],
          testTimeout: 60_000,
        },
      },
      {
        test: {
          name: 'integration',
          include: ['tests/src/**/*.test.ts'],
          testTimeout: 300_000,
          hookTimeout: 120_000,
          fileParallelism: false,
        },
      },
    ],
  },
});
