import { existsSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { nodeEntry, workerCliEntry } from './node-entry.js';

describe('nodeEntry', () => {
  it('runs compiled JavaScript with plain node beside a .js module', () => {
    expect(nodeEntry('file:///opt/nb/worker/dist/training/training-process.js', './training-child')).toEqual({
      execArgv: [],
      path: '/opt/nb/worker/dist/training/training-child.js',
    });
  });

  it('runs the TypeScript source through tsx with the source condition beside a .ts module', () => {
    const entry = nodeEntry('file:///work/nb/worker/src/training/training-process.ts', './training-child');
    expect(entry.path).toBe('/work/nb/worker/src/training/training-child.ts');
    expect(entry.execArgv).toHaveLength(3);
    expect(entry.execArgv[0]).toBe('--import');
    expect(entry.execArgv[1]).toMatch(/^file:\/\/.*\/tsx\//);
    expect(entry.execArgv[2]).toBe('--conditions=source');
  });

  it("names the worker's command-line entry in the form this module runs in (source under vitest)", () => {
    const entry = workerCliEntry();
    expect(entry.path).toMatch(/worker\/src\/cli\.ts$/);
    expect(existsSync(entry.path)).toBe(true);
  });
});
