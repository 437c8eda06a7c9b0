import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { COMMANDS, main } from './commands.js';

const root = join(import.meta.dirname, '..', '..', '..');

/** What `netbreeder …` writes to stdout for these arguments. */
async function stdoutOf(argv: string[]): Promise<string> {
  let text = '';
  vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => {
    text += chunk.toString();
    return true;
  });
  try {
    expect(await main(argv)).toBe(0);
  } finally {
    vi.restoreAllMocks();
  }
  return text;
}

/**
 * Repository paths a help text names: relative paths with a folder and a file extension
 * (`examples/kiln-run.json`); placeholders in capitals (DIR/…), home folders, URLs and package names
 * are not files of the repository.
 */
const namedFiles = (text: string): string[] => [...text.matchAll(/(?<![\w/:~.$@-])((?:[a-z][\w.-]*\/)+[\w.-]+\.[a-z]+)\b/g)].map((m) => m[1]!);

afterEach(() => vi.restoreAllMocks());

describe('help texts', () => {
  it('name only files that exist in the repository', async () => {
    const texts = [await stdoutOf(['--help']), ...(await Promise.all(Object.keys(COMMANDS).map((c) => stdoutOf([c, '--help']))))];
    const named = texts.flatMap(namedFiles);
    expect(named).toContain('examples/kiln-run.json');
    for (const file of named) expect(existsSync(join(root, file)), `a help text names ${file}, which does not exist`).toBe(true);
  });

  it('the file finder sees a missing example', () => {
    expect(namedFiles('  netbreeder coordinator --run examples/demo-run.json')).toEqual(['examples/demo-run.json']);
    expect(namedFiles('DIR/secrets.json ~/.cache/x/y.json http://h:1/a.json @tensorflow/tfjs-node')).toEqual([]);
  });
});
