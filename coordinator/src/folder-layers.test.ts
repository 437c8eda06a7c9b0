import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

/**
 * The coordinator's folders depend one way: a folder's source may import only from folders on a
 * lower layer (or its own), so the champion does not reach into the run manager, nor the store
 * into the champion. DEVELOPERS.md shows the same map. Tests may import anything.
 */
const LAYERS: string[][] = [
  ['datasets', 'search', 'queue', 'dashboard', 'onnx'],
  ['importers'],
  ['config'],
  ['store'],
  ['checkpoints', 'trust'],
  ['champion'],
  ['run', 'predict'],
  ['http'],
  ['cli'],
];
/** Files at the top of src/: the logger and the version are below everything, the coordinator between http and cli, index on top. */
const ROOT_FILES: Record<string, number> = { logger: -1, version: -1, coordinator: LAYERS.length - 1.5, index: LAYERS.length };

const SRC = dirname(fileURLToPath(import.meta.url));

function layerOf(pathInSrc: string): number {
  const [top] = pathInSrc.split('/');
  if (pathInSrc === top) {
    const layer = ROOT_FILES[top!.replace(/\.(js|ts)$/, '')];
    if (layer === undefined) throw new Error(`src/${top} has no layer; add it to ROOT_FILES in folder-layers.test.ts`);
    return layer;
  }
  const layer = LAYERS.findIndex((l) => l.includes(top!));
  if (layer < 0) throw new Error(`folder src/${top} has no layer; add it to LAYERS in folder-layers.test.ts and to the map in DEVELOPERS.md`);
  return layer;
}

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) return sourceFiles(path);
    return name.endsWith('.ts') && !name.endsWith('.test.ts') && name !== 'test-fixtures.ts' ? [path] : [];
  });
}

describe('coordinator folder layers', () => {
  it('every import of a source file points to its own folder or a lower layer', () => {
    const wrong: string[] = [];
    const files = sourceFiles(SRC);
    expect(files.length).toBeGreaterThan(50);
    for (const file of files) {
      const from = relative(SRC, file);
      for (const [, spec] of readFileSync(file, 'utf8').matchAll(/from '(\.{1,2}\/[^']+)'/g)) {
        const to = relative(SRC, resolve(dirname(file), spec!));
        const [fromTop, toTop] = [from.split('/')[0], to.split('/')[0]];
        if (fromTop === toTop) continue;
        if (layerOf(to) >= layerOf(from)) wrong.push(`${from} imports ${to}`);
      }
    }
    expect(wrong).toEqual([]);
  });

  it('catches an import that points up', () => {
    expect(layerOf('store/runs-table.ts')).toBeLessThan(layerOf('champion/champion-phase.ts'));
    expect(layerOf('champion/champion-phase.ts')).toBeLessThan(layerOf('run/run-manager.ts'));
    expect(() => layerOf('nowhere/x.ts')).toThrow(/has no layer/);
  });
});
